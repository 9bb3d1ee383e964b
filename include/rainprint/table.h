/* table.h — scattering tables: per-diameter, canting-averaged scattering quantities
 * for one band/frequency, temperature, shape model, canting model and SD, elevation and
 * method; everything a DSD integral needs. Files (netCDF-4, CF conventions) are read and
 * written by table_file.h. */
#ifndef RAINPRINT_TABLE_H
#define RAINPRINT_TABLE_H

#include <stddef.h>

#include "rainprint/drop.h"
#include "rainprint/fallspeed.h"
#include "rainprint/status.h"

/* Default diameter grid: 0.1 to 8.0 mm in 0.1 mm steps (80 diameters). The step keeps
 * DSD integrals converged to 0.01 dB (tests/test_gate.c,
 * test_default_table_step_is_converged). */
#define RP_TABLE_DMIN_DEFAULT_MM 0.1
#define RP_TABLE_DMAX_DEFAULT_MM 8.0
#define RP_TABLE_DSTEP_DEFAULT_MM 0.1

/* One column of a table: its name in files (the member name without the unit suffix),
 * units (UDUNITS spelling), long name, and whether physics forbids negative values. */
typedef struct {
  const char *name, *units, *long_name;
  size_t offset; /* of the double * member in rp_table */
  int non_negative;
} rp_table_column;

typedef struct {
  rp_drop_config cfg;        /* what the table was computed for */
  rp_fall_model fall_model;  /* model of fall_speed_m_s */
  double wavelength_mm;
  double eps_re, eps_im;     /* permittivity of water used */
  char version[32];          /* program version that wrote it */
  size_t n;                  /* number of diameters */
  double *d_mm, *axis_ratio, *fall_speed_m_s;
  /* canting-averaged second moments of the backscatter amplitudes, mm^2 */
  double *back_hh2_mm2, *back_vv2_mm2, *back_hv2_mm2;
  double *back_hhvv_re_mm2, *back_hhvv_im_mm2; /* <f_hh(pi) f_vv(pi)*> */
  /* canting-averaged forward amplitudes, mm */
  double *fwd_hh_re_mm, *fwd_hh_im_mm, *fwd_vv_re_mm, *fwd_vv_im_mm;
} rp_table;

/* The columns of a table, in file order (diameter first): rp_table_n_columns() of them;
 * rp_table_column_get(i) is NULL past the end. rp_table_column_data(t, i) is the array
 * of column i (t->n values), NULL for a NULL t or i past the end. */
size_t rp_table_n_columns(void);
const rp_table_column *rp_table_column_get(size_t i);
double *rp_table_column_data(rp_table *t, size_t i);
const double *rp_table_column_data_const(const rp_table *t, size_t i);

/* Allocate a table of n diameters (arrays zeroed). NULL on out-of-memory. */
rp_table *rp_table_alloc(size_t n);
void rp_table_free(rp_table *t);   /* NULL ok */

/* Compute a table for cfg on the grid dmin_mm, dmin_mm + dstep_mm, ..., <= dmax_mm
 * (a point within 1e-9 steps of dmax_mm counts, and a last point that rounding puts
 * past dmax_mm is dmax_mm), plus a knot on each side of every breakpoint of the shape
 * model inside the grid (rp_shape_breakpoints: the gate plan splines each smooth piece
 * of r(D) on its own), in parallel over diameters (OpenMP). Caller frees *out.
 * Statuses: RP_EINVAL/RP_EDOM for a bad grid or config, RP_ENOCONV if the T-matrix
 * fails for any diameter (the message names it), RP_ENOMEM. */
rp_status rp_table_build(const rp_drop_config *cfg, double dmin_mm, double dmax_mm,
                         double dstep_mm, rp_table **out, rp_error *err);

/* As rp_table_build, calling progress(progress_ctx, fraction done) now and then from
 * the calling thread (progress may be NULL). For the progress bar of long builds. */
rp_status rp_table_build_progress(const rp_drop_config *cfg, double dmin_mm, double dmax_mm,
                                  double dstep_mm, rp_progress_fn progress, void *progress_ctx,
                                  rp_table **out, rp_error *err);

/* RP_OK when t was computed for cfg (frequency, temperature, shape or fixed axis ratio,
 * canting model/SD/approximation, elevation, method, within 1e-6); otherwise
 * RP_ETABLE naming the first field that differs. */
rp_status rp_table_check_match(const rp_table *t, const rp_drop_config *cfg, rp_error *err);

/* Where a table for a request came from. */
typedef enum { RP_TABLE_SHIPPED, RP_TABLE_CACHED, RP_TABLE_COMPUTED, RP_TABLE_GIVEN } rp_table_origin;
/* "shipped", "cache", "computed", "given" (a file the user named) */
const char *rp_table_origin_name(rp_table_origin o);

/* A source of tables for a configuration (the radar model asks one; the file store of
 * table_file.h is one, computing on the spot is the default). fn returns a table for
 * cfg on the default diameter grid (caller frees) and where it came from. fn may be
 * called from several threads at once for different configurations. */
typedef rp_status (*rp_table_source_fn)(void *ctx, const rp_drop_config *cfg, rp_table **out,
                                        rp_table_origin *origin, rp_error *err);
typedef struct {
  rp_table_source_fn fn; /* NULL: rp_table_build on the default grid ("computed") */
  void *ctx;
} rp_table_source;

/* A table for cfg from src (or computed when src is NULL or src->fn is NULL). */
rp_status rp_table_source_get(const rp_table_source *src, const rp_drop_config *cfg,
                              rp_table **out, rp_table_origin *origin, rp_error *err);

/* Cache file name (no folder) for cfg, e.g.
 * "table_5.6000GHz_10.00C_thurai_planar7.00_el0.00_tmatrix.nc". */
void rp_table_cache_name(const rp_drop_config *cfg, char *buf, size_t n);

#endif
