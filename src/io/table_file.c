/* table_file.c — scattering tables as netCDF-4 files (CF conventions), and the file
 * store that finds shipped and cached tables.
 *
 * Saving writes a temporary file beside the target and renames it, so a table appears
 * whole or not at all. Loading checks everything a later integral relies on and names
 * the first problem. Every netCDF call goes through rp_nc_check (ncheck.h). */
#include "rainprint/table_file.h"

#include <dirent.h>
#include <errno.h>
#include <math.h>
#include <netcdf.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "io/ncheck.h"
#include "io/tempfile.h"
#include "rainprint/version.h"

/* ---- save ----------------------------------------------------------------------- */

static int put_double(int ncid, const char *name, double value) {
  return nc_put_att_double(ncid, NC_GLOBAL, name, NC_DOUBLE, 1, &value);
}

static const char AMPLITUDE_CONVENTION[] =
    "time dependence exp(-i omega t); amplitudes f in mm with sigma_back = 4 pi |f(pi)|^2 "
    "and C_ext = 2 lambda Im f(0); backscatter alignment (f_hh = f_vv for a sphere)";

static rp_status write_table(int ncid, const rp_table *t, const char *path, rp_error *err) {
  rp_status st = RP_OK;
  const size_t nv = rp_table_n_columns();
  int dim, varids[32];
  RP_NC_TRY(nc_def_dim(ncid, "diameter", t->n, &dim), path, "dimension", "diameter", "cannot define");
  for (size_t i = 0; i < nv && i < 32; i++) {
    const rp_table_column *c = rp_table_column_get(i);
    RP_NC_TRY(nc_def_var(ncid, c->name, NC_DOUBLE, 1, &dim, &varids[i]), path, "variable",
              c->name, "cannot define");
    RP_NC_TRY(rp_nc_put_text(ncid, varids[i], "units", c->units), path, "variable", c->name,
              "cannot write its units");
    RP_NC_TRY(rp_nc_put_text(ncid, varids[i], "long_name", c->long_name), path, "variable",
              c->name, "cannot write its long_name");
  }
  const rp_drop_config *c = &t->cfg;
  const char *band = rp_band_of_frequency(c->freq_ghz);
  const struct { const char *name, *value; } texts[] = {
      {"title", "rainprint scattering table"},
      {"Conventions", "CF-1.8"},
      {"source", "rainprint " RP_VERSION_STRING},
      {"rainprint_version", t->version},
      {"band", band ? band : "none"},
      {"shape_model", rp_shape_name(c->shape)},
      {"canting_model", rp_canting_model_name(c->canting_model)},
      {"canting_average", c->canting_approx ? "angular-moments" : "quadrature"},
      {"method", rp_method_name(c->method)},
      {"fall_speed_model", rp_fallspeed_name(t->fall_model)},
      {"amplitude_convention", AMPLITUDE_CONVENTION}};
  for (size_t i = 0; i < sizeof texts / sizeof texts[0]; i++)
    RP_NC_TRY(rp_nc_put_text(ncid, NC_GLOBAL, texts[i].name, texts[i].value), path,
              "attribute", texts[i].name, "cannot write");
  const struct { const char *name; double value; } nums[] = {
      {"frequency_ghz", c->freq_ghz},       {"wavelength_mm", t->wavelength_mm},
      {"temperature_c", c->temp_c},         {"permittivity_re", t->eps_re},
      {"permittivity_im", t->eps_im},       {"axis_ratio_fixed", c->axis_ratio_fixed},
      {"canting_sd_deg", c->canting_sd_deg}, {"elevation_deg", c->elevation_deg}};
  for (size_t i = 0; i < sizeof nums / sizeof nums[0]; i++)
    RP_NC_TRY(put_double(ncid, nums[i].name, nums[i].value), path, "attribute", nums[i].name,
              "cannot write");
  RP_NC_TRY(nc_enddef(ncid), path, "file", NULL, "cannot leave define mode");
  for (size_t i = 0; i < nv && i < 32; i++)
    RP_NC_TRY(nc_put_var_double(ncid, varids[i], rp_table_column_data_const(t, i)), path,
              "variable", rp_table_column_get(i)->name, "cannot write the data");
fail:
  return st;
}

rp_status rp_table_save(const rp_table *t, const char *path, rp_error *err) {
  if (t == NULL || path == NULL)
    return rp_error_set(err, RP_EINVAL, "table save: NULL table or path");
  char tmp[4096];
  int fd = -1;
  /* a name of our own beside the output (O_EXCL), then netCDF writes over it */
  RP_TRY(rp_tempfile_create("scattering table", path, tmp, sizeof tmp, &fd, err));
  close(fd);
  int ncid = -1;
  int cs = nc_create(tmp, NC_NETCDF4 | NC_CLOBBER, &ncid);
  if (cs != NC_NOERR) {
    remove(tmp);
    return rp_error_set(err, RP_EIO, "%s: cannot create the output file: %s", path,
                        nc_strerror(cs));
  }
  rp_status st = write_table(ncid, t, path, err);
  const int closed = nc_close(ncid);
  if (st == RP_OK) st = rp_nc_check(closed, path, "file", NULL, "cannot finish writing", err);
  if (st != RP_OK) {
    remove(tmp);
    return st;
  }
  return rp_tempfile_commit("scattering table", tmp, path, err); /* removes tmp on failure */
}

/* ---- load ----------------------------------------------------------------------- */

static rp_status get_text(int ncid, const char *name, char *buf, size_t n, const char *path,
                          rp_error *err) {
  return rp_nc_get_text(ncid, NC_GLOBAL, name, buf, n, path, RP_ETABLE, err);
}

static rp_status get_double(int ncid, const char *name, double *value, const char *path,
                            rp_error *err) {
  return rp_nc_get_double(ncid, NC_GLOBAL, name, value, path, RP_ETABLE, err);
}

static rp_status load_config(int ncid, rp_table *t, const char *path, rp_error *err) {
  rp_drop_config *c = &t->cfg;
  rp_drop_config_default(c);
  char text[128];
  RP_TRY(get_double(ncid, "frequency_ghz", &c->freq_ghz, path, err));
  RP_TRY(get_double(ncid, "wavelength_mm", &t->wavelength_mm, path, err));
  RP_TRY(get_double(ncid, "temperature_c", &c->temp_c, path, err));
  RP_TRY(get_double(ncid, "permittivity_re", &t->eps_re, path, err));
  RP_TRY(get_double(ncid, "permittivity_im", &t->eps_im, path, err));
  RP_TRY(get_double(ncid, "axis_ratio_fixed", &c->axis_ratio_fixed, path, err));
  RP_TRY(get_double(ncid, "canting_sd_deg", &c->canting_sd_deg, path, err));
  RP_TRY(get_double(ncid, "elevation_deg", &c->elevation_deg, path, err));
  RP_TRY(get_text(ncid, "shape_model", text, sizeof text, path, err));
  if (rp_shape_from_name(text, &c->shape, err) != RP_OK)
    return rp_error_set(err, RP_ETABLE, "%s: unknown shape_model '%s'", path, text);
  RP_TRY(get_text(ncid, "canting_model", text, sizeof text, path, err));
  if (rp_canting_model_from_name(text, &c->canting_model, err) != RP_OK)
    return rp_error_set(err, RP_ETABLE, "%s: unknown canting_model '%s'", path, text);
  RP_TRY(get_text(ncid, "canting_average", text, sizeof text, path, err));
  if (strcmp(text, "quadrature") == 0)
    c->canting_approx = 0;
  else if (strcmp(text, "angular-moments") == 0)
    c->canting_approx = 1;
  else
    return rp_error_set(err, RP_ETABLE, "%s: unknown canting_average '%s'", path, text);
  RP_TRY(get_text(ncid, "method", text, sizeof text, path, err));
  if (rp_method_from_name(text, &c->method, err) != RP_OK)
    return rp_error_set(err, RP_ETABLE, "%s: unknown method '%s'", path, text);
  RP_TRY(get_text(ncid, "fall_speed_model", text, sizeof text, path, err));
  if (rp_fallspeed_from_name(text, &t->fall_model, err) != RP_OK)
    return rp_error_set(err, RP_ETABLE, "%s: unknown fall_speed_model '%s'", path, text);
  RP_TRY(get_text(ncid, "rainprint_version", t->version, sizeof t->version, path, err));
  rp_error inner = {0};
  if (rp_drop_config_check(c, &inner) != RP_OK)
    return rp_error_set(err, RP_ETABLE, "%s: %s", path, inner.msg);
  if (fabs(t->wavelength_mm - rp_wavelength_mm(c->freq_ghz)) > 1e-9 * t->wavelength_mm)
    return rp_error_set(err, RP_ETABLE, "%s: wavelength_mm %g does not match frequency %g GHz",
                        path, t->wavelength_mm, c->freq_ghz);
  return RP_OK;
}

static rp_status check_values(const rp_table *t, const char *path, rp_error *err) {
  for (size_t v = 0; v < rp_table_n_columns(); v++) {
    const rp_table_column *col = rp_table_column_get(v);
    const double *x = rp_table_column_data_const(t, v);
    for (size_t i = 0; i < t->n; i++) {
      if (!isfinite(x[i]) || (col->non_negative && x[i] < 0.0))
        return rp_error_set(err, RP_ETABLE, "%s: variable '%s'[%zu] = %g is not allowed", path,
                            col->name, i, x[i]);
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
  for (size_t v = 0; v < rp_table_n_columns(); v++) {
    const rp_table_column *col = rp_table_column_get(v);
    int varid, ndims, dimids[NC_MAX_VAR_DIMS];
    nc_type type;
    if (nc_inq_varid(ncid, col->name, &varid) != NC_NOERR)
      return rp_error_set(err, RP_ETABLE, "%s: missing variable '%s'", path, col->name);
    if (nc_inq_var(ncid, varid, NULL, &type, &ndims, dimids, NULL) != NC_NOERR ||
        type != NC_DOUBLE || ndims != 1 || dimids[0] != dimid)
      return rp_error_set(err, RP_ETABLE, "%s: variable '%s' must be double(diameter)", path,
                          col->name);
    char units[64];
    RP_TRY(rp_nc_get_text(ncid, varid, "units", units, sizeof units, path, RP_ETABLE, err));
    if (strcmp(units, col->units) != 0)
      return rp_error_set(err, RP_ETABLE, "%s: variable '%s' has units '%s', expected '%s'", path,
                          col->name, units, col->units);
    int s = nc_get_var_double(ncid, varid, rp_table_column_data(t, v));
    if (s != NC_NOERR)
      return rp_error_set(err, RP_ETABLE, "%s: variable '%s': cannot read: %s", path,
                          col->name, nc_strerror(s));
  }
  return RP_OK;
}

rp_status rp_table_load(const char *path, rp_table **out, rp_error *err) {
  if (path == NULL || out == NULL)
    return rp_error_set(err, RP_EINVAL, "table load: NULL path or output");
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

/* ---- the file store: shipped, cached or computed ----------------------------------- */

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
  if (out == NULL) return rp_error_set(err, RP_EINVAL, "table obtain: NULL output");
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
  RP_TRY(rp_table_source_get(NULL, cfg, out, origin, err));
  if (have_cache) {
    make_dirs(cache_dir);
    rp_error ignored = {0};
    (void)rp_table_save(*out, path, &ignored); /* a read-only cache only costs time */
  }
  return RP_OK;
}

struct rp_table_store {
  char *shipped_dir, *cache_dir;
};

rp_table_store *rp_table_store_alloc(const char *shipped_dir, const char *cache_dir) {
  rp_table_store *s = calloc(1, sizeof *s);
  if (s == NULL) return NULL;
  if ((shipped_dir != NULL && (s->shipped_dir = strdup(shipped_dir)) == NULL) ||
      (cache_dir != NULL && (s->cache_dir = strdup(cache_dir)) == NULL)) {
    rp_table_store_free(s);
    return NULL;
  }
  return s;
}

void rp_table_store_free(rp_table_store *s) {
  if (s == NULL) return;
  free(s->shipped_dir);
  free(s->cache_dir);
  free(s);
}

static rp_status store_get(void *ctx, const rp_drop_config *cfg, rp_table **out,
                           rp_table_origin *origin, rp_error *err) {
  const rp_table_store *s = ctx;
  return rp_table_obtain(cfg, s->shipped_dir, s->cache_dir, out, origin, err);
}

rp_table_source rp_table_store_source(rp_table_store *s) {
  rp_table_source src = {s != NULL ? store_get : NULL, s};
  return src;
}
