/* shape.c — equilibrium axis ratio r = b/a of raindrops against the equal-volume
 * diameter D (mm). Published fits, all with D in mm
 * (coefficients from memory; check against the paper):
 *
 *   sphere               r = 1
 *   Pruppacher & Beard (1970), wind-tunnel fit:
 *                        r = 1.03 - 0.062 D          for D >= 1 mm (published range
 *                        1-9 mm); r = 1 below 1 mm (drops treated as spheres there,
 *                        leaving a step of 0.032 at D = 1 mm)
 *   Beard & Chuang (1987) equilibrium shape, polynomial fit:
 *                        r = 1.0048 + 5.7e-4 D - 2.628e-2 D^2 + 3.682e-3 D^3 - 1.677e-4 D^4
 *   Andsager, Beard & Laird (1999), laboratory oscillating drops:
 *                        r = 1.012 - 0.01445 D - 0.01028 D^2   for 1.1 <= D <= 4.4 mm,
 *                        Beard & Chuang (1987) outside that range
 *   Brandes, Zhang & Vivekanandan (2002):
 *                        r = 0.9951 + 0.02510 D - 0.03644 D^2 + 0.005303 D^3 - 0.0002492 D^4
 *   Thurai, Huang, Bringi, Randeu & Schönhuber (2007), 2D-video-disdrometer drops:
 *                        r = 1.065 - 6.25e-2 D - 3.99e-3 D^2 + 7.66e-4 D^3 - 4.095e-5 D^4
 *                        for D >= 1.5 mm;
 *                        r = 1.173 - 0.5165 D + 0.4698 D^2 - 0.1317 D^3 - 8.5e-3 D^4
 *                        for 0.7 < D < 1.5 mm (Beard & Kubesh 1991, as used by Thurai
 *                        et al.); r = 1 for D <= 0.7 mm.
 *
 * Every result is clamped to at most 1 (Beard & Chuang gives 1.0048 as D -> 0).
 * Polynomials are evaluated in Horner form. */
#include "rainprint/shape.h"

#include <math.h>
#include <stddef.h>
#include <string.h>

static const char *const shape_names[RP_SHAPE_COUNT] = {
    "sphere", "pruppacher-beard", "beard-chuang", "andsager", "brandes", "thurai"};

/* Volume and page numbers from memory; check against the papers. */
static const char *const shape_refs[RP_SHAPE_COUNT] = {
    "sphere (axis ratio 1)",
    "Pruppacher, H. R. and Beard, K. V. (1970), Q. J. R. Meteorol. Soc. 96, 247-256",
    "Beard, K. V. and Chuang, C. (1987), J. Atmos. Sci. 44, 1509-1524",
    "Andsager, K., Beard, K. V. and Laird, N. F. (1999), J. Atmos. Sci. 56, 2673-2683",
    "Brandes, E. A., Zhang, G. and Vivekanandan, J. (2002), J. Appl. Meteor. 41, 674-685",
    ("Thurai, M., Huang, G. J., Bringi, V. N., Randeu, W. L. and Schoenhuber, M. (2007), "
     "J. Atmos. Oceanic Technol. 24, 1019-1032")};

const char *rp_shape_name(rp_shape_model m) {
  return ((int)m >= 0 && m < RP_SHAPE_COUNT) ? shape_names[m] : "unknown";
}

const char *rp_shape_reference(rp_shape_model m) {
  return ((int)m >= 0 && m < RP_SHAPE_COUNT) ? shape_refs[m] : "unknown";
}

rp_status rp_shape_from_name(const char *name, rp_shape_model *m, rp_error *err) {
  if (name == NULL || m == NULL)
    return rp_error_set(err, RP_EINVAL, "shape model name or output pointer is NULL");
  for (int i = 0; i < RP_SHAPE_COUNT; i++) {
    if (strcmp(name, shape_names[i]) == 0) {
      *m = (rp_shape_model)i;
      return RP_OK;
    }
  }
  return rp_error_set(err, RP_EINVAL,
                      "unknown shape model \"%s\" (valid: sphere, pruppacher-beard, "
                      "beard-chuang, andsager, brandes, thurai)",
                      name);
}

/* c[0] + c[1] d + ... + c[4] d^4 */
static double poly4(const double c[5], double d) {
  return c[0] + d * (c[1] + d * (c[2] + d * (c[3] + d * c[4])));
}

/* (coefficients from memory; check against the paper) */
static const double beard_chuang_c[5] = {1.0048, 5.7e-4, -2.628e-2, 3.682e-3, -1.677e-4};
static const double brandes_c[5] = {0.9951, 0.02510, -0.03644, 0.005303, -0.0002492};
static const double thurai_large_c[5] = {1.065, -6.25e-2, -3.99e-3, 7.66e-4, -4.095e-5};
static const double thurai_small_c[5] = {1.173, -0.5165, 0.4698, -0.1317, -8.5e-3};

static double axis_ratio_raw(rp_shape_model m, double d) {
  switch (m) {
    case RP_SHAPE_SPHERE:
      return 1.0;
    case RP_SHAPE_PRUPPACHER_BEARD:
      return d < 1.0 ? 1.0 : 1.03 - 0.062 * d;
    case RP_SHAPE_BEARD_CHUANG:
      return poly4(beard_chuang_c, d);
    case RP_SHAPE_ANDSAGER:
      if (d >= 1.1 && d <= 4.4) return 1.012 - 0.01445 * d - 0.01028 * d * d;
      return poly4(beard_chuang_c, d);
    case RP_SHAPE_BRANDES:
      return poly4(brandes_c, d);
    case RP_SHAPE_THURAI:
      if (d <= 0.7) return 1.0;
      if (d < 1.5) return poly4(thurai_small_c, d);
      return poly4(thurai_large_c, d);
    case RP_SHAPE_COUNT:
    default:
      break;
  }
  return (double)NAN; /* unreachable: the caller validates m */
}

rp_status rp_shape_axis_ratio(rp_shape_model m, double d_mm, double *axis_ratio,
                              rp_error *err) {
  if (axis_ratio == NULL)
    return rp_error_set(err, RP_EINVAL, "axis-ratio output pointer is NULL");
  if ((int)m < 0 || m >= RP_SHAPE_COUNT)
    return rp_error_set(err, RP_EINVAL, "invalid shape model %d", (int)m);
  if (!isfinite(d_mm))
    return rp_error_set(err, RP_EINVAL, "diameter %g mm is not a finite number", d_mm);
  if (!(d_mm > 0.0 && d_mm <= RP_SHAPE_D_MAX_MM))
    return rp_error_set(err, RP_EDOM, "diameter %g mm outside (0, %g] mm", d_mm,
                        RP_SHAPE_D_MAX_MM);
  const double r = axis_ratio_raw(m, d_mm);
  *axis_ratio = r > 1.0 ? 1.0 : r;
  return RP_OK;
}
