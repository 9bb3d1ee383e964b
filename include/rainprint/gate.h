/* gate.h — radar variables of one drop-size distribution: the integrals of the
 * canting-averaged scattering quantities of a table over N(D).
 *
 *   Z_h,v  = lambda^4 / (pi^5 |K_w|^2) * 4 pi <|f_hh,vv(pi)|^2>          mm^6 m^-3
 *   Z_DR   = 10 log10(Z_h / Z_v)                                           dB
 *   rho_hv = |<f_hh f_vv*>| / sqrt(<|f_hh|^2><|f_vv|^2>)                  -
 *   delta_hv = arg <f_hh(pi) f_vv(pi)*>                                    deg
 *   LDR    = 10 log10(<|f_hv|^2> / <|f_hh|^2>)                            dB
 *   K_DP   = (180/pi) 1e-3 lambda Re<f_hh(0) - f_vv(0)>                   deg km^-1 (one way)
 *   A_H,V  = 8.686e-3 lambda Im<f_hh,vv(0)>                               dB km^-1 (one way)
 *   A_DP   = A_H - A_V
 * with <x> = ∫ x(D) N(D) dD, lambda and f in mm, N in m^-3 mm^-1.
 * (Bringi & Chandrasekar 2001, ch. 3 and 7; sign conventions in docs/method.md.) */
#ifndef RAINPRINT_GATE_H
#define RAINPRINT_GATE_H

#include <stddef.h>

#include "rainprint/dsd.h"
#include "rainprint/status.h"
#include "rainprint/table.h"

/* |K_w|^2 used to turn reflectivity into Z (common practice: 0.93). */
#define RP_KW2_DEFAULT 0.93
/* LDR is reported as this floor (dB) when the cross-polar power is zero (spheres, no
 * canting): -inf is not a number a display or JSON can carry. */
#define RP_LDR_FLOOR_DB (-99.0)

typedef struct {
  double zh_mm6_m3, zv_mm6_m3;  /* linear reflectivity factors */
  double zh_dbz, zv_dbz, zdr_db, kdp_deg_km, rhohv, delta_hv_deg, ldr_db;
  double ah_db_km, av_db_km, adp_db_km;
} rp_gate_result;

/* The extensive (linear in N(D)) integrals of one gate. Sums of these over DSDs or
 * weighted averages (beam filling, mixtures) are again valid; convert to the radar
 * variables with rp_gate_result_from_linear only at the end.
 *   zh_mm6_m3, zv_mm6_m3   Z_h, Z_v as above
 *   zhv_mm6_m3             the same factor times <|f_hv(pi)|^2> (LDR = zhv / zh)
 *   zhhvv_re/im_mm6_m3     the same factor times <f_hh(pi) f_vv(pi)*>
 *   kdp_deg_km, ah_db_km, adp_db_km   as above (A_V = A_H - A_DP) */
typedef struct {
  double zh_mm6_m3, zv_mm6_m3, zhv_mm6_m3;
  double zhhvv_re_mm6_m3, zhhvv_im_mm6_m3;
  double kdp_deg_km, ah_db_km, adp_db_km;
} rp_gate_linear;

/* Gauss–Legendre nodes per quadrature interval (a table interval inside one smooth
 * piece, see rp_gate_plan) used by rp_gate_plan_alloc (the count is justified in
 * tests/test_gate.c against a rule with 4x as many nodes). */
#define RP_GATE_NODES_PER_INTERVAL 4
/* Largest node count per interval accepted by rp_gate_plan_alloc_nodes. */
#define RP_GATE_NODES_PER_INTERVAL_MAX 32

/* Domain of the fast path's (D0, mu) grid (normalised gamma, D0 form). */
#define RP_GATE_FAST_D0_MIN_MM 0.3
#define RP_GATE_FAST_D0_MAX_MM 3.5
#define RP_GATE_FAST_MU_MIN (-1.0)
#define RP_GATE_FAST_MU_MAX 12.0

/* Turn linear integrals into the radar variables (every caller holding linear sums
 * uses it; the fast path forms the same fields from interpolated logarithms with the
 * same conventions and floor):
 *   zh_dbz = 10 log10 Z_h, zv_dbz = 10 log10 Z_v, zdr_db = zh_dbz - zv_dbz,
 *   rho_hv = |zhhvv| / sqrt(Z_h Z_v) (<= 1: an excess up to 1e-12, the round-off of
 *   the ratio for consistent sums, is set to 1), delta_hv_deg = arg zhhvv in
 *   degrees (0 when zhhvv = 0), ldr_db = 10 log10(zhv / Z_h) but never below
 *   RP_LDR_FLOOR_DB (the floor is also used when zhv <= 0), av = ah - adp.
 * Statuses: RP_EINVAL for NULL pointers or a NaN/infinite field; RP_EDOM when Z_h or
 * Z_v is <= 0 ("no drops": nothing scatters back) or when |zhhvv|^2 > Z_h Z_v beyond
 * round-off (rho_hv > 1: inconsistent integrals). *out is written only on RP_OK. */
rp_status rp_gate_result_from_linear(const rp_gate_linear *lin, rp_gate_result *out,
                                     rp_error *err);

/* The linear integrals that reproduce radar variables r (the inverse of
 * rp_gate_result_from_linear): Z_hv from LDR (0 when LDR is at the floor), <f_hh f_vv*>
 * from rho_hv, delta_hv and sqrt(Z_h Z_v). */
void rp_gate_linear_from_result(const rp_gate_result *r, rp_gate_linear *out);

/* Sum a += w b of linear integrals (beam filling, mixtures, temperature interpolation). */
void rp_gate_linear_axpy(double w, const rp_gate_linear *b, rp_gate_linear *a);

/* A quadrature plan: Gauss–Legendre nodes and weights over [dmin_mm, dmax_mm] (the
 * plan's truncation), nodes_per_interval points in every quadrature interval, with the
 * table's quantities interpolated at the nodes once, the unit constants folded in, the
 * wavelength and |K_w|^2 = kw2. When the table's cfg names its shape model, the table
 * is split at the model's breakpoints (rp_shape_breakpoints: jumps and kinks of r(D))
 * into smooth pieces; each piece has its own cubic splines (not-a-knot; 1-3 knots:
 * constant, line, parabola) through q/D^6 for the backscatter moments and q/D^3 for
 * the forward amplitudes (the Rayleigh scaling, so the splines interpolate slowly
 * varying functions), quadrature intervals lie inside the pieces and every node is
 * evaluated with its own piece; a piece without a knot at its breakpoint is
 * extrapolated to it. At every node the backscatter moments are made consistent
 * (powers >= 0, |<f_hh f_vv*>| <= sqrt(<|f_hh|^2><|f_vv|^2>)), so rho_hv <= 1 holds
 * for every DSD (rp_gate_result_from_linear removes the ratio's round-off). Details in
 * docs/method.md §8.
 * Opaque; read-only after allocation, so one plan may be shared by threads. */
typedef struct rp_gate_plan rp_gate_plan;

/* Allocate a plan for table t (borrowed only during the call: the plan copies what it
 * needs), truncation [dmin_mm, dmax_mm] and |K_w|^2 kw2, with
 * RP_GATE_NODES_PER_INTERVAL nodes per table interval. Caller frees *out with
 * rp_gate_plan_free.
 * Statuses:
 *   RP_EINVAL  NULL t or out, NaN dmin/dmax/kw2, dmin >= dmax;
 *   RP_EDOM    [dmin_mm, dmax_mm] not within the table's diameter range (the message
 *              names both ranges), kw2 not in (0, 1];
 *   RP_ETABLE  fewer than 3 diameters, diameters not strictly increasing and > 0, a
 *              non-finite value, a negative second moment, or a bad wavelength;
 *   RP_ENOMEM. */
rp_status rp_gate_plan_alloc(const rp_table *t, double dmin_mm, double dmax_mm, double kw2,
                             rp_gate_plan **out, rp_error *err);

/* As rp_gate_plan_alloc with nodes_per_interval in [1, RP_GATE_NODES_PER_INTERVAL_MAX]
 * (RP_EINVAL otherwise). For checking the quadrature against finer rules. */
rp_status rp_gate_plan_alloc_nodes(const rp_table *t, double dmin_mm, double dmax_mm,
                                   double kw2, int nodes_per_interval,
                                   rp_gate_plan **out, rp_error *err);
void rp_gate_plan_free(rp_gate_plan *p); /* NULL ok */

/* Accessors: truncation (mm), wavelength (mm), |K_w|^2, number of quadrature nodes. */
double rp_gate_plan_dmin_mm(const rp_gate_plan *p);
double rp_gate_plan_dmax_mm(const rp_gate_plan *p);
double rp_gate_plan_wavelength_mm(const rp_gate_plan *p);
double rp_gate_plan_kw2(const rp_gate_plan *p);
size_t rp_gate_plan_nodes(const rp_gate_plan *p);
/* 1 when the plan interpolates K_DP, A_DP and Z_h - Z_v as q / (1 - r(D)) with the
 * table's shape model (the table's cfg names a shape, or a fixed axis ratio, that
 * reproduces its axis_ratio column within 1e-9, and some diameter is not spherical)
 * and splits the table at the model's breakpoints; 0 when it falls back to the plain
 * D^p scaling and one piece (e.g. a hand-made table). */
int rp_gate_plan_uses_shape(const rp_gate_plan *p);

/* Linear integrals of DSD d (see rp_gate_linear).
 * Analytic DSDs (exponential, Marshall–Palmer, gamma, normalised gamma): the sum over
 * the plan's nodes of w N(D) q(D), N(D) = exp(ln N0 + mu ln D - Lambda D); d's
 * truncation must equal the plan's (within 1e-9 mm). No allocation.
 * Spectra: sum over the bins included by d (centre in [dmin, dmax]) with a non-zero
 * concentration of N_i ∫ q(D) dD over [c - w/2, c + w/2], the integral of the spline
 * interpolant (Gauss–Legendre on each spline piece), i.e. N_i w_i times the
 * bin-averaged q. Such bins must not reach above the table's largest diameter; a part
 * below its smallest (down to 0 mm) is integrated with the Rayleigh scaling q ~ D^p.
 * Statuses: RP_EINVAL for NULL pointers, a malformed d (non-finite or non-positive N0
 * or Lambda, non-finite mu, unknown model, spectrum without bins) or a truncation that
 * differs from the plan's; RP_EDOM for a spectrum bin outside the table range or a
 * result that overflows. A DSD with no drops is not an error here: all fields 0. */
rp_status rp_gate_eval_linear(const rp_gate_plan *p, const rp_dsd *d, rp_gate_linear *out,
                              rp_error *err);

/* Radar variables of DSD d: rp_gate_eval_linear, then rp_gate_result_from_linear.
 * Statuses: those of both; RP_EDOM "no drops" for a DSD with zero concentration over
 * the plan (e.g. a spectrum of zeros) or whose integrals underflow to 0. */
rp_status rp_gate_eval(const rp_gate_plan *p, const rp_dsd *d, rp_gate_result *out,
                       rp_error *err);

/* Fast path for the normalised gamma DSD (D0 form, c = 3.67) with the plan's
 * truncation. The integrals for Nw = 1 are tabulated on a uniform grid over
 * (ln D0, mu) covering [RP_GATE_FAST_D0_MIN_MM, RP_GATE_FAST_D0_MAX_MM] x
 * [RP_GATE_FAST_MU_MIN, RP_GATE_FAST_MU_MAX], with their exact derivatives
 * d/d ln D0, d/d mu and d2/(d ln D0 d mu) (differentiating N(D) under the sum), and
 * interpolated by bicubic Hermite patches: ln Z_h, ln(Z_h/Z_v), ln(zhv/Z_h),
 * ln(1 - rho_hv) (so rho_hv = 1 - exp(.) <= 1; when 1 - rho_hv is not > 0 at every
 * node, e.g. spheres, rho_hv itself, clipped to 1), delta_hv and, for K_DP, A_H, A_DP,
 * the logarithm when positive at every grid node (else the value times D0^-5). Extensive results are then scaled by Nw. Agreement
 * with rp_gate_eval is checked over the whole grid in tests/test_gate.c. Opaque,
 * read-only after allocation (thread-safe to share); independent of p after return. */
typedef struct rp_gate_fast rp_gate_fast;

/* Build the fast-path grid from plan p (41 x 27 direct integrations with derivatives,
 * about 10 ms; 1.1 MB). Caller frees *out with rp_gate_fast_free.
 * Statuses: RP_EINVAL (NULL p or out), RP_EDOM (Z_h or Z_v not positive at a grid
 * node: the table scatters nothing back), RP_EGSL (a special function failed),
 * RP_ENOMEM. */
rp_status rp_gate_fast_alloc(const rp_gate_plan *p, rp_gate_fast **out, rp_error *err);
void rp_gate_fast_free(rp_gate_fast *f); /* NULL ok */

/* Radar variables of the normalised gamma DSD (Nw in m^-3 mm^-1, D0 in mm, mu) with
 * the plan's truncation, by interpolation. No allocation; about 100 ns.
 * Statuses: RP_EINVAL for NULL pointers, NaN/infinite arguments or Nw <= 0; RP_EDOM
 * for (D0, mu) outside the grid (the message names the grid) or an overflowing
 * result. */
rp_status rp_gate_fast_eval(const rp_gate_fast *f, double nw_m3_mm, double d0_mm, double mu,
                            rp_gate_result *out, rp_error *err);

#endif
