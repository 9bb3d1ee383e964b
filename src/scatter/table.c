/* table.c — scattering tables in memory: the column descriptors, building over a
 * diameter grid, and the config match. The file format (netCDF-4) is in
 * src/io/table_file.c.
 *
 * Building runs rp_drop_eval over the diameter grid in parallel (OpenMP, one drop
 * workspace per thread). */
#include "rainprint/table.h"

#include "rainprint/version.h"

#include <math.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#ifdef _OPENMP
#include <omp.h>
#endif

/* Variable names in the file are the member names without their unit suffix. */
static const rp_table_column table_vars[] = {
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

size_t rp_table_n_columns(void) { return N_VARS; }

const rp_table_column *rp_table_column_get(size_t i) {
  return i < N_VARS ? &table_vars[i] : NULL;
}

double *rp_table_column_data(rp_table *t, size_t i) {
  return (t != NULL && i < N_VARS) ? *member(t, i) : NULL;
}

const double *rp_table_column_data_const(const rp_table *t, size_t i) {
  return (t != NULL && i < N_VARS)
             ? *(double *const *)(const void *)((const char *)t + table_vars[i].offset)
             : NULL;
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
  snprintf(t->version, sizeof t->version, "%s", rp_version());
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

/* Offset (mm) of the knot added on the far side of a shape breakpoint: close enough
 * that extrapolating a piece over it costs nothing (r and q are smooth within a piece),
 * far enough that the diameters stay distinct in a file written with %.17g. */
#define BP_OFFSET_MM 1e-6
/* Grid points this close (mm) to a breakpoint are the breakpoint (decimal round-off of
 * dmin + i dstep, e.g. 0.1 + 6 * 0.1 = 0.7000000000000001). */
#define BP_SNAP_MM 1e-9

static int has_point(const double *d, size_t n, double lo, double hi) {
  for (size_t i = 0; i < n; i++)
    if (d[i] >= lo && d[i] <= hi) return 1;
  return 0;
}

static int cmp_double(const void *a, const void *b) {
  const double x = *(const double *)a, y = *(const double *)b;
  return (x > y) - (x < y);
}

/* The diameters of a table: the uniform grid (n_grid points), snapped to the shape
 * model's breakpoints, plus knots that give both sides of every breakpoint within
 * [dmin, dmax] a knot next to it: the breakpoint itself on the side it belongs to (by
 * the model's rule) and bp -+ BP_OFFSET_MM on the other. Ascending, distinct. *d_out
 * is malloc'ed (caller frees). */
static rp_status grid_diameters(const rp_drop_config *cfg, double dmin, double dmax,
                                double dstep, size_t n_grid, double **d_out, size_t *n_out,
                                rp_error *err) {
  double bp[RP_SHAPE_BREAKPOINTS_MAX];
  size_t nbp = 0;
  if (!(cfg->axis_ratio_fixed > 0.0))
    nbp = rp_shape_breakpoints(cfg->shape, bp, RP_SHAPE_BREAKPOINTS_MAX);
  if (nbp > RP_SHAPE_BREAKPOINTS_MAX) nbp = RP_SHAPE_BREAKPOINTS_MAX;
  double *d = malloc((n_grid + 2 * nbp) * sizeof *d);
  if (d == NULL)
    return rp_error_set(err, RP_ENOMEM, "out of memory for a %zu-diameter grid", n_grid);
  size_t n = 0;
  for (size_t i = 0; i < n_grid; i++) {
    /* rounding (and the 1e-9 allowance of grid_size) can put the last point a few ulp
     * past dmax, e.g. 10.000000000000002 for 0.05..10 by 0.05, which is outside
     * (0, 10] mm: clamp it to dmax */
    double x = fmin(dmin + (double)i * dstep, dmax);
    for (size_t b = 0; b < nbp; b++)
      if (fabs(x - bp[b]) <= BP_SNAP_MM) x = bp[b];
    d[n++] = x;
  }
  const size_t n_base = n;
  for (size_t b = 0; b < nbp; b++) {
    const double x = bp[b];
    if (!(x >= dmin && x <= dmax)) continue;
    if (!has_point(d, n_base, x, x)) d[n++] = x;
    /* the side x does not belong to gets x -+ offset, unless a grid point is that close */
    const int left_closed = rp_shape_piece(cfg->shape, x) == b;
    const double y = left_closed ? x + BP_OFFSET_MM : x - BP_OFFSET_MM;
    const double lo = fmin(x, y), hi = fmax(x, y);
    if (y >= dmin && y <= dmax && !has_point(d, n_base, left_closed ? nextafter(lo, hi) : lo,
                                             left_closed ? hi : nextafter(hi, lo)))
      d[n++] = y;
  }
  qsort(d, n, sizeof *d, cmp_double);
  *d_out = d;
  *n_out = n;
  return RP_OK;
}

/* The thread that called (thread 0 of the team). */
static int is_calling_thread(void) {
#ifdef _OPENMP
  return omp_get_thread_num() == 0;
#else
  return 1;
#endif
}

rp_status rp_table_build(const rp_drop_config *cfg, double dmin_mm, double dmax_mm,
                         double dstep_mm, rp_table **out, rp_error *err) {
  return rp_table_build_progress(cfg, dmin_mm, dmax_mm, dstep_mm, NULL, NULL, out, err);
}

rp_status rp_table_build_progress(const rp_drop_config *cfg, double dmin_mm, double dmax_mm,
                                  double dstep_mm, rp_progress_fn progress, void *progress_ctx,
                                  rp_table **out, rp_error *err) {
  if (out == NULL) return rp_error_set(err, RP_EINVAL, "table build: NULL output");
  *out = NULL;
  RP_TRY(rp_drop_config_check(cfg, err));
  size_t n_grid = 0, n = 0;
  RP_TRY(grid_size(dmin_mm, dmax_mm, dstep_mm, &n_grid, err));
  double *grid = NULL;
  RP_TRY(grid_diameters(cfg, dmin_mm, dmax_mm, dstep_mm, n_grid, &grid, &n, err));
  rp_table *t = rp_table_alloc(n);
  if (t == NULL) {
    free(grid);
    return rp_error_set(err, RP_ENOMEM, "out of memory for a %zu-diameter table", n);
  }
  t->cfg = *cfg;
  t->fall_model = RP_FALL_DEFAULT;
  t->wavelength_mm = rp_wavelength_mm(cfg->freq_ghz);

  rp_status status = RP_OK;
  size_t first_bad = n, done = 0;
  rp_error bad = {0};
#pragma omp parallel
  {
    rp_drop_ws *ws = rp_drop_ws_alloc(cfg);
    rp_error local = {0};
#pragma omp for schedule(dynamic, 2)
    for (size_t i = 0; i < n; i++) {
      rp_status s = RP_OK;
      rp_drop_result r;
      const double d = grid[i];
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
      size_t now;
#pragma omp atomic capture
      now = ++done;
      /* only the calling thread reports, so the callback needs no lock */
      if (progress != NULL && is_calling_thread()) progress(progress_ctx, (double)now / (double)n);
    }
    rp_drop_ws_free(ws);
  }
  free(grid);
  if (status != RP_OK) {
    if (err != NULL) *err = bad;
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

/* ---- names ----------------------------------------------------------------------- */

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


rp_status rp_table_source_get(const rp_table_source *src, const rp_drop_config *cfg,
                              rp_table **out, rp_table_origin *origin, rp_error *err) {
  if (out == NULL || cfg == NULL)
    return rp_error_set(err, RP_EINVAL, "table source: NULL configuration or output");
  *out = NULL;
  if (src != NULL && src->fn != NULL) return src->fn(src->ctx, cfg, out, origin, err);
  RP_TRY(rp_table_build(cfg, RP_TABLE_DMIN_DEFAULT_MM, RP_TABLE_DMAX_DEFAULT_MM,
                        RP_TABLE_DSTEP_DEFAULT_MM, out, err));
  if (origin != NULL) *origin = RP_TABLE_COMPUTED;
  return RP_OK;
}
