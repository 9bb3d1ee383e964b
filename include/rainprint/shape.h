/* shape.h — equilibrium axis ratio of raindrops: published fits of b/a against the
 * equal-volume diameter D.
 *
 * Axis ratio r = b/a with b along the symmetry axis (vertical at zero canting), so
 * r < 1 for an oblate drop. The formulas and their references are in the method notes
 * (docs/method.md §5, "Axis-ratio models"). Several models are piecewise: their
 * breakpoints (jumps and kinks of r(D)) are listed by rp_shape_breakpoints so that
 * interpolation and quadrature over D can treat each smooth piece separately. */
#ifndef RAINPRINT_SHAPE_H
#define RAINPRINT_SHAPE_H

#include <stddef.h>

#include "rainprint/status.h"

/* Enum values are stable (files and configs store them); new models go before
 * RP_SHAPE_COUNT. */
typedef enum {
  RP_SHAPE_SPHERE,
  RP_SHAPE_PRUPPACHER_BEARD,        /* stepped: 1 below 1 mm, linear fit from 1 mm */
  RP_SHAPE_BEARD_CHUANG,
  RP_SHAPE_ANDSAGER,
  RP_SHAPE_BRANDES,
  RP_SHAPE_THURAI,
  RP_SHAPE_PRUPPACHER_BEARD_LINEAR, /* continuous: min(1, 1.03 - 0.062 D) */
  RP_SHAPE_COUNT
} rp_shape_model;

/* Default: Thurai et al. (2007), fitted to drops measured falling in calm air (see the
 * method notes for the reasoning). */
#define RP_SHAPE_DEFAULT RP_SHAPE_THURAI

/* Largest equal-volume diameter accepted (mm); diameters must lie in (0, RP_SHAPE_D_MAX_MM]. */
#define RP_SHAPE_D_MAX_MM 10.0

/* Most breakpoints any model has (see rp_shape_breakpoints). */
#define RP_SHAPE_BREAKPOINTS_MAX 4

/* Canonical name of a model, carrying the year of its publication: "sphere",
 * "pruppacher-beard-1970", "beard-chuang-1987", "andsager-1999", "brandes-2002",
 * "thurai-2007", "pruppacher-beard-1970-linear". Static string (do not free);
 * "unknown" for an invalid m. */
const char *rp_shape_name(rp_shape_model m);

/* The canonical names in enum order (RP_SHAPE_COUNT of them; static, do not free), for
 * "valid values are ..." messages. *n (if not NULL) receives the count. */
const char *const *rp_shape_names(size_t *n);

/* Model from its name: a canonical name or one of the older names kept as aliases
 * ("pruppacher-beard", "beard-chuang", "andsager", "brandes", "thurai"), exact and
 * case-sensitive (files written earlier carry the older names).
 * Returns RP_OK and sets *m; RP_EINVAL for NULL arguments or an unknown name, with a
 * message that lists the canonical names and, when one is close (same letters ignoring
 * case, or a name it begins), suggests it ("did you mean ..."). *m is unchanged on
 * error. */
rp_status rp_shape_from_name(const char *name, rp_shape_model *m, rp_error *err);

/* Axis ratio b/a (dimensionless, <= 1) of a drop of equal-volume diameter d_mm.
 *   d_mm in (0, 10] mm.
 * Formulas that exceed 1 for small drops are clamped to 1 (sphere). Beyond the
 * published range of each fit (about 7-8 mm) the polynomial is extrapolated; over
 * (0, 10] mm every model stays in [0.38, 1] (lower values at 10 mm: 0.3875 Beard-Chuang
 * and Andsager, 0.3975 Thurai, 0.41 Pruppacher-Beard, 0.4131 Brandes).
 * Returns RP_OK; RP_EINVAL for NaN/Inf d_mm, an invalid model or a NULL axis_ratio;
 * RP_EDOM for a finite d_mm outside (0, 10]. *axis_ratio is unchanged on error. */
rp_status rp_shape_axis_ratio(rp_shape_model m, double d_mm, double *axis_ratio,
                              rp_error *err);

/* Breakpoints of model m in (0, 10] mm, ascending: the diameters where r(D) jumps
 * (branches of a piecewise fit join) or has a kink (a clamp at r = 1 begins). Between
 * two breakpoints r(D) is a polynomial (smooth). Writes the first min(count, max) of
 * them to d_mm (which may be NULL when max is 0) and returns the count (0 for spheres,
 * Brandes and an invalid m; never more than RP_SHAPE_BREAKPOINTS_MAX). */
size_t rp_shape_breakpoints(rp_shape_model m, double *d_mm, size_t max);

/* Index of the smooth piece of model m that diameter d_mm belongs to by the model's
 * own rule: 0 below the first breakpoint, k between breakpoints k-1 and k; a diameter
 * equal to a breakpoint belongs to the side whose formula the model applies there
 * (e.g. Thurai: D = 0.7 mm is a sphere, piece 0; D = 1.5 mm uses the large-drop fit,
 * piece 2). 0 for an invalid m or a NaN d_mm. */
size_t rp_shape_piece(rp_shape_model m, double d_mm);

/* Citation string of the model (static, do not free); "unknown" for an invalid m. */
const char *rp_shape_reference(rp_shape_model m);

#endif
