/* table_file.c — scattering tables as netCDF-4 files (CF conventions), their checks on
 * load, and the file store that finds shipped and cached tables (with the cache's size
 * limit and least-recently-used eviction).
 *
 * Method.
 * - Save: netCDF writes a temporary file beside the target (tempfile.c), which is
 *   fsync'ed and renamed: the table appears whole or not at all. When netCDF fails,
 *   statvfs() of the folder tells a full (or read-only) file system, reported with the
 *   system's reason ("No space left on device") instead of HDF5's; a full disk that
 *   only shows at the flush is reported by fsync.
 * - Checksums: 64-bit FNV-1a (Fowler, Noll & Vo; offset basis 0xcbf29ce484222325,
 *   prime 0x100000001b3). Per variable (attribute data_checksum of the variable): its
 *   name + "\n" + its n values, each as 8 IEEE-754 bytes little-endian. Global
 *   (attribute data_checksum): the tag "rainprint-table-checksum-1\n"; every metadata
 *   attribute of META_TEXT then META_NUM as "name=" + its text bytes, or its 8 bytes
 *   little-endian, + "\n"; the number of diameters as 8 bytes little-endian; then the
 *   per-variable checksums in file order, 8 bytes little-endian each. Both are text
 *   "fnv1a64:<16 hex digits>". So a changed value is named with its variable, a changed
 *   attribute by the global checksum. FNV-1a is not cryptographic: it catches
 *   corruption, not forgery (tables are data to trust like code).
 * - Load: before the netCDF library sees anything, the file must be a regular file
 *   (opened O_NONBLOCK, so a FIFO cannot hang the open), at most
 *   RP_TABLE_FILE_MAX_BYTES, and start with the HDF5 signature (netCDF-4 is what
 *   rp_table_save writes; netCDF-3 files are refused, their headers drove the netCDF
 *   library into huge allocations). The bytes are read once and opened from memory
 *   (nc_open_mem), so the checked file is the parsed file. Then: shape and types of
 *   every variable, rp_table_validate (the physics bounds, below: an implausible value
 *   is named with its bound), then the checksums (every other change).
 * - Bounds (rp_table_validate; justification in docs/method.md §16):
 *   all values finite; |f|^2 columns and Im f(0) >= 0 (optical theorem: extinction
 *   >= 0); |<f_hh f_vv*>|^2 <= <|f_hh|^2><|f_vv|^2> (Cauchy–Schwarz for the canting
 *   average), relative slack 1e-6 for the angular-moments approximation;
 *   <|f_hv|^2> <= max(<|f_hh|^2>, <|f_vv|^2>) (LDR <= 0 dB; see the notes);
 *   sigma_back = 4 pi |f(pi)|^2 <= 10 max(A, 4 pi A^2 / lambda^2) and
 *   2 lambda |f(0)| <= 20 A, A = pi D_max^2 / 4 the largest geometric cross-section
 *   of the spheroid; axis ratios equal the named shape model (or the fixed ratio),
 *   fall speeds the named fall model, the permittivity the water model at the
 *   table's frequency and temperature (relative 1e-9: the same code wrote them).
 * - Store: shipped tables are found by name ("rainprint_<band>_<T>C.nc", then the
 *   cache name), cached ones by rp_table_cache_name; no folder is scanned for tables.
 *   The cache is pruned after every save to RP_TABLE_CACHE_MAX_FILES files and
 *   RP_TABLE_CACHE_MAX_BYTES bytes, oldest last use first (last use = mtime, set on
 *   every hit; access times are unreliable under relatime/noatime).
 * Every netCDF call goes through rp_nc_check (ncheck.h). */
#include "rainprint/table_file.h"

#include <dirent.h>
#include <errno.h>
#include <fcntl.h>
#include <inttypes.h>
#include <math.h>
#include <netcdf.h>
#include <netcdf_mem.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/statvfs.h>
#include <time.h>
#include <unistd.h>

#include "io/ncheck.h"
#include "io/tempfile.h"
#include "rainprint/permittivity.h"
#include "rainprint/version.h"

/* ---- checksum ---------------------------------------------------------------------- */

#define FNV_OFFSET UINT64_C(0xcbf29ce484222325)
#define FNV_PRIME UINT64_C(0x100000001b3)
#define CHECKSUM_ATTR "data_checksum"
#define CHECKSUM_TAG "rainprint-table-checksum-1\n"

static uint64_t fnv_bytes(uint64_t h, const void *data, size_t n) {
  const unsigned char *p = data;
  for (size_t i = 0; i < n; i++) {
    h ^= p[i];
    h *= FNV_PRIME;
  }
  return h;
}

static uint64_t fnv_text(uint64_t h, const char *s) { return fnv_bytes(h, s, strlen(s)); }

static uint64_t fnv_u64(uint64_t h, uint64_t v) {
  unsigned char b[8];
  for (int i = 0; i < 8; i++) b[i] = (unsigned char)(v >> (8 * i));
  return fnv_bytes(h, b, 8);
}

static uint64_t fnv_double(uint64_t h, double x) {
  uint64_t v;
  memcpy(&v, &x, sizeof v);
  return fnv_u64(h, v);
}

/* Metadata covered by the checksum, in this order. */
static const char *const META_TEXT[] = {
    "title", "Conventions", "source", "rainprint_version", "band", "shape_model",
    "canting_model", "canting_average", "method", "fall_speed_model", "amplitude_convention"};
static const char *const META_NUM[] = {
    "frequency_ghz", "wavelength_mm",    "temperature_c",  "permittivity_re",
    "permittivity_im", "axis_ratio_fixed", "canting_sd_deg", "elevation_deg"};
#define N_META_TEXT (sizeof META_TEXT / sizeof META_TEXT[0])
#define N_META_NUM (sizeof META_NUM / sizeof META_NUM[0])
enum { META_TEXT_LEN = 512 };

typedef struct {
  char text[N_META_TEXT][META_TEXT_LEN];
  double num[N_META_NUM];
} table_meta;

/* Hash of one column: its name, "\n", its n values. */
static uint64_t column_checksum(const char *name, const double *x, size_t n) {
  uint64_t h = fnv_text(fnv_text(FNV_OFFSET, name), "\n");
  for (size_t i = 0; i < n; i++) h = fnv_double(h, x[i]);
  return h;
}

static uint64_t table_checksum(const table_meta *m, const rp_table *t) {
  uint64_t h = fnv_text(FNV_OFFSET, CHECKSUM_TAG);
  for (size_t i = 0; i < N_META_TEXT; i++) {
    h = fnv_text(fnv_text(h, META_TEXT[i]), "=");
    h = fnv_text(fnv_text(h, m->text[i]), "\n");
  }
  for (size_t i = 0; i < N_META_NUM; i++) {
    h = fnv_text(fnv_text(h, META_NUM[i]), "=");
    h = fnv_text(fnv_double(h, m->num[i]), "\n");
  }
  h = fnv_u64(h, (uint64_t)t->n);
  for (size_t v = 0; v < rp_table_n_columns(); v++)
    h = fnv_u64(h, column_checksum(rp_table_column_get(v)->name,
                                   rp_table_column_data_const(t, v), t->n));
  return h;
}

static void checksum_text(uint64_t h, char *buf, size_t n) {
  snprintf(buf, n, "fnv1a64:%016" PRIx64, h);
}

static const char AMPLITUDE_CONVENTION[] =
    "time dependence exp(-i omega t); amplitudes f in mm with sigma_back = 4 pi |f(pi)|^2 "
    "and C_ext = 2 lambda Im f(0); backscatter alignment (f_hh = f_vv for a sphere)";

/* The metadata rp_table_save writes for t. */
static void meta_of_table(const rp_table *t, table_meta *m) {
  const rp_drop_config *c = &t->cfg;
  const char *band = rp_band_of_frequency(c->freq_ghz);
  const char *texts[N_META_TEXT] = {"rainprint scattering table",
                                    "CF-1.8",
                                    "rainprint " RP_VERSION_STRING,
                                    t->version,
                                    band ? band : "none",
                                    rp_shape_name(c->shape),
                                    rp_canting_model_name(c->canting_model),
                                    c->canting_approx ? "angular-moments" : "quadrature",
                                    rp_method_name(c->method),
                                    rp_fallspeed_name(t->fall_model),
                                    AMPLITUDE_CONVENTION};
  for (size_t i = 0; i < N_META_TEXT; i++)
    snprintf(m->text[i], sizeof m->text[i], "%s", texts[i]);
  const double nums[N_META_NUM] = {c->freq_ghz, t->wavelength_mm, c->temp_c, t->eps_re,
                                   t->eps_im,   c->axis_ratio_fixed, c->canting_sd_deg,
                                   c->elevation_deg};
  memcpy(m->num, nums, sizeof nums);
}

uint64_t rp_table_checksum(const rp_table *t) {
  if (t == NULL) return 0;
  table_meta m;
  meta_of_table(t, &m);
  return table_checksum(&m, t);
}

/* ---- save ----------------------------------------------------------------------- */

static rp_status write_table(int ncid, const rp_table *t, const char *path, rp_error *err) {
  rp_status st = RP_OK;
  const size_t nv = rp_table_n_columns();
  int dim, varids[32];
  if (nv > 32) return rp_error_set(err, RP_EINVAL, "table save: too many columns (%zu)", nv);
  RP_NC_TRY(nc_def_dim(ncid, "diameter", t->n, &dim), path, "dimension", "diameter", "cannot define");
  for (size_t i = 0; i < nv; i++) {
    const rp_table_column *c = rp_table_column_get(i);
    RP_NC_TRY(nc_def_var(ncid, c->name, NC_DOUBLE, 1, &dim, &varids[i]), path, "variable",
              c->name, "cannot define");
    RP_NC_TRY(rp_nc_put_text(ncid, varids[i], "units", c->units), path, "variable", c->name,
              "cannot write its units");
    RP_NC_TRY(rp_nc_put_text(ncid, varids[i], "long_name", c->long_name), path, "variable",
              c->name, "cannot write its long_name");
    char sum[32];
    checksum_text(column_checksum(c->name, rp_table_column_data_const(t, i), t->n), sum,
                  sizeof sum);
    RP_NC_TRY(rp_nc_put_text(ncid, varids[i], CHECKSUM_ATTR, sum), path, "variable", c->name,
              "cannot write its checksum");
  }
  table_meta m;
  meta_of_table(t, &m);
  for (size_t i = 0; i < N_META_TEXT; i++)
    RP_NC_TRY(rp_nc_put_text(ncid, NC_GLOBAL, META_TEXT[i], m.text[i]), path, "attribute",
              META_TEXT[i], "cannot write");
  for (size_t i = 0; i < N_META_NUM; i++)
    RP_NC_TRY(nc_put_att_double(ncid, NC_GLOBAL, META_NUM[i], NC_DOUBLE, 1, &m.num[i]), path,
              "attribute", META_NUM[i], "cannot write");
  char sum[32];
  checksum_text(table_checksum(&m, t), sum, sizeof sum);
  RP_NC_TRY(rp_nc_put_text(ncid, NC_GLOBAL, CHECKSUM_ATTR, sum), path, "attribute",
            CHECKSUM_ATTR, "cannot write");
  RP_NC_TRY(nc_enddef(ncid), path, "file", NULL, "cannot leave define mode");
  for (size_t i = 0; i < nv; i++)
    RP_NC_TRY(nc_put_var_double(ncid, varids[i], rp_table_column_data_const(t, i)), path,
              "variable", rp_table_column_get(i)->name, "cannot write the data");
fail:
  return st;
}

/* The system's reason when netCDF failed to write into folder_of: a full file system
 * is reported as ENOSPC (HDF5 would say "HDF error" or worse); NULL when the folder
 * looks fine, then netCDF's own reason is given. */
static const char *system_reason(const char *tmp) {
  char dir[4096];
  snprintf(dir, sizeof dir, "%s", tmp);
  char *slash = strrchr(dir, '/');
  if (slash != NULL)
    *slash = '\0';
  else
    snprintf(dir, sizeof dir, ".");
  struct statvfs vfs;
  if (statvfs(dir[0] ? dir : "/", &vfs) != 0) return NULL;
  if (vfs.f_bavail == 0 || (vfs.f_files > 0 && vfs.f_favail == 0)) return strerror(ENOSPC);
  if (vfs.f_flag & ST_RDONLY) return strerror(EROFS);
  return NULL;
}

rp_status rp_table_save(const rp_table *t, const char *path, rp_error *err) {
  if (t == NULL || path == NULL)
    return rp_error_set(err, RP_EINVAL, "table save: NULL table or path");
  /* refuse what the loader would refuse, so no saved table is unloadable */
  RP_TRY(rp_table_validate(t, path, err));
  char tmp[4096];
  int fd = -1;
  /* a name of our own beside the output (O_EXCL), then netCDF writes over it */
  RP_TRY(rp_tempfile_create("scattering table", path, tmp, sizeof tmp, &fd, err));
  close(fd);
  int ncid = -1;
  int cs = nc_create(tmp, NC_NETCDF4 | NC_CLOBBER, &ncid);
  if (cs != NC_NOERR) {
    const char *why = system_reason(tmp);
    unlink(tmp);
    return rp_error_set(err, RP_EIO, "scattering table '%s': cannot create the output file: %s",
                        path, why ? why : nc_strerror(cs));
  }
  rp_status st = write_table(ncid, t, path, err);
  const int closed = nc_close(ncid);
  if (st == RP_OK) st = rp_nc_check(closed, path, "file", NULL, "cannot finish writing", err);
  if (st != RP_OK) {
    const char *why = system_reason(tmp);
    if (why != NULL)
      st = rp_error_set(err, RP_EIO, "scattering table '%s': cannot write: %s", path, why);
    unlink(tmp);
    return st;
  }
  return rp_tempfile_commit("scattering table", tmp, path, err); /* removes tmp on failure */
}

/* ---- validation ------------------------------------------------------------------- */

static rp_status bad_value(const char *name, const char *col, size_t i, const rp_table *t,
                           double x, const char *why, rp_error *err) {
  return rp_error_set(err, RP_ETABLE, "%s: variable '%s'[%zu] (D = %g mm) = %g: %s", name, col,
                      i, t->d_mm[i], x, why);
}

static int rel_differs(double a, double b, double rel) {
  return !(fabs(a - b) <= rel * fmax(fabs(a), fabs(b)));
}

rp_status rp_table_validate(const rp_table *t, const char *name, rp_error *err) {
  if (name == NULL) name = "table";
  if (t == NULL) return rp_error_set(err, RP_EINVAL, "%s: NULL table", name);
  if (t->n < 2 || t->n > RP_TABLE_MAX_DIAMETERS)
    return rp_error_set(err, RP_ETABLE, "%s: %zu diameters, expected 2 to %d", name, t->n,
                        RP_TABLE_MAX_DIAMETERS);
  const rp_drop_config *c = &t->cfg;
  rp_error inner = {0};
  if (rp_drop_config_check(c, &inner) != RP_OK)
    return rp_error_set(err, RP_ETABLE, "%s: %s", name, inner.msg);
  if (!isfinite(t->wavelength_mm) ||
      fabs(t->wavelength_mm - rp_wavelength_mm(c->freq_ghz)) > 1e-9 * t->wavelength_mm)
    return rp_error_set(err, RP_ETABLE, "%s: wavelength_mm %g does not match frequency %g GHz",
                        name, t->wavelength_mm, c->freq_ghz);
  double complex eps;
  if (rp_water_permittivity(c->freq_ghz, c->temp_c, &eps, &inner) != RP_OK)
    return rp_error_set(err, RP_ETABLE, "%s: %s", name, inner.msg);
  if (!(fabs(t->eps_re - creal(eps)) <= 1e-9 * cabs(eps) &&
        fabs(t->eps_im - cimag(eps)) <= 1e-9 * cabs(eps)))
    return rp_error_set(err, RP_ETABLE, "%s: permittivity %g%+gi differs from the water model's "
                        "%g%+gi at %g GHz and %g C", name, t->eps_re, t->eps_im, creal(eps),
                        cimag(eps), c->freq_ghz, c->temp_c);
  for (size_t v = 0; v < rp_table_n_columns(); v++) {
    const rp_table_column *col = rp_table_column_get(v);
    const double *x = rp_table_column_data_const(t, v);
    for (size_t i = 0; i < t->n; i++) {
      if (!isfinite(x[i]))
        return rp_error_set(err, RP_ETABLE, "%s: variable '%s'[%zu] = %g is not finite", name,
                            col->name, i, x[i]);
      if (col->non_negative && x[i] < 0.0)
        return rp_error_set(err, RP_ETABLE, "%s: variable '%s'[%zu] = %g is negative", name,
                            col->name, i, x[i]);
    }
  }
  for (size_t i = 0; i < t->n; i++)
    if (!(t->d_mm[i] > 0.0 && t->d_mm[i] <= 10.0) || (i > 0 && t->d_mm[i] <= t->d_mm[i - 1]))
      return rp_error_set(err, RP_ETABLE,
                          "%s: variable 'diameter': diameters must increase strictly within "
                          "(0, 10] mm (index %zu: %g mm)", name, i, t->d_mm[i]);
  const double lam = t->wavelength_mm;
  for (size_t i = 0; i < t->n; i++) {
    const double d = t->d_mm[i];
    double ar = c->axis_ratio_fixed, v = 0.0;
    if (ar == 0.0 && rp_shape_axis_ratio(c->shape, d, &ar, &inner) != RP_OK)
      return rp_error_set(err, RP_ETABLE, "%s: %s", name, inner.msg);
    if (rel_differs(t->axis_ratio[i], ar, 1e-9))
      return bad_value(name, "axis_ratio", i, t, t->axis_ratio[i],
                       "differs from the shape model of the table", err);
    if (rp_fallspeed_eval(t->fall_model, d, &v, &inner) != RP_OK)
      return rp_error_set(err, RP_ETABLE, "%s: %s", name, inner.msg);
    if (rel_differs(t->fall_speed_m_s[i], v, 1e-9))
      return bad_value(name, "fall_speed", i, t, t->fall_speed_m_s[i],
                       "differs from the fall-speed model of the table", err);
    const double hh = t->back_hh2_mm2[i], vv = t->back_vv2_mm2[i], hv = t->back_hv2_mm2[i];
    const double re = t->back_hhvv_re_mm2[i], im = t->back_hhvv_im_mm2[i];
    if (!(re * re + im * im <= hh * vv * (1.0 + 1e-6) + 1e-300))
      return bad_value(name, "back_hhvv_re", i, t, re,
                       "|<f_hh f_vv*>|^2 exceeds <|f_hh|^2><|f_vv|^2> (Cauchy-Schwarz)", err);
    if (!(hv <= fmax(hh, vv)))
      return bad_value(name, "back_hv2", i, t, hv,
                       "cross-polar power above co-polar power (LDR > 0 dB)", err);
    /* largest dimension of the spheroid of equal volume: equatorial D r^(-1/3)
     * (oblate), along the axis D r^(2/3) (prolate) */
    const double dmax = d * fmax(pow(ar, -1.0 / 3.0), pow(ar, 2.0 / 3.0));
    const double area = M_PI * dmax * dmax / 4.0;
    const double back_cap = RP_TABLE_BACK_GEOM_FACTOR *
                            fmax(area, 4.0 * M_PI * area * area / (lam * lam));
    if (!(4.0 * M_PI * fmax(hh, vv) <= back_cap))
      return bad_value(name, hh >= vv ? "back_hh2" : "back_vv2", i, t, fmax(hh, vv),
                       "back-scatter cross-section above the physical bound", err);
    const double fwd_cap = RP_TABLE_FWD_GEOM_FACTOR * area;
    if (!(2.0 * lam * hypot(t->fwd_hh_re_mm[i], t->fwd_hh_im_mm[i]) <= fwd_cap))
      return bad_value(name, "fwd_hh_re", i, t, t->fwd_hh_re_mm[i],
                       "forward amplitude above the physical bound", err);
    if (!(2.0 * lam * hypot(t->fwd_vv_re_mm[i], t->fwd_vv_im_mm[i]) <= fwd_cap))
      return bad_value(name, "fwd_vv_re", i, t, t->fwd_vv_re_mm[i],
                       "forward amplitude above the physical bound", err);
  }
  return RP_OK;
}

/* ---- load ----------------------------------------------------------------------- */

static const unsigned char HDF5_SIGNATURE[8] = {0x89, 'H', 'D', 'F', '\r', '\n', 0x1a, '\n'};

static rp_status check_signature(const char *name, const unsigned char *p, size_t n,
                                 rp_error *err) {
  if (n >= 4 && p[0] == 'C' && p[1] == 'D' && p[2] == 'F' && (p[3] == 1 || p[3] == 2 || p[3] == 5))
    return rp_error_set(err, RP_ETABLE, "%s: a netCDF-3 (classic) file; scattering tables are "
                        "netCDF-4 files as written by 'rainprint table' (regenerate it)", name);
  if (n < sizeof HDF5_SIGNATURE || memcmp(p, HDF5_SIGNATURE, sizeof HDF5_SIGNATURE) != 0)
    return rp_error_set(err, RP_ETABLE, "%s: not a netCDF-4 file (no HDF5 signature at the "
                        "start)", name);
  return RP_OK;
}

static rp_status get_double(int ncid, const char *name, double *value, const char *path,
                            rp_error *err) {
  return rp_nc_get_double(ncid, NC_GLOBAL, name, value, path, RP_ETABLE, err);
}

static rp_status load_config(int ncid, rp_table *t, table_meta *m, const char *path,
                             rp_error *err) {
  for (size_t i = 0; i < N_META_TEXT; i++)
    RP_TRY(rp_nc_get_text(ncid, NC_GLOBAL, META_TEXT[i], m->text[i], sizeof m->text[i], path,
                          RP_ETABLE, err));
  for (size_t i = 0; i < N_META_NUM; i++) RP_TRY(get_double(ncid, META_NUM[i], &m->num[i], path, err));
  rp_drop_config *c = &t->cfg;
  rp_drop_config_default(c);
  c->freq_ghz = m->num[0];
  t->wavelength_mm = m->num[1];
  c->temp_c = m->num[2];
  t->eps_re = m->num[3];
  t->eps_im = m->num[4];
  c->axis_ratio_fixed = m->num[5];
  c->canting_sd_deg = m->num[6];
  c->elevation_deg = m->num[7];
  const char *text = m->text[5];
  if (rp_shape_from_name(text, &c->shape, err) != RP_OK)
    return rp_error_set(err, RP_ETABLE, "%s: attribute 'shape_model': unknown '%s'", path, text);
  text = m->text[6];
  if (rp_canting_model_from_name(text, &c->canting_model, err) != RP_OK)
    return rp_error_set(err, RP_ETABLE, "%s: attribute 'canting_model': unknown '%s'", path,
                        text);
  text = m->text[7];
  if (strcmp(text, "quadrature") == 0)
    c->canting_approx = 0;
  else if (strcmp(text, "angular-moments") == 0)
    c->canting_approx = 1;
  else
    return rp_error_set(err, RP_ETABLE, "%s: attribute 'canting_average': unknown '%s'", path,
                        text);
  text = m->text[8];
  if (rp_method_from_name(text, &c->method, err) != RP_OK)
    return rp_error_set(err, RP_ETABLE, "%s: attribute 'method': unknown '%s'", path, text);
  text = m->text[9];
  if (rp_fallspeed_from_name(text, &t->fall_model, err) != RP_OK)
    return rp_error_set(err, RP_ETABLE, "%s: attribute 'fall_speed_model': unknown '%s'", path,
                        text);
  snprintf(t->version, sizeof t->version, "%.31s", m->text[3]);
  return RP_OK;
}

static rp_status load_vars(int ncid, rp_table *t, int dimid, const char *path, rp_error *err) {
  int nvars = 0;
  if (nc_inq_nvars(ncid, &nvars) != NC_NOERR || nvars != (int)rp_table_n_columns())
    return rp_error_set(err, RP_ETABLE, "%s: %d variables, expected %zu", path, nvars,
                        rp_table_n_columns());
  for (size_t v = 0; v < rp_table_n_columns(); v++) {
    const rp_table_column *col = rp_table_column_get(v);
    int varid, ndims;
    nc_type type;
    if (nc_inq_varid(ncid, col->name, &varid) != NC_NOERR)
      return rp_error_set(err, RP_ETABLE, "%s: missing variable '%s'", path, col->name);
    if (nc_inq_varndims(ncid, varid, &ndims) != NC_NOERR || ndims != 1)
      return rp_error_set(err, RP_ETABLE, "%s: variable '%s' must be double(diameter)", path,
                          col->name);
    int dimids[1];
    if (nc_inq_var(ncid, varid, NULL, &type, NULL, dimids, NULL) != NC_NOERR ||
        type != NC_DOUBLE || dimids[0] != dimid)
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

static rp_status check_sum(int ncid, const table_meta *m, const rp_table *t, const char *path,
                           rp_error *err) {
  char text[64], want[32];
  nc_type type;
  size_t len;
  if (nc_inq_att(ncid, NC_GLOBAL, CHECKSUM_ATTR, &type, &len) != NC_NOERR)
    return rp_error_set(err, RP_ETABLE, "%s: no '%s' attribute (a table from before checksums, "
                        "or not written by rainprint): regenerate it with 'rainprint table' "
                        "(shipped tables: scripts/make-tables.sh)", path, CHECKSUM_ATTR);
  for (size_t v = 0; v < rp_table_n_columns(); v++) {
    const char *name = rp_table_column_get(v)->name;
    int varid;
    if (nc_inq_varid(ncid, name, &varid) != NC_NOERR)
      return rp_error_set(err, RP_ETABLE, "%s: missing variable '%s'", path, name);
    RP_TRY(rp_nc_get_text(ncid, varid, CHECKSUM_ATTR, text, sizeof text, path, RP_ETABLE, err));
    checksum_text(column_checksum(name, rp_table_column_data_const(t, v), t->n), want,
                  sizeof want);
    if (strcmp(text, want) != 0)
      return rp_error_set(err, RP_ETABLE, "%s: variable '%s': data hash to '%s', not to its "
                          "checksum '%s': the file is corrupt (regenerate it)", path, name,
                          want, text);
  }
  RP_TRY(rp_nc_get_text(ncid, NC_GLOBAL, CHECKSUM_ATTR, text, sizeof text, path, RP_ETABLE, err));
  checksum_text(table_checksum(m, t), want, sizeof want);
  if (strcmp(text, want) != 0)
    return rp_error_set(err, RP_ETABLE, "%s: global attribute '%s' = '%s' but the metadata and "
                        "data hash to '%s': an attribute is corrupt (regenerate the file)", path,
                        CHECKSUM_ATTR, text, want);
  return RP_OK;
}

rp_status rp_table_load_mem(const char *name, const void *data, size_t size, rp_table **out,
                            rp_error *err) {
  if (out == NULL) return rp_error_set(err, RP_EINVAL, "table load: NULL output");
  *out = NULL;
  if (name == NULL || (data == NULL && size > 0))
    return rp_error_set(err, RP_EINVAL, "table load: NULL name or data");
  if (size > RP_TABLE_FILE_MAX_BYTES)
    return rp_error_set(err, RP_ETABLE, "%s: %zu bytes, above the limit of %d bytes for a "
                        "table file", name, size, RP_TABLE_FILE_MAX_BYTES);
  RP_TRY(check_signature(name, data, size, err));
  void *copy = malloc(size); /* nc_open_mem takes a writable buffer */
  if (copy == NULL) return rp_error_set(err, RP_ENOMEM, "out of memory loading %s", name);
  memcpy(copy, data, size);
  int ncid;
  int s = nc_open_mem(name, NC_NOWRITE, size, copy, &ncid);
  if (s != NC_NOERR) {
    free(copy);
    return rp_error_set(err, RP_ETABLE, "%s: not a readable netCDF-4 file (%s)", name,
                        nc_strerror(s));
  }
  rp_status status = RP_OK;
  rp_table *t = NULL;
  table_meta *m = calloc(1, sizeof *m);
  int dimid, ndims = 0;
  size_t n = 0;
  if (m == NULL) {
    status = rp_error_set(err, RP_ENOMEM, "out of memory loading %s", name);
    goto done;
  }
  if (nc_inq_ndims(ncid, &ndims) != NC_NOERR || ndims != 1 ||
      nc_inq_dimid(ncid, "diameter", &dimid) != NC_NOERR ||
      nc_inq_dimlen(ncid, dimid, &n) != NC_NOERR || n < 2 || n > RP_TABLE_MAX_DIAMETERS) {
    status = rp_error_set(err, RP_ETABLE, "%s: dimension 'diameter' missing, not the only one, "
                          "or its length %zu outside [2, %d]", name, n, RP_TABLE_MAX_DIAMETERS);
    goto done;
  }
  t = rp_table_alloc(n);
  if (t == NULL) {
    status = rp_error_set(err, RP_ENOMEM, "out of memory loading %s", name);
    goto done;
  }
  status = load_config(ncid, t, m, name, err);
  if (status == RP_OK) status = load_vars(ncid, t, dimid, name, err);
  /* the bounds first: an implausible value is named with its bound; then the checksum
   * catches every other change */
  if (status == RP_OK) status = rp_table_validate(t, name, err);
  if (status == RP_OK) status = check_sum(ncid, m, t, name, err);
done:
  nc_close(ncid);
  free(copy);
  free(m);
  if (status != RP_OK) {
    rp_table_free(t);
    return status;
  }
  *out = t;
  return RP_OK;
}

/* Read a table file into memory after the checks that must come before any parsing. */
static rp_status read_table_file(const char *path, unsigned char **data, size_t *size,
                                 rp_error *err) {
  *data = NULL;
  *size = 0;
  const int fd = open(path, O_RDONLY | O_NONBLOCK | O_CLOEXEC);
  if (fd < 0)
    return rp_error_set(err, errno == ENOENT || errno == EACCES ? RP_EIO : RP_ETABLE,
                        "%s: cannot open scattering table: %s", path, strerror(errno));
  struct stat st;
  rp_status s = RP_OK;
  if (fstat(fd, &st) != 0) {
    s = rp_error_set(err, RP_EIO, "%s: cannot stat: %s", path, strerror(errno));
  } else if (!S_ISREG(st.st_mode)) {
    s = rp_error_set(err, RP_ETABLE, "%s: not a regular file (%s): a table must be a file",
                     path, S_ISDIR(st.st_mode) ? "a directory" : S_ISFIFO(st.st_mode) ? "a FIFO"
                                                                  : "a device or socket");
  } else if (st.st_size > RP_TABLE_FILE_MAX_BYTES) {
    s = rp_error_set(err, RP_ETABLE, "%s: %lld bytes, above the limit of %d bytes for a table "
                     "file", path, (long long)st.st_size, RP_TABLE_FILE_MAX_BYTES);
  } else {
    const size_t n = (size_t)st.st_size;
    unsigned char *buf = malloc(n > 0 ? n : 1);
    size_t got = 0;
    if (buf == NULL) s = rp_error_set(err, RP_ENOMEM, "out of memory reading %s", path);
    while (s == RP_OK && got < n) {
      const ssize_t r = read(fd, buf + got, n - got);
      if (r < 0 && errno == EINTR) continue;
      if (r < 0) s = rp_error_set(err, RP_EIO, "%s: cannot read: %s", path, strerror(errno));
      if (r == 0) break; /* shrank while reading: the signature/netCDF checks decide */
      if (r > 0) got += (size_t)r;
    }
    if (s == RP_OK) {
      *data = buf;
      *size = got;
    } else {
      free(buf);
    }
  }
  close(fd);
  return s;
}

rp_status rp_table_load(const char *path, rp_table **out, rp_error *err) {
  if (path == NULL || out == NULL)
    return rp_error_set(err, RP_EINVAL, "table load: NULL path or output");
  *out = NULL;
  unsigned char *data = NULL;
  size_t size = 0;
  RP_TRY(read_table_file(path, &data, &size, err));
  rp_status s = rp_table_load_mem(path, data, size, out, err);
  free(data);
  return s;
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

int rp_table_shipped_name(const rp_drop_config *cfg, char *buf, size_t n) {
  if (cfg == NULL || buf == NULL || n == 0) return 0;
  buf[0] = '\0';
  const char *band = rp_band_of_frequency(cfg->freq_ghz);
  if (band == NULL || !isfinite(cfg->temp_c) || fabs(cfg->temp_c - round(cfg->temp_c)) > 1e-9 ||
      fabs(cfg->temp_c) > 1000.0)
    return 0;
  return snprintf(buf, n, "rainprint_%s_%dC.nc", band, (int)round(cfg->temp_c)) < (int)n;
}

static rp_table *find_shipped(const char *dir, const rp_drop_config *cfg) {
  char name[256], path[4096];
  rp_table *t = NULL;
  if (rp_table_shipped_name(cfg, name, sizeof name) &&
      snprintf(path, sizeof path, "%s/%s", dir, name) < (int)sizeof path)
    t = try_table(path, cfg);
  rp_table_cache_name(cfg, name, sizeof name);
  if (t == NULL && snprintf(path, sizeof path, "%s/%s", dir, name) < (int)sizeof path)
    t = try_table(path, cfg);
  return t;
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

static rp_status obtain(const rp_drop_config *cfg, const char *shipped_dir, const char *cache_dir,
                        size_t max_files, uint64_t max_bytes, rp_table **out,
                        rp_table_origin *origin, rp_error *err) {
  if (out == NULL) return rp_error_set(err, RP_EINVAL, "table obtain: NULL output");
  *out = NULL;
  RP_TRY(rp_drop_config_check(cfg, err));
  if (shipped_dir != NULL && (*out = find_shipped(shipped_dir, cfg)) != NULL) {
    if (origin) *origin = RP_TABLE_SHIPPED;
    return RP_OK;
  }
  char name[256], path[4096];
  rp_table_cache_name(cfg, name, sizeof name);
  const int have_cache =
      cache_dir != NULL && snprintf(path, sizeof path, "%s/%s", cache_dir, name) < (int)sizeof path;
  if (have_cache && (*out = try_table(path, cfg)) != NULL) {
    (void)utimensat(AT_FDCWD, path, NULL, 0); /* last use = now (mtime) */
    if (origin) *origin = RP_TABLE_CACHED;
    return RP_OK;
  }
  RP_TRY(rp_table_source_get(NULL, cfg, out, origin, err));
  if (have_cache) {
    make_dirs(cache_dir);
    rp_error ignored = {0};
    if (rp_table_save(*out, path, &ignored) == RP_OK) /* a read-only cache only costs time */
      (void)rp_table_cache_prune(cache_dir, max_files, max_bytes, &ignored);
  }
  return RP_OK;
}

rp_status rp_table_obtain(const rp_drop_config *cfg, const char *shipped_dir,
                          const char *cache_dir, rp_table **out, rp_table_origin *origin,
                          rp_error *err) {
  return obtain(cfg, shipped_dir, cache_dir, RP_TABLE_CACHE_MAX_FILES, RP_TABLE_CACHE_MAX_BYTES,
                out, origin, err);
}

struct rp_table_store {
  char *shipped_dir, *cache_dir;
  size_t max_files;
  uint64_t max_bytes;
};

rp_table_store *rp_table_store_alloc(const char *shipped_dir, const char *cache_dir) {
  rp_table_store *s = calloc(1, sizeof *s);
  if (s == NULL) return NULL;
  s->max_files = RP_TABLE_CACHE_MAX_FILES;
  s->max_bytes = RP_TABLE_CACHE_MAX_BYTES;
  if ((shipped_dir != NULL && (s->shipped_dir = strdup(shipped_dir)) == NULL) ||
      (cache_dir != NULL && (s->cache_dir = strdup(cache_dir)) == NULL)) {
    rp_table_store_free(s);
    return NULL;
  }
  return s;
}

void rp_table_store_set_cache_limits(rp_table_store *s, size_t max_files, uint64_t max_bytes) {
  if (s == NULL) return;
  s->max_files = max_files;
  s->max_bytes = max_bytes;
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
  return obtain(cfg, s->shipped_dir, s->cache_dir, s->max_files, s->max_bytes, out, origin, err);
}

rp_table_source rp_table_store_source(rp_table_store *s) {
  rp_table_source src = {s != NULL ? store_get : NULL, s};
  return src;
}

/* ---- the cache: list, prune, clear ------------------------------------------------- */

/* A cache file: "table_*.nc" (rp_table_cache_name), or a temporary file of one. */
static int is_cache_name(const char *name, int *is_temp) {
  const size_t len = strlen(name);
  *is_temp = rp_tempfile_is_temp_name(name);
  if (*is_temp) return strstr(name, "-table_") != NULL;
  return len > 9 && strncmp(name, "table_", 6) == 0 && strcmp(name + len - 3, ".nc") == 0;
}

static void summary_of(const char *name, char *buf, size_t n) {
  /* "table_5.6000GHz_10.00C_thurai_planar7.00_el0.00_tmatrix.nc" ->
   * "5.6000GHz 10.00C thurai planar7.00 el0.00 tmatrix" */
  snprintf(buf, n, "%s", name + 6);
  size_t len = strlen(buf);
  if (len >= 3 && strcmp(buf + len - 3, ".nc") == 0) buf[len - 3] = '\0';
  for (char *p = buf; *p; p++)
    if (*p == '_') *p = ' ';
}

static int cmp_newest_first(const void *a, const void *b) {
  const rp_table_cache_entry *x = a, *y = b;
  if (x->last_use != y->last_use) return x->last_use > y->last_use ? -1 : 1;
  return strcmp(x->name, y->name);
}

rp_status rp_table_cache_list(const char *cache_dir, rp_table_cache_entry **entries, size_t *n,
                              rp_error *err) {
  if (entries) *entries = NULL;
  if (n) *n = 0;
  if (cache_dir == NULL || entries == NULL || n == NULL)
    return rp_error_set(err, RP_EINVAL, "table cache list: NULL argument");
  DIR *d = opendir(cache_dir);
  if (d == NULL) {
    if (errno == ENOENT) return RP_OK; /* no cache yet: empty */
    return rp_error_set(err, RP_EIO, "%s: cannot read the table cache: %s", cache_dir,
                        strerror(errno));
  }
  rp_table_cache_entry *list = NULL;
  size_t count = 0, cap = 0;
  rp_status s = RP_OK;
  struct dirent *e;
  while ((e = readdir(d)) != NULL) {
    int is_temp = 0;
    if (!is_cache_name(e->d_name, &is_temp) || is_temp) continue;
    char path[4096];
    struct stat st;
    if (snprintf(path, sizeof path, "%s/%s", cache_dir, e->d_name) >= (int)sizeof path ||
        lstat(path, &st) != 0 || !S_ISREG(st.st_mode))
      continue;
    if (count == cap) {
      cap = cap ? 2 * cap : 32;
      rp_table_cache_entry *grown = realloc(list, cap * sizeof *grown);
      if (grown == NULL) {
        s = rp_error_set(err, RP_ENOMEM, "table cache list: out of memory");
        break;
      }
      list = grown;
    }
    rp_table_cache_entry *x = &list[count++];
    snprintf(x->name, sizeof x->name, "%s", e->d_name);
    x->size_bytes = (uint64_t)st.st_size;
    x->last_use = st.st_mtime;
    summary_of(e->d_name, x->summary, sizeof x->summary);
  }
  closedir(d);
  if (s != RP_OK) {
    free(list);
    return s;
  }
  if (count > 0) qsort(list, count, sizeof *list, cmp_newest_first);
  *entries = list;
  *n = count;
  return RP_OK;
}

void rp_table_cache_list_free(rp_table_cache_entry *entries) { free(entries); }

rp_status rp_table_cache_prune(const char *cache_dir, size_t max_files, uint64_t max_bytes,
                               rp_error *err) {
  rp_table_cache_entry *list = NULL;
  size_t n = 0;
  RP_TRY(rp_table_cache_list(cache_dir, &list, &n, err));
  uint64_t total = 0;
  for (size_t i = 0; i < n; i++) total += list[i].size_bytes;
  rp_status s = RP_OK;
  for (size_t i = n; i-- > 0 && (i + 1 > max_files || total > max_bytes);) {
    char path[4096];
    snprintf(path, sizeof path, "%s/%s", cache_dir, list[i].name);
    if (unlink(path) != 0 && errno != ENOENT) {
      s = rp_error_set(err, RP_EIO, "%s: cannot remove: %s", path, strerror(errno));
      break;
    }
    total -= list[i].size_bytes;
  }
  free(list);
  return s;
}

rp_status rp_table_cache_clear(const char *cache_dir, size_t *removed, rp_error *err) {
  if (removed) *removed = 0;
  if (cache_dir == NULL) return rp_error_set(err, RP_EINVAL, "table cache clear: NULL folder");
  DIR *d = opendir(cache_dir);
  if (d == NULL) {
    if (errno == ENOENT) return RP_OK;
    return rp_error_set(err, RP_EIO, "%s: cannot read the table cache: %s", cache_dir,
                        strerror(errno));
  }
  rp_status s = RP_OK;
  struct dirent *e;
  while ((e = readdir(d)) != NULL) {
    int is_temp = 0;
    if (!is_cache_name(e->d_name, &is_temp)) continue;
    char path[4096];
    struct stat st;
    if (snprintf(path, sizeof path, "%s/%s", cache_dir, e->d_name) >= (int)sizeof path ||
        lstat(path, &st) != 0 || !S_ISREG(st.st_mode))
      continue;
    if (unlink(path) != 0) {
      s = rp_error_set(err, RP_EIO, "%s: cannot remove: %s", path, strerror(errno));
      break;
    }
    if (removed) (*removed)++;
  }
  closedir(d);
  return s;
}
