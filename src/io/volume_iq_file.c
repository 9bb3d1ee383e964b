/* volume_iq_file.c — the kept I/Q of one sweep of a pulse-level volume as netCDF-4
 * (CF-1.8); layout in volume_iq_file.h.
 *
 * Written to a temporary file beside the output (rp_tempfile_create) and renamed over
 * it when complete (rp_tempfile_commit): the file appears whole or not at all. Every
 * netCDF call goes through rp_nc_check (ncheck.h). The samples are written ray by ray
 * (chunks of one ray), one component at a time, from one reusable buffer of
 * gates x M floats. */
#include "rainprint/volume_iq_file.h"

#include <complex.h>
#include <math.h>
#include <netcdf.h>
#include <stdlib.h>
#include <unistd.h>

#include "io/ncheck.h"
#include "io/tempfile.h"
#include "rainprint/version.h"

static const char CAUTION[] =
    "Synthetic I/Q samples of a simulated radar sweep: not a measurement. Any use for "
    "flood warnings or operational rainfall must be validated against local rain gauges "
    "and defers to the local meteorological authority.";

static const char CONVENTIONS[] =
    "time dependence exp(-i omega t); radial velocity positive away from the radar, a "
    "receding target advancing the phase by +4 pi v T_s / lambda per pulse; Nyquist "
    "velocity lambda / (4 T_s); PhiDP = arg <H V*> (sign of delta_hv = arg <f_hh f_vv*>, "
    "positive for oblate rain); samples normalised to receiver noise power 1 per channel";

static const char STREAMS[] =
    "gate g of ray r (0-based within the sweep) of sweep k draws its pulses from the "
    "rp_rng stream (seed, key(pulses, k, r, g))";

static int put_double(int ncid, int varid, const char *name, double value) {
  return nc_put_att_double(ncid, varid, name, NC_DOUBLE, 1, &value);
}

static rp_status write_sweep(int nc, const char *path, const rp_volume *v, float *buf,
                             double *row, rp_error *err) {
  rp_status st = RP_OK;
  const size_t k = v->iq_sweep, m = v->iq_pulses, ng = v->n_gates;
  const size_t r0 = v->sweep_start[k], nr = v->sweep_end[k] - r0 + 1;
  int d_ray, d_range, d_pulse, var_az, var_el, var_rg, var_t, var_z, var_s[4];
  RP_NC_TRY(nc_def_dim(nc, "ray", nr, &d_ray), path, "dimension", "ray", "cannot define");
  RP_NC_TRY(nc_def_dim(nc, "range", ng, &d_range), path, "dimension", "range", "cannot define");
  RP_NC_TRY(nc_def_dim(nc, "pulse", m, &d_pulse), path, "dimension", "pulse", "cannot define");
  const struct { const char *name, *units, *lname; int dim; int *id; } coords[5] = {
      {"azimuth", "degrees", "azimuth of the ray (clockwise from north)", d_ray, &var_az},
      {"elevation", "degrees", "elevation of the ray", d_ray, &var_el},
      {"range", "m", "range to the centre of the gate", d_range, &var_rg},
      {"time", "s", "time of the pulse since the ray's first pulse", d_pulse, &var_t},
      {"noise_equivalent_reflectivity", "dBZ",
       "reflectivity of SNR 0 dB (Z = this + 10 log10 of the noise-subtracted power)",
       d_range, &var_z}};
  for (int i = 0; i < 5; i++) {
    RP_NC_TRY(nc_def_var(nc, coords[i].name, NC_DOUBLE, 1, &coords[i].dim, coords[i].id), path,
              "variable", coords[i].name, "cannot define");
    RP_NC_TRY(rp_nc_put_text(nc, *coords[i].id, "units", coords[i].units), path, "variable",
              coords[i].name, "cannot write its units");
    RP_NC_TRY(rp_nc_put_text(nc, *coords[i].id, "long_name", coords[i].lname), path,
              "variable", coords[i].name, "cannot write its long_name");
  }
  static const char *const names[4] = {"h_re", "h_im", "v_re", "v_im"};
  static const char *const longs[4] = {
      "real part (I) of the horizontally polarised sample",
      "imaginary part (Q) of the horizontally polarised sample",
      "real part (I) of the vertically polarised sample",
      "imaginary part (Q) of the vertically polarised sample"};
  const int dims[3] = {d_ray, d_range, d_pulse};
  const size_t chunk[3] = {1, ng, m};
  for (int i = 0; i < 4; i++) {
    RP_NC_TRY(nc_def_var(nc, names[i], NC_FLOAT, 3, dims, &var_s[i]), path, "variable",
              names[i], "cannot define");
    RP_NC_TRY(nc_def_var_chunking(nc, var_s[i], NC_CHUNKED, chunk), path, "variable", names[i],
              "cannot set its chunking");
    RP_NC_TRY(rp_nc_put_text(nc, var_s[i], "units", "1"), path, "variable", names[i],
              "cannot write its units");
    RP_NC_TRY(rp_nc_put_text(nc, var_s[i], "long_name", longs[i]), path, "variable", names[i],
              "cannot write its long_name");
    RP_NC_TRY(rp_nc_put_text(nc, var_s[i], "comment",
                             "normalised: receiver noise power 1 in each channel"),
              path, "variable", names[i], "cannot write its comment");
    RP_NC_TRY(rp_nc_put_text(nc, var_s[i], "coordinates", "azimuth elevation range time"),
              path, "variable", names[i], "cannot write its coordinates");
  }
  const rp_scenario_radar *r = &v->scenario.radar;
  const struct { const char *name, *value; } texts[] = {
      {"title", "rainprint synthetic I/Q samples of one sweep of a volume"},
      {"Conventions", "CF-1.8"},
      {"source", "rainprint " RP_VERSION_STRING},
      {"references", "Zrnic (1975), J. Appl. Meteor. 14, 619-620 (synthesis method)"},
      {"comment", CAUTION},
      {"caution", CAUTION},
      {"instrument_name", r->name},
      {"sign_conventions", CONVENTIONS},
      {"random_streams", STREAMS},
      {"spectrum_model", "gaussian (the gate's mean radial velocity and spectrum width)"}};
  for (size_t i = 0; i < sizeof texts / sizeof *texts; i++)
    RP_NC_TRY(rp_nc_put_text(nc, NC_GLOBAL, texts[i].name, texts[i].value), path, "attribute",
              texts[i].name, "cannot write");
  const double prt = 1.0 / r->prf_hz, lambda_mm = 1000.0 * v->wavelength_m;
  const struct { const char *name; double value; } nums[] = {
      {"fixed_angle_deg", v->fixed_angle_deg[k]},
      {"prt_s", prt},
      {"wavelength_mm", lambda_mm},
      {"frequency_ghz", 299.792458 / lambda_mm},
      {"nyquist_velocity_m_s", v->nyquist_ms},
      {"noise_power", 1.0}};
  for (size_t i = 0; i < sizeof nums / sizeof *nums; i++)
    RP_NC_TRY(put_double(nc, NC_GLOBAL, nums[i].name, nums[i].value), path, "attribute",
              nums[i].name, "cannot write");
  const unsigned long long ull[3] = {(unsigned long long)k, (unsigned long long)m, v->seed};
  static const char *const un[3] = {"sweep", "n_pulses", "seed"};
  for (int i = 0; i < 3; i++)
    RP_NC_TRY(nc_put_att_ulonglong(nc, NC_GLOBAL, un[i], NC_UINT64, 1, &ull[i]), path,
              "attribute", un[i], "cannot write");
  RP_NC_TRY(nc_enddef(nc), path, "file", NULL, "cannot end the definitions");

  RP_NC_TRY(nc_put_var_double(nc, var_az, v->azimuth_deg + r0), path, "variable", "azimuth",
            "cannot write the data");
  RP_NC_TRY(nc_put_var_double(nc, var_el, v->elevation_deg + r0), path, "variable",
            "elevation", "cannot write the data");
  RP_NC_TRY(nc_put_var_double(nc, var_rg, v->range_m), path, "variable", "range",
            "cannot write the data");
  for (size_t i = 0; i < m; i++) row[i] = (double)i * prt;
  RP_NC_TRY(nc_put_var_double(nc, var_t, row), path, "variable", "time", "cannot write the data");
  for (size_t g = 0; g < ng; g++)
    row[g] = rp_volume_noise_equivalent_dbz(&v->scenario, v->range_m[g]);
  RP_NC_TRY(nc_put_var_double(nc, var_z, row), path, "variable",
            "noise_equivalent_reflectivity", "cannot write the data");
  const size_t per_ray = ng * m;
  for (size_t ray = 0; ray < nr; ray++) {
    for (int i = 0; i < 4; i++) {
      const float complex *src = (i < 2 ? v->iq_h : v->iq_v) + ray * per_ray;
      for (size_t j = 0; j < per_ray; j++) buf[j] = (i % 2 == 0) ? crealf(src[j]) : cimagf(src[j]);
      const size_t start[3] = {ray, 0, 0}, count[3] = {1, ng, m};
      RP_NC_TRY(nc_put_vara_float(nc, var_s[i], start, count, buf), path, "variable", names[i],
                "cannot write the data");
    }
  }
fail:
  return st;
}

rp_status rp_volume_iq_save(const rp_volume *v, const char *path, rp_error *err) {
  if (v == NULL || path == NULL)
    return rp_error_set(err, RP_EINVAL, "I/Q file: NULL volume or path");
  if (v->iq_h == NULL || v->iq_v == NULL || v->iq_pulses < 2 || v->iq_sweep >= v->n_sweeps)
    return rp_error_set(err, RP_EINVAL, "I/Q file '%s': the volume kept no I/Q (pulse level "
                        "with a sweep to keep)", path);
  const size_t per_ray = v->n_gates * v->iq_pulses;
  const size_t nrow = v->n_gates > v->iq_pulses ? v->n_gates : v->iq_pulses;
  float *buf = malloc(per_ray * sizeof *buf);
  double *row = malloc(nrow * sizeof *row);
  rp_status st = RP_OK;
  if (buf == NULL || row == NULL) {
    st = rp_error_set(err, RP_ENOMEM, "I/Q file '%s': out of memory", path);
    goto out;
  }
  char tmp[4096];
  int fd = -1;
  st = rp_tempfile_create("I/Q file", path, tmp, sizeof tmp, &fd, err);
  if (st != RP_OK) goto out;
  close(fd);
  int ncid = -1;
  const int cs = nc_create(tmp, NC_NETCDF4 | NC_CLOBBER, &ncid);
  if (cs != NC_NOERR) {
    unlink(tmp);
    st = rp_error_set(err, RP_EIO, "I/Q file '%s': cannot create the output file: %s", path,
                      nc_strerror(cs));
    goto out;
  }
  st = write_sweep(ncid, path, v, buf, row, err);
  const int closed = nc_close(ncid);
  if (st == RP_OK) st = rp_nc_check(closed, path, "file", NULL, "cannot finish writing", err);
  if (st != RP_OK) {
    unlink(tmp);
    goto out;
  }
  st = rp_tempfile_commit("I/Q file", tmp, path, err); /* removes tmp on failure */
out:
  free(buf);
  free(row);
  return st;
}
