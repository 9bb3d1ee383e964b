/* table.c — build, save, load and check scattering tables (netCDF-4, CF conventions).
 *
 * Building runs rp_drop_eval over the diameter grid in parallel (OpenMP, one drop
 * workspace per thread). Saving writes a temporary file beside the target and renames
 * it, so a table appears whole or not at all. Loading checks everything a later
 * integral relies on and names the first problem. */
#include "rainprint/table.h"

#include "io/tempfile.h"

#include <math.h>
#include <netcdf.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <dirent.h>
#include <errno.h>
#include <sys/stat.h>
#include <unistd.h>

#ifdef _OPENMP
#include <omp.h>
#endif

typedef struct {
  const char *name, *units, *long_name;
  size_t offset; /* of the double* member in rp_table */
  int non_negative;
} var_desc;

/* Variable names in the file are the member names without their unit suffix. */
static const var_desc table_vars[] = {
    {"diameter", "mm", "equal-volume drop diameter", offsetof(rp_table, d_mm), 1},
    {"axis_ratio", "1", "drop axis ratio b/a (symmetry axis over equatorial axis)",
     offsetof(rp_table, axis_ratio), 1},
    {"fall_speed", "m s-1", "terminal fall speed at sea level", offsetof(rp_table, fall_speed_m_s), 1},
    {"back_hh2", "mm2", "canting-averaged |f_hh(pi)|^2, backscatter amplitude squared",
     offsetof(rp_table, back_hh2_mm2), 1},
    {"back_vv2", "mm2", "canting-averaged |f_vv(pi)|^2, backscatter amplitude squared",
     offsetof(rp_table, back_vv2_mm2), 1},
    {"back_hv2", "mm2", "canting-averaged |f_hv(pi)|^2, cross-polar backscatter amplitude squared",
     offsetof(rp_table, back_hv2_mm2), 1},
    {"back_hhvv_re", "mm2", "real part of canting-averaged f_hh(pi) conj(f_vv(pi))",
     offsetof(rp_table, back_hhvv_re_mm2), 0},
    {"back_hhvv_im", "mm2", "imaginary part of canting-averaged f_hh(pi) conj(f_vv(pi))",
     offsetof(rp_table, back_hhvv_im_mm2), 0},
    {"fwd_hh_re", "mm", "real part of canting-averaged forward amplitude f_hh(0)",
     offsetof(rp_table, fwd_hh_re_mm), 0},
    {"fwd_hh_im", "mm", "imaginary part of canting-averaged forward amplitude f_hh(0)",
     offsetof(rp_table, fwd_hh_im_mm), 1},
    {"fwd_vv_re", "mm", "real part of canting-averaged forward amplitude f_vv(0)",
     offsetof(rp_table, fwd_vv_re_mm), 0},
    {"fwd_vv_im", "mm", "imaginary part of canting-averaged forward amplitude f_vv(0)",
     offsetof(rp_table, fwd_vv_im_mm), 1},
};
#define N_VARS (sizeof table_vars / sizeof table_vars[0])

static double **member(rp_table *t, size_t i) {
  return (double **)(void *)((char *)t + table_vars[i].offset);
}
static const double *member_c(const rp_table *t, size_t i) {
  return *(double *const *)(const void *)((const char *)t + table_vars[i].offset);
}

rp_table *rp_table_alloc(size_t n) {
  rp_table *t = calloc(1, sizeof *t);
  if (t == NULL) return NULL;
  t->n = n;
  for (size_t i = 0; i < N_VARS; i++) {
    *member(t, i) = calloc(n > 0 ? n : 1, sizeof(double));
    if (*member(t, i) == NULL) {
      rp_table_free(t);
      return NULL;
    }
  }
  snprintf(t->version, sizeof t->version, "%s", RP_VERSION_STRING);
  return t;
}

void rp_table_free(rp_table *t) {
  if (t == NULL) return;
  for (size_t i = 0; i < N_VARS; i++) free(*member(t, i));
  free(t);
}

/* ---- build ------------------------------------------------------------------- */

static rp_status grid_size(double dmin, double dmax, double dstep, size_t *n, rp_error *err) {
  if (!(isfinite(dmin) && isfinite(dmax) && isfinite(dstep)))
    return rp_error_set(err, RP_EINVAL, "diameter grid has a non-finite value");
  if (!(dmin > 0.0 && dmax <= 10.0 && dmin < dmax))
    return rp_error_set(err, RP_EDOM,
                        "diameter grid %g..%g mm must satisfy 0 < dmin < dmax <= 10 mm", dmin,
                        dmax);
  if (!(dstep >= 0.001 && dstep <= dmax - dmin))
    return rp_error_set(err, RP_EDOM, "diameter step %g mm outside [0.001, %g] mm", dstep,
                        dmax - dmin);
  *n = (size_t)floor((dmax - dmin) / dstep + 1e-9) + 1;
  return RP_OK;
}

rp_status rp_table_build(const rp_drop_config *cfg, double dmin_mm, double dmax_mm,
                         double dstep_mm, rp_table **out, rp_error *err) {
  *out = NULL;
  RP_TRY(rp_drop_config_check(cfg, err));
  size_t n = 0;
  RP_TRY(grid_size(dmin_mm, dmax_mm, dstep_mm, &n, err));
  rp_table *t = rp_table_alloc(n);
  if (t == NULL) return rp_error_set(err, RP_ENOMEM, "out of memory for a %zu-diameter table", n);
  t->cfg = *cfg;
  t->fall_model = RP_FALL_DEFAULT;
  t->wavelength_mm = rp_wavelength_mm(cfg->freq_ghz);

  rp_status status = RP_OK;
  size_t first_bad = n;
  rp_error bad = {0};
#pragma omp parallel
  {
    rp_drop_ws *ws = rp_drop_ws_alloc(cfg);
    rp_error local = {0};
#pragma omp for schedule(dynamic, 2)
    for (size_t i = 0; i < n; i++) {
      rp_status s = RP_OK;
      rp_drop_result r;
      /* rounding (and the 1e-9 allowance of grid_size) can put the last point a few
       * ulp past dmax, e.g. 10.000000000000002 for 0.05..10 by 0.05, which is outside
       * (0, 10] mm: clamp it to dmax */
      const double d = fmin(dmin_mm + (double)i * dstep_mm, dmax_mm);
      if (ws == NULL) {
        s = rp_error_set(&local, RP_ENOMEM, "out of memory for a drop workspace");
      } else {
        s = rp_drop_eval(ws, d, &r, &local);
        if (s == RP_OK) s = rp_fallspeed_eval(t->fall_model, d, &t->fall_speed_m_s[i], &local);
      }
      if (s != RP_OK) {
#pragma omp critical(rp_table_build_error)
        if (i < first_bad) {
          first_bad = i;
          status = s;
          bad = local;
        }
        continue;
      }
      t->d_mm[i] = d;
      t->axis_ratio[i] = r.axis_ratio;
      t->back_hh2_mm2[i] = r.avg.back_hh2_mm2;
      t->back_vv2_mm2[i] = r.avg.back_vv2_mm2;
      t->back_hv2_mm2[i] = r.avg.back_hv2_mm2;
      t->back_hhvv_re_mm2[i] = creal(r.avg.back_hhvv_mm2);
      t->back_hhvv_im_mm2[i] = cimag(r.avg.back_hhvv_mm2);
      t->fwd_hh_re_mm[i] = creal(r.avg.fwd_hh_mm);
      t->fwd_hh_im_mm[i] = cimag(r.avg.fwd_hh_mm);
      t->fwd_vv_re_mm[i] = creal(r.avg.fwd_vv_mm);
      t->fwd_vv_im_mm[i] = cimag(r.avg.fwd_vv_mm);
      if (i == 0) {
        t->eps_re = creal(r.eps);
        t->eps_im = cimag(r.eps);
      }
    }
    rp_drop_ws_free(ws);
  }
  if (status != RP_OK) {
    if (err != NULL) *err = bad;
    rp_table_free(t);
    return status;
  }
  *out = t;
  return RP_OK;
}

/* ---- save -------------------------------------------------------------------- */

#define NC_TRY(call)                                                                  \
  do {                                                                                \
    int nc_s_ = (call);                                                               \
    if (nc_s_ != NC_NOERR) {                                                          \
      status = rp_error_set(err, RP_ENETCDF, "%s: %s", path, nc_strerror(nc_s_));     \
      goto done;                                                                      \
    }                                                                                 \
  } while (0)

static int put_text(int ncid, int varid, const char *name, const char *value) {
  return nc_put_att_text(ncid, varid, name, strlen(value), value);
}

static int put_double(int ncid, const char *name, double value) {
  return nc_put_att_double(ncid, NC_GLOBAL, name, NC_DOUBLE, 1, &value);
}

rp_status rp_table_save(const rp_table *t, const char *path, rp_error *err) {
  rp_status status = RP_OK;
  char tmp[4096];
  int fd = -1;
  /* a name of our own beside the output (O_EXCL), then netCDF writes over it */
  RP_TRY(rp_tempfile_create("scattering table", path, tmp, sizeof tmp, &fd, err));
  close(fd);
  int ncid = -1, dim, varids[N_VARS];
  int cs = nc_create(tmp, NC_NETCDF4 | NC_CLOBBER, &ncid);
  if (cs != NC_NOERR) {
    remove(tmp);
    return rp_error_set(err, RP_EIO, "%s: cannot create the output file (%s)", path,
                        nc_strerror(cs));
  }
  NC_TRY(nc_def_dim(ncid, "diameter", t->n, &dim));
  for (size_t i = 0; i < N_VARS; i++) {
    NC_TRY(nc_def_var(ncid, table_vars[i].name, NC_DOUBLE, 1, &dim, &varids[i]));
    NC_TRY(put_text(ncid, varids[i], "units", table_vars[i].units));
    NC_TRY(put_text(ncid, varids[i], "long_name", table_vars[i].long_name));
  }
  const rp_drop_config *c = &t->cfg;
  const char *band = rp_band_of_frequency(c->freq_ghz);
  NC_TRY(put_text(ncid, NC_GLOBAL, "title", "rainprint scattering table"));
  NC_TRY(put_text(ncid, NC_GLOBAL, "Conventions", "CF-1.8"));
  NC_TRY(put_text(ncid, NC_GLOBAL, "source", "rainprint " RP_VERSION_STRING));
  NC_TRY(put_text(ncid, NC_GLOBAL, "rainprint_version", t->version));
  NC_TRY(put_text(ncid, NC_GLOBAL, "band", band ? band : "none"));
  NC_TRY(put_double(ncid, "frequency_ghz", c->freq_ghz));
  NC_TRY(put_double(ncid, "wavelength_mm", t->wavelength_mm));
  NC_TRY(put_double(ncid, "temperature_c", c->temp_c));
  NC_TRY(put_double(ncid, "permittivity_re", t->eps_re));
  NC_TRY(put_double(ncid, "permittivity_im", t->eps_im));
  NC_TRY(put_text(ncid, NC_GLOBAL, "shape_model", rp_shape_name(c->shape)));
  NC_TRY(put_double(ncid, "axis_ratio_fixed", c->axis_ratio_fixed));
  NC_TRY(put_text(ncid, NC_GLOBAL, "canting_model", rp_canting_model_name(c->canting_model)));
  NC_TRY(put_double(ncid, "canting_sd_deg", c->canting_sd_deg));
  NC_TRY(put_text(ncid, NC_GLOBAL, "canting_average",
                  c->canting_approx ? "angular-moments" : "quadrature"));
  NC_TRY(put_double(ncid, "elevation_deg", c->elevation_deg));
  NC_TRY(put_text(ncid, NC_GLOBAL, "method", rp_method_name(c->method)));
  NC_TRY(put_text(ncid, NC_GLOBAL, "fall_speed_model", rp_fallspeed_name(t->fall_model)));
  NC_TRY(put_text(ncid, NC_GLOBAL, "amplitude_convention",
                  "time dependence exp(-i omega t); amplitudes f in mm with sigma_back = 4 pi "
                  "|f(pi)|^2 and C_ext = 2 lambda Im f(0); backscatter alignment (f_hh = f_vv "
                  "for a sphere)"));
  NC_TRY(nc_enddef(ncid));
  for (size_t i = 0; i < N_VARS; i++) NC_TRY(nc_put_var_double(ncid, varids[i], member_c(t, i)));
  NC_TRY(nc_close(ncid));
  ncid = -1;
  return rp_tempfile_commit("scattering table", tmp, path, err); /* removes tmp on failure */
done:
  if (ncid >= 0) nc_close(ncid);
  if (status != RP_OK) remove(tmp);
  return status;
}

/* ---- load -------------------------------------------------------------------- */

static rp_status get_text_att(int ncid, int varid, const char *name, char *buf, size_t n,
                              const char *path, rp_error *err) {
  nc_type type;
  size_t len;
  if (nc_inq_att(ncid, varid, name, &type, &len) != NC_NOERR || type != NC_CHAR || len >= n)
    return rp_error_set(err, RP_ETABLE, "%s: missing or malformed text attribute '%s'", path,
                        name);
  if (nc_get_att_text(ncid, varid, name, buf) != NC_NOERR)
    return rp_error_set(err, RP_ETABLE, "%s: cannot read attribute '%s'", path, name);
  buf[len] = '\0'; /* netCDF text attributes are not NUL-terminated */
  return RP_OK;
}

static rp_status get_double_att(int ncid, const char *name, double *value, const char *path,
                                rp_error *err) {
  nc_type type;
  size_t len;
  if (nc_inq_att(ncid, NC_GLOBAL, name, &type, &len) != NC_NOERR || type != NC_DOUBLE ||
      len != 1 || nc_get_att_double(ncid, NC_GLOBAL, name, value) != NC_NOERR ||
      !isfinite(*value))
    return rp_error_set(err, RP_ETABLE, "%s: missing or malformed attribute '%s'", path, name);
  return RP_OK;
}

static rp_status load_config(int ncid, rp_table *t, const char *path, rp_error *err) {
  rp_drop_config *c = &t->cfg;
  rp_drop_config_default(c);
  char text[128];
  RP_TRY(get_double_att(ncid, "frequency_ghz", &c->freq_ghz, path, err));
  RP_TRY(get_double_att(ncid, "wavelength_mm", &t->wavelength_mm, path, err));
  RP_TRY(get_double_att(ncid, "temperature_c", &c->temp_c, path, err));
  RP_TRY(get_double_att(ncid, "permittivity_re", &t->eps_re, path, err));
  RP_TRY(get_double_att(ncid, "permittivity_im", &t->eps_im, path, err));
  RP_TRY(get_double_att(ncid, "axis_ratio_fixed", &c->axis_ratio_fixed, path, err));
  RP_TRY(get_double_att(ncid, "canting_sd_deg", &c->canting_sd_deg, path, err));
  RP_TRY(get_double_att(ncid, "elevation_deg", &c->elevation_deg, path, err));
  RP_TRY(get_text_att(ncid, NC_GLOBAL, "shape_model", text, sizeof text, path, err));
  if (rp_shape_from_name(text, &c->shape, err) != RP_OK)
    return rp_error_set(err, RP_ETABLE, "%s: unknown shape_model '%s'", path, text);
  RP_TRY(get_text_att(ncid, NC_GLOBAL, "canting_model", text, sizeof text, path, err));
  if (rp_canting_model_from_name(text, &c->canting_model, err) != RP_OK)
    return rp_error_set(err, RP_ETABLE, "%s: unknown canting_model '%s'", path, text);
  RP_TRY(get_text_att(ncid, NC_GLOBAL, "canting_average", text, sizeof text, path, err));
  if (strcmp(text, "quadrature") == 0)
    c->canting_approx = 0;
  else if (strcmp(text, "angular-moments") == 0)
    c->canting_approx = 1;
  else
    return rp_error_set(err, RP_ETABLE, "%s: unknown canting_average '%s'", path, text);
  RP_TRY(get_text_att(ncid, NC_GLOBAL, "method", text, sizeof text, path, err));
  if (rp_method_from_name(text, &c->method, err) != RP_OK)
    return rp_error_set(err, RP_ETABLE, "%s: unknown method '%s'", path, text);
  RP_TRY(get_text_att(ncid, NC_GLOBAL, "fall_speed_model", text, sizeof text, path, err));
  if (rp_fallspeed_from_name(text, &t->fall_model, err) != RP_OK)
    return rp_error_set(err, RP_ETABLE, "%s: unknown fall_speed_model '%s'", path, text);
  RP_TRY(get_text_att(ncid, NC_GLOBAL, "rainprint_version", t->version, sizeof t->version, path,
                      err));
  rp_error inner = {0};
  if (rp_drop_config_check(c, &inner) != RP_OK)
    return rp_error_set(err, RP_ETABLE, "%s: %s", path, inner.msg);
  if (fabs(t->wavelength_mm - rp_wavelength_mm(c->freq_ghz)) > 1e-9 * t->wavelength_mm)
    return rp_error_set(err, RP_ETABLE, "%s: wavelength_mm %g does not match frequency %g GHz",
                        path, t->wavelength_mm, c->freq_ghz);
  return RP_OK;
}

static rp_status check_values(const rp_table *t, const char *path, rp_error *err) {
  for (size_t v = 0; v < N_VARS; v++) {
    const double *x = member_c(t, v);
    for (size_t i = 0; i < t->n; i++) {
      if (!isfinite(x[i]) || (table_vars[v].non_negative && x[i] < 0.0))
        return rp_error_set(err, RP_ETABLE, "%s: variable '%s'[%zu] = %g is not allowed", path,
                            table_vars[v].name, i, x[i]);
    }
  }
  for (size_t i = 0; i < t->n; i++) {
    if (!(t->d_mm[i] > 0.0 && t->d_mm[i] <= 10.0) || (i > 0 && t->d_mm[i] <= t->d_mm[i - 1]))
      return rp_error_set(err, RP_ETABLE,
                          "%s: diameters must increase strictly within (0, 10] mm (index %zu)",
                          path, i);
  }
  return RP_OK;
}

static rp_status load_vars(int ncid, rp_table *t, int dimid, const char *path, rp_error *err) {
  for (size_t v = 0; v < N_VARS; v++) {
    int varid, ndims, dimids[NC_MAX_VAR_DIMS];
    nc_type type;
    if (nc_inq_varid(ncid, table_vars[v].name, &varid) != NC_NOERR)
      return rp_error_set(err, RP_ETABLE, "%s: missing variable '%s'", path, table_vars[v].name);
    if (nc_inq_var(ncid, varid, NULL, &type, &ndims, dimids, NULL) != NC_NOERR ||
        type != NC_DOUBLE || ndims != 1 || dimids[0] != dimid)
      return rp_error_set(err, RP_ETABLE, "%s: variable '%s' must be double(diameter)", path,
                          table_vars[v].name);
    char units[64];
    RP_TRY(get_text_att(ncid, varid, "units", units, sizeof units, path, err));
    if (strcmp(units, table_vars[v].units) != 0)
      return rp_error_set(err, RP_ETABLE, "%s: variable '%s' has units '%s', expected '%s'", path,
                          table_vars[v].name, units, table_vars[v].units);
    if (nc_get_var_double(ncid, varid, *member(t, v)) != NC_NOERR)
      return rp_error_set(err, RP_ETABLE, "%s: cannot read variable '%s'", path,
                          table_vars[v].name);
  }
  return RP_OK;
}

rp_status rp_table_load(const char *path, rp_table **out, rp_error *err) {
  *out = NULL;
  if (access(path, R_OK) != 0)
    return rp_error_set(err, RP_EIO, "%s: cannot open scattering table (missing or unreadable)",
                        path);
  int ncid;
  int s = nc_open(path, NC_NOWRITE, &ncid);
  if (s != NC_NOERR)
    return rp_error_set(err, RP_ETABLE, "%s: not a readable netCDF file (%s)", path,
                        nc_strerror(s));
  rp_status status = RP_OK;
  rp_table *t = NULL;
  int dimid;
  size_t n = 0;
  if (nc_inq_dimid(ncid, "diameter", &dimid) != NC_NOERR ||
      nc_inq_dimlen(ncid, dimid, &n) != NC_NOERR || n < 2 || n > 100000) {
    status = rp_error_set(err, RP_ETABLE, "%s: missing or bad 'diameter' dimension", path);
    goto done;
  }
  t = rp_table_alloc(n);
  if (t == NULL) {
    status = rp_error_set(err, RP_ENOMEM, "out of memory loading %s", path);
    goto done;
  }
  status = load_config(ncid, t, path, err);
  if (status == RP_OK) status = load_vars(ncid, t, dimid, path, err);
  if (status == RP_OK) status = check_values(t, path, err);
done:
  nc_close(ncid);
  if (status != RP_OK) {
    rp_table_free(t);
    return status;
  }
  *out = t;
  return RP_OK;
}

static int differs(double a, double b) { return fabs(a - b) > 1e-6 * fmax(1.0, fabs(b)); }

rp_status rp_table_check_match(const rp_table *t, const rp_drop_config *cfg, rp_error *err) {
  const rp_drop_config *c = &t->cfg;
  if (differs(c->freq_ghz, cfg->freq_ghz))
    return rp_error_set(err, RP_ETABLE, "table is for %g GHz, not %g GHz", c->freq_ghz,
                        cfg->freq_ghz);
  if (differs(c->temp_c, cfg->temp_c))
    return rp_error_set(err, RP_ETABLE, "table is for %g C, not %g C", c->temp_c, cfg->temp_c);
  if (differs(c->axis_ratio_fixed, cfg->axis_ratio_fixed))
    return rp_error_set(err, RP_ETABLE, "table has fixed axis ratio %g, not %g",
                        c->axis_ratio_fixed, cfg->axis_ratio_fixed);
  if (cfg->axis_ratio_fixed == 0.0 && c->shape != cfg->shape)
    return rp_error_set(err, RP_ETABLE, "table is for shape model %s, not %s",
                        rp_shape_name(c->shape), rp_shape_name(cfg->shape));
  if (c->canting_model != cfg->canting_model || c->canting_approx != cfg->canting_approx)
    return rp_error_set(err, RP_ETABLE, "table is for another canting model");
  if (differs(c->canting_sd_deg, cfg->canting_sd_deg))
    return rp_error_set(err, RP_ETABLE, "table is for canting SD %g deg, not %g deg",
                        c->canting_sd_deg, cfg->canting_sd_deg);
  if (differs(c->elevation_deg, cfg->elevation_deg))
    return rp_error_set(err, RP_ETABLE, "table is for elevation %g deg, not %g deg",
                        c->elevation_deg, cfg->elevation_deg);
  if (c->method != cfg->method)
    return rp_error_set(err, RP_ETABLE, "table is for method %s, not %s",
                        rp_method_name(c->method), rp_method_name(cfg->method));
  return RP_OK;
}

/* ---- obtain: shipped, cached or computed ---------------------------------------- */

const char *rp_table_origin_name(rp_table_origin o) {
  switch (o) {
    case RP_TABLE_SHIPPED: return "shipped";
    case RP_TABLE_CACHED: return "cache";
    case RP_TABLE_GIVEN: return "given";
    default: return "computed";
  }
}

void rp_table_cache_name(const rp_drop_config *cfg, char *buf, size_t n) {
  char shape[64];
  if (cfg->axis_ratio_fixed > 0.0)
    snprintf(shape, sizeof shape, "ar%.4f", cfg->axis_ratio_fixed);
  else
    snprintf(shape, sizeof shape, "%s", rp_shape_name(cfg->shape));
  snprintf(buf, n, "table_%.4fGHz_%.2fC_%s_%s%s%.2f_el%.2f_%s.nc", cfg->freq_ghz, cfg->temp_c,
           shape, rp_canting_model_name(cfg->canting_model), cfg->canting_approx ? "approx" : "",
           cfg->canting_sd_deg, cfg->elevation_deg, rp_method_name(cfg->method));
}

static int is_default_grid(const rp_table *t) {
  return t->n >= 2 && fabs(t->d_mm[0] - RP_TABLE_DMIN_DEFAULT_MM) < 1e-9 &&
         fabs(t->d_mm[t->n - 1] - RP_TABLE_DMAX_DEFAULT_MM) < 1e-9 &&
         fabs(t->d_mm[1] - t->d_mm[0] - RP_TABLE_DSTEP_DEFAULT_MM) < 1e-9;
}

/* A loadable, matching table on the default grid at path, or NULL. */
static rp_table *try_table(const char *path, const rp_drop_config *cfg) {
  rp_table *t = NULL;
  rp_error ignored = {0};
  if (rp_table_load(path, &t, &ignored) != RP_OK) return NULL;
  if (rp_table_check_match(t, cfg, &ignored) != RP_OK || !is_default_grid(t)) {
    rp_table_free(t);
    return NULL;
  }
  return t;
}

static rp_table *find_in_dir(const char *dir, const rp_drop_config *cfg) {
  DIR *d = opendir(dir);
  if (d == NULL) return NULL;
  rp_table *found = NULL;
  struct dirent *e;
  char path[4096];
  while (found == NULL && (e = readdir(d)) != NULL) {
    const size_t len = strlen(e->d_name);
    if (len < 4 || strcmp(e->d_name + len - 3, ".nc") != 0) continue;
    if (snprintf(path, sizeof path, "%s/%s", dir, e->d_name) >= (int)sizeof path) continue;
    found = try_table(path, cfg);
  }
  closedir(d);
  return found;
}

static void make_dirs(const char *dir) {
  char buf[4096];
  if (snprintf(buf, sizeof buf, "%s", dir) >= (int)sizeof buf) return;
  for (char *p = buf + 1; *p; p++) {
    if (*p == '/') {
      *p = '\0';
      mkdir(buf, 0777);
      *p = '/';
    }
  }
  mkdir(buf, 0777);
}

rp_status rp_table_obtain(const rp_drop_config *cfg, const char *shipped_dir,
                          const char *cache_dir, rp_table **out, rp_table_origin *origin,
                          rp_error *err) {
  *out = NULL;
  RP_TRY(rp_drop_config_check(cfg, err));
  if (shipped_dir != NULL && (*out = find_in_dir(shipped_dir, cfg)) != NULL) {
    if (origin) *origin = RP_TABLE_SHIPPED;
    return RP_OK;
  }
  char name[256], path[4096];
  rp_table_cache_name(cfg, name, sizeof name);
  const int have_cache =
      cache_dir != NULL && snprintf(path, sizeof path, "%s/%s", cache_dir, name) < (int)sizeof path;
  if (have_cache && (*out = try_table(path, cfg)) != NULL) {
    if (origin) *origin = RP_TABLE_CACHED;
    return RP_OK;
  }
  RP_TRY(rp_table_build(cfg, RP_TABLE_DMIN_DEFAULT_MM, RP_TABLE_DMAX_DEFAULT_MM,
                        RP_TABLE_DSTEP_DEFAULT_MM, out, err));
  if (origin) *origin = RP_TABLE_COMPUTED;
  if (have_cache) {
    make_dirs(cache_dir);
    rp_error ignored = {0};
    (void)rp_table_save(*out, path, &ignored); /* a read-only cache only costs time */
  }
  return RP_OK;
}
