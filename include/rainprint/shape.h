/* shape.h — equilibrium axis ratio of raindrops: published fits of b/a against the
 * equal-volume diameter D.
 *
 * Axis ratio r = b/a with b along the symmetry axis (vertical at zero canting), so
 * r < 1 for an oblate drop. The formulas and their references are in the method notes
 * (docs/, drop-shape section); the coefficients were written from memory and are marked
 * so in the source until checked against the papers. */
#ifndef RAINPRINT_SHAPE_H
#define RAINPRINT_SHAPE_H

#include "rainprint/status.h"

typedef enum {
  RP_SHAPE_SPHERE,
  RP_SHAPE_PRUPPACHER_BEARD,
  RP_SHAPE_BEARD_CHUANG,
  RP_SHAPE_ANDSAGER,
  RP_SHAPE_BRANDES,
  RP_SHAPE_THURAI,
  RP_SHAPE_COUNT
} rp_shape_model;

/* Default: Thurai et al. (2007), fitted to drops measured falling in calm air (see the
 * method notes for the reasoning). */
#define RP_SHAPE_DEFAULT RP_SHAPE_THURAI

/* Largest equal-volume diameter accepted (mm); diameters must lie in (0, RP_SHAPE_D_MAX_MM]. */
#define RP_SHAPE_D_MAX_MM 10.0

/* CLI name of a model: "sphere", "pruppacher-beard", "beard-chuang", "andsager",
 * "brandes", "thurai". Static string (do not free); "unknown" for an invalid m. */
const char *rp_shape_name(rp_shape_model m);

/* Model from its CLI name (exact, case-sensitive match).
 * Returns RP_OK and sets *m; RP_EINVAL for NULL arguments or an unknown name, with a
 * message that lists the valid names. *m is unchanged on error. */
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

/* Citation string of the model (static, do not free); "unknown" for an invalid m. */
const char *rp_shape_reference(rp_shape_model m);

#endif
