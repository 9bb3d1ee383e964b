/* shape.c — equilibrium axis ratio r = b/a of raindrops against the equal-volume
 * diameter D (mm). Published fits, all with D in mm (coefficients checked against
 * published compilations unless marked "from memory"):
 *
 *   sphere               r = 1
 *   pruppacher-beard-1970 (Pruppacher & Beard 1970, wind tunnel, fitted over 1-9 mm),
 *                        as a published-range fit:
 *                        r = 1.03 - 0.062 D for D >= 1 mm; r = 1 below 1 mm (drops
 *                        treated as spheres there, leaving a step of 0.032 at 1 mm)
 *   pruppacher-beard-1970-linear: the same line continued down to where it reaches 1,
 *                        r = min(1, 1.03 - 0.062 D) (kink at D = 0.03/0.062 mm)
 *   beard-chuang-1987 (Beard & Chuang 1987, equilibrium shape, polynomial fit 1-7 mm):
 *                        r = 1.0048 + 5.7e-4 D - 2.628e-2 D^2 + 3.682e-3 D^3 - 1.677e-4 D^4
 *   andsager-1999 (Andsager, Beard & Laird 1999, laboratory oscillating drops;
 *                        coefficients from memory, not checked):
 *                        r = 1.012 - 0.01445 D - 0.01028 D^2   for 1.1 <= D <= 4.4 mm,
 *                        Beard & Chuang (1987) outside that range
 *   brandes-2002 (Brandes, Zhang & Vivekanandan 2002):
 *                        r = 0.9951 + 0.02510 D - 0.03644 D^2 + 0.005303 D^3 - 0.0002492 D^4
 *   thurai-2007 (Thurai, Huang, Bringi, Randeu & Schönhuber 2007, 2D-video-disdrometer):
 *                        r = 1.065 - 6.25e-2 D - 3.99e-3 D^2 + 7.66e-4 D^3 - 4.095e-5 D^4
 *                        for D >= 1.5 mm;
 *                        r = 1.173 - 0.5165 D + 0.4698 D^2 - 0.1317 D^3 - 8.5e-3 D^4
 *                        for 0.7 < D < 1.5 mm (laboratory data of Beard & Kubesh 1991,
 *                        as used by Thurai et al.); r = 1 for D <= 0.7 mm.
 *
 * Every result is clamped to at most 1 (Beard & Chuang gives 1.0048 as D -> 0).
 * Polynomials are evaluated in Horner form. Breakpoints (jumps between branches, kinks
 * where the clamp begins) are listed per model; a clamp kink is the root of
 * raw(D) = 1, found by bisection to full precision on each call (no cached state). */
#include "rainprint/shape.h"

#include <math.h>
#include <stddef.h>
#include <stdio.h>
#include <string.h>

static const char *const shape_names[RP_SHAPE_COUNT] = {
    "sphere",       "pruppacher-beard-1970", "beard-chuang-1987",          "andsager-1999",
    "brandes-2002", "thurai-2007",           "pruppacher-beard-1970-linear"};

/* Names used before the year was added; accepted so that older files and scripts load. */
static const struct {
  const char *name;
  rp_shape_model m;
} shape_aliases[] = {{"pruppacher-beard", RP_SHAPE_PRUPPACHER_BEARD},
                     {"beard-chuang", RP_SHAPE_BEARD_CHUANG},
                     {"andsager", RP_SHAPE_ANDSAGER},
                     {"brandes", RP_SHAPE_BRANDES},
                     {"thurai", RP_SHAPE_THURAI}};
#define N_ALIASES (sizeof shape_aliases / sizeof shape_aliases[0])

/* Journal volumes and pages from memory. */
static const char *const shape_refs[RP_SHAPE_COUNT] = {
    "sphere (axis ratio 1)",
    "Pruppacher, H. R. and Beard, K. V. (1970), Q. J. R. Meteorol. Soc. 96, 247-256",
    "Beard, K. V. and Chuang, C. (1987), J. Atmos. Sci. 44, 1509-1524",
    "Andsager, K., Beard, K. V. and Laird, N. F. (1999), J. Atmos. Sci. 56, 2673-2683",
    "Brandes, E. A., Zhang, G. and Vivekanandan, J. (2002), J. Appl. Meteor. 41, 674-685",
    ("Thurai, M., Huang, G. J., Bringi, V. N., Randeu, W. L. and Schoenhuber, M. (2007), "
     "J. Atmos. Oceanic Technol. 24, 1019-1032"),
    ("Pruppacher, H. R. and Beard, K. V. (1970), Q. J. R. Meteorol. Soc. 96, 247-256 "
     "(linear fit continued to r = 1)")};

const char *rp_shape_name(rp_shape_model m) {
  return ((int)m >= 0 && m < RP_SHAPE_COUNT) ? shape_names[m] : "unknown";
}

const char *const *rp_shape_names(size_t *n) {
  if (n != NULL) *n = RP_SHAPE_COUNT;
  return shape_names;
}

const char *rp_shape_reference(rp_shape_model m) {
  return ((int)m >= 0 && m < RP_SHAPE_COUNT) ? shape_refs[m] : "unknown";
}

static int lower(int c) { return (c >= 'A' && c <= 'Z') ? c - 'A' + 'a' : c; }

/* a equals b ignoring ASCII case (n = 0: whole strings; else the first n chars of b) */
static int same_letters(const char *a, const char *b, size_t n) {
  size_t i = 0;
  for (; a[i] != '\0' && b[i] != '\0' && (n == 0 || i < n); i++)
    if (lower((unsigned char)a[i]) != lower((unsigned char)b[i])) return 0;
  return n == 0 ? (a[i] == '\0' && b[i] == '\0') : i == n;
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
  for (size_t i = 0; i < N_ALIASES; i++) {
    if (strcmp(name, shape_aliases[i].name) == 0) {
      *m = shape_aliases[i].m;
      return RP_OK;
    }
  }
  /* suggestion: a name equal ignoring case (canonical or alias), else a canonical name
   * that the given one begins (at least 3 letters) */
  const char *hint = NULL;
  for (int i = 0; i < RP_SHAPE_COUNT && hint == NULL; i++)
    if (same_letters(name, shape_names[i], 0)) hint = shape_names[i];
  for (size_t i = 0; i < N_ALIASES && hint == NULL; i++)
    if (same_letters(name, shape_aliases[i].name, 0)) hint = shape_names[shape_aliases[i].m];
  const size_t len = strlen(name);
  for (int i = 0; i < RP_SHAPE_COUNT && hint == NULL && len >= 3; i++)
    if (len < strlen(shape_names[i]) && same_letters(shape_names[i], name, len))
      hint = shape_names[i];
  char msg[160];
  if (hint != NULL)
    snprintf(msg, sizeof msg, "; did you mean \"%s\"?", hint);
  else
    msg[0] = '\0';
  return rp_error_set(err, RP_EINVAL,
                      "unknown shape model \"%s\" (valid: sphere, pruppacher-beard-1970, "
                      "pruppacher-beard-1970-linear, beard-chuang-1987, andsager-1999, "
                      "brandes-2002, thurai-2007)%s",
                      name, msg);
}

/* c[0] + c[1] d + ... + c[4] d^4 */
static double poly4(const double c[5], double d) {
  return c[0] + d * (c[1] + d * (c[2] + d * (c[3] + d * c[4])));
}

/* (Andsager coefficients from memory; the others checked against published
 * compilations) */
static const double beard_chuang_c[5] = {1.0048, 5.7e-4, -2.628e-2, 3.682e-3, -1.677e-4};
static const double brandes_c[5] = {0.9951, 0.02510, -0.03644, 0.005303, -0.0002492};
static const double thurai_large_c[5] = {1.065, -6.25e-2, -3.99e-3, 7.66e-4, -4.095e-5};
static const double thurai_small_c[5] = {1.173, -0.5165, 0.4698, -0.1317, -8.5e-3};
static const double andsager_c[3] = {1.012, -0.01445, -0.01028};

/* Branch limits (mm). */
#define PB_D_MIN 1.0
#define ANDSAGER_D_LO 1.1
#define ANDSAGER_D_HI 4.4
#define THURAI_D_SPHERE 0.7
#define THURAI_D_LARGE 1.5

static double axis_ratio_raw(rp_shape_model m, double d) {
  switch (m) {
    case RP_SHAPE_SPHERE:
      return 1.0;
    case RP_SHAPE_PRUPPACHER_BEARD:
      return d < PB_D_MIN ? 1.0 : 1.03 - 0.062 * d;
    case RP_SHAPE_PRUPPACHER_BEARD_LINEAR:
      return 1.03 - 0.062 * d;
    case RP_SHAPE_BEARD_CHUANG:
      return poly4(beard_chuang_c, d);
    case RP_SHAPE_ANDSAGER:
      if (d >= ANDSAGER_D_LO && d <= ANDSAGER_D_HI)
        return andsager_c[0] + d * (andsager_c[1] + d * andsager_c[2]);
      return poly4(beard_chuang_c, d);
    case RP_SHAPE_BRANDES:
      return poly4(brandes_c, d);
    case RP_SHAPE_THURAI:
      if (d <= THURAI_D_SPHERE) return 1.0;
      if (d < THURAI_D_LARGE) return poly4(thurai_small_c, d);
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

/* ---- breakpoints ---------------------------------------------------------------- */

/* Largest D in [lo, hi] with raw(D) >= 1, for raw decreasing through 1 in the bracket
 * (raw(lo) > 1 > raw(hi)): bisection until the bracket stops shrinking. */
static double clamp_root(rp_shape_model m, double lo, double hi) {
  for (int it = 0; it < 200; it++) {
    const double mid = 0.5 * (lo + hi);
    if (!(mid > lo && mid < hi)) break;
    if (axis_ratio_raw(m, mid) >= 1.0)
      lo = mid;
    else
      hi = mid;
  }
  return lo;
}

/* A breakpoint and whether D equal to it belongs to the piece below (left_closed). */
typedef struct {
  double d_mm;
  int left_closed;
} breakpoint;

static size_t model_breakpoints(rp_shape_model m, breakpoint bp[RP_SHAPE_BREAKPOINTS_MAX]) {
  switch (m) {
    case RP_SHAPE_PRUPPACHER_BEARD:
      bp[0] = (breakpoint){PB_D_MIN, 0}; /* D = 1 mm uses the linear fit */
      return 1;
    case RP_SHAPE_PRUPPACHER_BEARD_LINEAR:
      /* the line reaches 1 at 0.03/0.062; the clamp (left) side holds the root */
      bp[0] = (breakpoint){clamp_root(m, 0.01, 1.0), 1};
      return 1;
    case RP_SHAPE_BEARD_CHUANG:
      bp[0] = (breakpoint){clamp_root(m, 0.01, 1.0), 1};
      return 1;
    case RP_SHAPE_ANDSAGER:
      bp[0] = (breakpoint){clamp_root(m, 0.01, 1.0), 1};
      bp[1] = (breakpoint){ANDSAGER_D_LO, 0}; /* [1.1, 4.4] uses the Andsager fit */
      bp[2] = (breakpoint){ANDSAGER_D_HI, 1};
      return 3;
    case RP_SHAPE_THURAI:
      bp[0] = (breakpoint){THURAI_D_SPHERE, 1}; /* D <= 0.7 mm: sphere */
      bp[1] = (breakpoint){THURAI_D_LARGE, 0};  /* D >= 1.5 mm: large-drop fit */
      return 2;
    case RP_SHAPE_SPHERE:
    case RP_SHAPE_BRANDES: /* stays below 1 everywhere: no clamp, no kink */
    case RP_SHAPE_COUNT:
    default:
      break;
  }
  return 0;
}

size_t rp_shape_breakpoints(rp_shape_model m, double *d_mm, size_t max) {
  breakpoint bp[RP_SHAPE_BREAKPOINTS_MAX] = {{0, 0}};
  const size_t n = ((int)m >= 0 && m < RP_SHAPE_COUNT) ? model_breakpoints(m, bp) : 0;
  for (size_t i = 0; i < n && i < max; i++) d_mm[i] = bp[i].d_mm;
  return n;
}

size_t rp_shape_piece(rp_shape_model m, double d_mm) {
  breakpoint bp[RP_SHAPE_BREAKPOINTS_MAX] = {{0, 0}};
  const size_t n = ((int)m >= 0 && m < RP_SHAPE_COUNT) ? model_breakpoints(m, bp) : 0;
  size_t k = 0;
  for (size_t i = 0; i < n; i++)
    if (bp[i].left_closed ? d_mm > bp[i].d_mm : d_mm >= bp[i].d_mm) k = i + 1;
  return k;
}
