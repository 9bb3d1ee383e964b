/* iq_file.c — I/Q samples as netCDF-4 (CF-1.8); layout in iq_file.h.
 *
 * Written to a temporary file beside the output (rp_tempfile_create) and renamed over
 * it when complete (rp_tempfile_commit): the file appears whole or not at all. Every
 * netCDF call goes through rp_nc_check (ncheck.h). Samples are stored as doubles,
 * row by row from one reusable buffer of M values. */
#include "rainprint/iq_file.h"

#include <math.h>
#include <netcdf.h>
#include <stdio.h>
#include <stdlib.h>
#include <unistd.h>

#include "io/ncheck.h"
#include "io/tempfile.h"
#include "rainprint/version.h"

static const char CAUTION[] =
    "Synthetic I/Q samples from a simulated gate: not a measurement. Any use for flood "
    "warnings or operational rainfall must be validated against local rain gauges and "
    "defers to the local meteorological authority.";

static const char CONVENTIONS[] =
    "time dependence exp(-i omega t); radial velocity positive away from the radar, a "
    "receding target advancing the phase by +4 pi v T_s / lambda per pulse; Nyquist "
    "velocity lambda / (4 T_s); PhiDP = arg <H V*> (sign of delta_hv = arg <f_hh f_vv*>, "
    "positive for oblate rain); samples normalised to receiver noise power 1 per channel, "
    "H signal power 10^(snr_db/10), V signal power 10^((snr_db - zdr_db)/10)";

static const char DEFAULT_STREAMS[] =
    "realisation j draws from the rp_rng stream (seed, key(pulses, 0, j, 0)) as in "
    "rp_pulse_ensemble";

static int put_double(int ncid, const char *name, double value) {
  return nc_put_att_double(ncid, NC_GLOBAL, name, NC_DOUBLE, 1, &value);
}

static rp_status write_iq(int nc, const char *path, const rp_iq_params *p,
                          const rp_iq_spectrum *spec, uint64_t seed, size_t nr,
                          const double complex *h, const double complex *v,
                          const char *streams, double *row, rp_error *err) {
  rp_status st = RP_OK;
  const size_t m = p->n_pulses;
  int dims[2], dim_c = -1, var_t, var_r, var_s[4], var_c[3];
  RP_NC_TRY(nc_def_dim(nc, "realisation", nr, &dims[0]), path, "dimension", "realisation",
            "cannot define");
  RP_NC_TRY(nc_def_dim(nc, "pulse", m, &dims[1]), path, "dimension", "pulse", "cannot define");
  RP_NC_TRY(nc_def_var(nc, "time", NC_DOUBLE, 1, &dims[1], &var_t), path, "variable", "time",
            "cannot define");
  RP_NC_TRY(rp_nc_put_text(nc, var_t, "units", "s"), path, "variable", "time",
            "cannot write its units");
  RP_NC_TRY(rp_nc_put_text(nc, var_t, "long_name", "time of the pulse since the first pulse"),
            path, "variable", "time", "cannot write its long_name");
  RP_NC_TRY(nc_def_var(nc, "realisation", NC_INT, 1, &dims[0], &var_r), path, "variable",
            "realisation", "cannot define");
  RP_NC_TRY(rp_nc_put_text(nc, var_r, "long_name", "index of the realisation"), path,
            "variable", "realisation", "cannot write its long_name");
  static const char *const names[4] = {"h_re", "h_im", "v_re", "v_im"};
  static const char *const longs[4] = {
      "real part (I) of the horizontally polarised sample",
      "imaginary part (Q) of the horizontally polarised sample",
      "real part (I) of the vertically polarised sample",
      "imaginary part (Q) of the vertically polarised sample"};
  for (int i = 0; i < 4; i++) {
    RP_NC_TRY(nc_def_var(nc, names[i], NC_DOUBLE, 2, dims, &var_s[i]), path, "variable",
              names[i], "cannot define");
    RP_NC_TRY(rp_nc_put_text(nc, var_s[i], "units", "1"), path, "variable", names[i],
              "cannot write its units");
    RP_NC_TRY(rp_nc_put_text(nc, var_s[i], "long_name", longs[i]), path, "variable", names[i],
              "cannot write its long_name");
    RP_NC_TRY(rp_nc_put_text(nc, var_s[i], "comment",
                             "normalised: receiver noise power 1 in each channel"),
              path, "variable", names[i], "cannot write its comment");
    RP_NC_TRY(rp_nc_put_text(nc, var_s[i], "coordinates", "time realisation"), path,
              "variable", names[i], "cannot write its coordinates");
  }
  if (spec) {
    static const char *const cn[3] = {"spectrum_weight", "spectrum_mean_velocity",
                                      "spectrum_width"};
    static const char *const cu[3] = {"1", "m s-1", "m s-1"};
    static const char *const cl[3] = {
        "relative power of the spectrum component",
        "mean radial velocity of the component (positive away from the radar)",
        "standard deviation of the component"};
    RP_NC_TRY(nc_def_dim(nc, "component", spec->n, &dim_c), path, "dimension", "component",
              "cannot define");
    for (int i = 0; i < 3; i++) {
      RP_NC_TRY(nc_def_var(nc, cn[i], NC_DOUBLE, 1, &dim_c, &var_c[i]), path, "variable",
                cn[i], "cannot define");
      RP_NC_TRY(rp_nc_put_text(nc, var_c[i], "units", cu[i]), path, "variable", cn[i],
                "cannot write its units");
      RP_NC_TRY(rp_nc_put_text(nc, var_c[i], "long_name", cl[i]), path, "variable", cn[i],
                "cannot write its long_name");
    }
  }
  const struct { const char *name, *value; } texts[] = {
      {"title", "rainprint synthetic I/Q samples of one gate"},
      {"Conventions", "CF-1.8"},
      {"source", "rainprint " RP_VERSION_STRING},
      {"references", "Zrnic (1975), J. Appl. Meteor. 14, 619-620 (synthesis method)"},
      {"comment", CAUTION},
      {"sign_conventions", CONVENTIONS},
      {"random_streams", streams ? streams : DEFAULT_STREAMS},
      {"spectrum_model", spec ? "mixture of Gaussians (variables spectrum_*)" : "gaussian"}};
  for (size_t i = 0; i < sizeof texts / sizeof *texts; i++)
    RP_NC_TRY(rp_nc_put_text(nc, NC_GLOBAL, texts[i].name, texts[i].value), path, "attribute",
              texts[i].name, "cannot write");
  const double va = rp_iq_nyquist_m_s(p->prt_s, p->wavelength_mm);
  const struct { const char *name; double value; } nums[] = {
      {"zh_dbz", p->zh_dbz},
      {"zdr_db", p->zdr_db},
      {"rhohv", p->rhohv},
      {"phidp_deg", p->phidp_deg},
      {"velocity_m_s", spec ? (double)NAN : p->velocity_m_s},
      {"width_m_s", spec ? (double)NAN : p->width_m_s},
      {"snr_db", p->snr_db},
      {"noise_power", 1.0},
      {"prt_s", p->prt_s},
      {"wavelength_mm", p->wavelength_mm},
      {"frequency_ghz", 299.792458 / p->wavelength_mm},
      {"nyquist_velocity_m_s", va}};
  for (size_t i = 0; i < sizeof nums / sizeof *nums; i++) {
    if (isnan(nums[i].value)) continue; /* a mixture has no single velocity and width */
    RP_NC_TRY(put_double(nc, nums[i].name, nums[i].value), path, "attribute", nums[i].name,
              "cannot write");
  }
  const unsigned long long npulses = (unsigned long long)m, useed = (unsigned long long)seed;
  RP_NC_TRY(nc_put_att_ulonglong(nc, NC_GLOBAL, "n_pulses", NC_UINT64, 1, &npulses), path,
            "attribute", "n_pulses", "cannot write");
  RP_NC_TRY(nc_put_att_ulonglong(nc, NC_GLOBAL, "seed", NC_UINT64, 1, &useed), path,
            "attribute", "seed", "cannot write");
  RP_NC_TRY(nc_enddef(nc), path, "file", NULL, "cannot end the definitions");

  for (size_t k = 0; k < m; k++) row[k] = (double)k * p->prt_s;
  RP_NC_TRY(nc_put_var_double(nc, var_t, row), path, "variable", "time", "cannot write the data");
  for (size_t j = 0; j < nr; j++) {
    const int idx = (int)j;
    const size_t start1 = j;
    RP_NC_TRY(nc_put_var1_int(nc, var_r, &start1, &idx), path, "variable", "realisation",
              "cannot write the data");
  }
  for (int i = 0; i < 4; i++) {
    const double complex *src = i < 2 ? h : v;
    for (size_t j = 0; j < nr; j++) {
      for (size_t k = 0; k < m; k++) row[k] = (i % 2 == 0) ? creal(src[j * m + k]) : cimag(src[j * m + k]);
      const size_t start[2] = {j, 0}, count[2] = {1, m};
      RP_NC_TRY(nc_put_vara_double(nc, var_s[i], start, count, row), path, "variable", names[i],
                "cannot write the data");
    }
  }
  if (spec) {
    const double *arrays[3] = {spec->weight, spec->mean_m_s, spec->width_m_s};
    static const char *const cn[3] = {"spectrum_weight", "spectrum_mean_velocity",
                                      "spectrum_width"};
    for (int i = 0; i < 3; i++)
      RP_NC_TRY(nc_put_var_double(nc, var_c[i], arrays[i]), path, "variable", cn[i],
                "cannot write the data");
  }
fail:
  return st;
}

rp_status rp_iq_save(const char *path, const rp_iq_params *p, const rp_iq_spectrum *spec,
                     uint64_t seed, size_t n_realisations, const double complex *h,
                     const double complex *v, const char *streams, rp_error *err) {
  if (!path || !p || !h || !v)
    return rp_error_set(err, RP_EINVAL, "I/Q file: NULL path, parameters or samples");
  if (n_realisations == 0)
    return rp_error_set(err, RP_EINVAL, "I/Q file '%s': no realisations to write", path);
  RP_TRY(rp_iq_params_check(p, spec, err));
  double *row = malloc(p->n_pulses * sizeof *row);
  if (!row) return rp_error_set(err, RP_ENOMEM, "I/Q file '%s': out of memory", path);
  char tmp[4096];
  int fd = -1;
  rp_status st = rp_tempfile_create("I/Q file", path, tmp, sizeof tmp, &fd, err);
  if (st != RP_OK) {
    free(row);
    return st;
  }
  close(fd);
  int ncid = -1;
  const int cs = nc_create(tmp, NC_NETCDF4 | NC_CLOBBER, &ncid);
  if (cs != NC_NOERR) {
    unlink(tmp);
    free(row);
    return rp_error_set(err, RP_EIO, "I/Q file '%s': cannot create the output file: %s", path,
                        nc_strerror(cs));
  }
  st = write_iq(ncid, path, p, spec, seed, n_realisations, h, v, streams, row, err);
  free(row);
  const int closed = nc_close(ncid);
  if (st == RP_OK) st = rp_nc_check(closed, path, "file", NULL, "cannot finish writing", err);
  if (st != RP_OK) {
    unlink(tmp);
    return st;
  }
  return rp_tempfile_commit("I/Q file", tmp, path, err); /* removes tmp on failure */
}
