/* gate.c — radar variables of one drop-size distribution: quadrature of the
 * canting-averaged scattering quantities of a table over N(D), and a fast path for
 * the normalised gamma DSD.
 *
 * Method (formulas in include/rainprint/gate.h; Bringi & Chandrasekar 2001, ch. 3
 * (reflectivity factors, rho_hv, delta_hv, LDR) and ch. 7 (K_DP, A_H, A_DP); the unit
 * arithmetic is in docs/method.md §8):
 *  - Plan: the table is split at the breakpoints of its shape model (jumps and kinks of
 *    r(D); rp_shape_breakpoints) into smooth pieces. In each piece the quantities
 *    q_j(D_i) are divided by the Rayleigh power of D (D^6 for backscatter second
 *    moments, D^3 for forward amplitudes; and by 1 - r(D) for those that vanish for a
 *    sphere) and put through not-a-knot cubic splines of the piece's own knots (de Boor
 *    1978, ch. IV). Gauss–Legendre rules with m nodes per interval cover [dmin, dmax]
 *    inside the pieces; at each node D_k (evaluated with its own piece, the moments
 *    made to obey Cauchy–Schwarz) the plan stores w_k c_j q_j(D_k), with c_j the unit
 *    constant that turns <q_j> into the output field (Z factor 4 lambda^4 /
 *    (pi^4 |K_w|^2), K_DP factor (180/pi) 1e-3 lambda, attenuation factor
 *    (20/ln 10) 1e-3 lambda).
 *  - Analytic DSD: sum_k exp(ln N0 + mu ln D_k - Lambda D_k) (w_k c_j q_j(D_k)).
 *  - Spectrum: N_i times the integral of the spline interpolant over each bin
 *    (5-point Gauss–Legendre between knots and breakpoints: exact for D^6 times a cubic, a
 *    polynomial of degree 9; nearly so with the (1 - r) factor). Below the table's
 *    smallest diameter, q(D) = q(D_min) (D/D_min)^p, integrated in closed form.
 *  - Fast path: a uniform grid over (x = ln D0, mu) of the Nw = 1 integrals of the
 *    normalised gamma DSD (Bringi et al. 2003 form, c = 3.67) with their exact partial
 *    derivatives (N(D) differentiated under the sum), turned into smooth fields
 *    (logarithms, ratios, ln(1 - rho_hv)) by forward-mode second-order "jets", then
 *    bicubic Hermite patches, coefficients precomputed per cell.
 * Invariants: plans and fast grids are read-only after allocation (thread-safe to
 * share); evaluation never allocates (spectra use the stored spline coefficients);
 * nothing is interpolated across a shape breakpoint; rho_hv <= 1 in both paths (by
 * Cauchy–Schwarz at the nodes, the ratio's last-bit round-off removed; ln(1 - rho_hv)
 * interpolated, or rho_hv clipped, in the fast path). */
#include "rainprint/gate.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_integration.h>
#include <gsl/gsl_sf_gamma.h>
#include <gsl/gsl_sf_psi.h>

#include "rainprint/shape.h"

/* ---- quantities carried through the plan ---------------------------------------- */

/* Q_DIFF = <|f_hh|^2> - <|f_vv|^2> is carried instead of <|f_vv|^2> (Z_v = Z_h - Z_diff)
 * so that it can be scaled by (1 - r) like the other quantities that vanish for a
 * sphere (Q_KDP, Q_ADP). */
enum { Q_HH2, Q_DIFF, Q_HV2, Q_HHVV_RE, Q_HHVV_IM, Q_KDP, Q_AH, Q_ADP, NQ };
/* Rayleigh power of D that each quantity scales with (|f(pi)|^2 ~ D^6, f(0) ~ D^3). */
static const double q_power[NQ] = {6, 6, 6, 6, 6, 3, 3, 3};
/* Quantities that vanish for a sphere and, for a small spheroid, grow like 1 - r
 * (Rayleigh–Gans: f_a - f_b is proportional to L_b - L_a, which is ~ (4/5)(1 - r) for
 * small deformation; Bohren & Huffman 1983, §5.3). They are interpolated as
 * q / (D^p (1 - r(D))) and multiplied by 1 - r(D) of the table's shape model at the
 * nodes: a jump or kink of r(D) (shape fits joined piecewise, clamped at r = 1) then
 * sits in the factor, evaluated exactly, and not in the spline. */
static const int q_oblate[NQ] = {0, 1, 0, 0, 0, 1, 0, 1};
/* Below this 1 - r a knot is treated as spherical for the (1 - r) scaling. */
static const double OBLATE_MIN = 1e-3;

/* Slack for comparing diameters that went through decimal round-off (mm). */
static const double D_SLACK_MM = 1e-9;
/* Largest excess of rho_hv over 1 taken as round-off of |C| / sqrt(Z_h Z_v). */
static const double RHO_ROUNDOFF = 1e-12;
/* 10 / ln 10: natural log -> decibels of a power ratio. */
static const double DB_PER_NEPER = 4.3429448190325182765;

/* Quadrature intervals narrower than this (mm) between a piece's outermost knot and its
 * breakpoint are merged into the neighbouring interval (the knot sits at the breakpoint
 * up to round-off or the table builder's 1e-6 mm offset). */
static const double GAP_MERGE_MM = 1e-4;

/* A smooth piece of the table: the knots between two breakpoints of the shape model
 * (or the whole table when the model has none inside it). */
typedef struct {
  double lo_mm, hi_mm; /* extent: breakpoints, or the table's ends */
  size_t k0, nk;       /* knots: table indices k0 .. k0 + nk - 1 (nk >= 1) */
  int scaled;          /* the (1 - r) scaling of the q_oblate quantities is on */
} plan_piece;

struct rp_gate_plan {
  double dmin_mm, dmax_mm, wavelength_mm, kw2;
  size_t n_table;
  double *table_d_mm;        /* copy of the table's diameters (spline knots) */
  /* piecewise cubic of q_j / (D^p_j [1 - r(D)]): for knot i, the 4 coefficients of
   * the cubic in (D - D_i) used from D_i on (the last knot's slot is used only by a
   * piece of one knot) at coef[(i * NQ + j) * 4] */
  double *coef;
  size_t n_pieces;
  plan_piece *pieces;
  size_t n_bp;               /* breakpoints between pieces (n_pieces - 1) */
  double bp_mm[RP_SHAPE_BREAKPOINTS_MAX];
  int bp_left_closed[RP_SHAPE_BREAKPOINTS_MAX]; /* D = bp belongs to the piece below */
  int use_shape;             /* 1: the (1 - r) scaling is on (table's shape known) */
  rp_shape_model shape;      /* shape model of the table (use_shape) */
  double r_fixed;            /* > 0: fixed axis ratio of the table (use_shape) */
  double unit[NQ];           /* c_j: <q_j> -> output field */
  size_t n_nodes;
  double *d_mm, *ln_d;       /* quadrature nodes and their logarithms */
  double *wq;                /* n_nodes x NQ: w_k c_j q_j(D_k) */
};

/* ---- small shared helpers ---------------------------------------------------------- */

static double ldr_with_floor(double ldr_db) {
  return (ldr_db >= RP_LDR_FLOOR_DB) ? ldr_db : RP_LDR_FLOOR_DB;
}

static double rad_to_deg(double r) { return r * (180.0 / M_PI); }

rp_status rp_gate_result_from_linear(const rp_gate_linear *lin, rp_gate_result *out,
                                     rp_error *err) {
  if (lin == NULL || out == NULL)
    return rp_error_set(err, RP_EINVAL, "gate: NULL linear integrals or result");
  const double f[8] = {lin->zh_mm6_m3,       lin->zv_mm6_m3,       lin->zhv_mm6_m3,
                       lin->zhhvv_re_mm6_m3, lin->zhhvv_im_mm6_m3, lin->kdp_deg_km,
                       lin->ah_db_km,        lin->adp_db_km};
  static const char *const names[8] = {"Z_h",     "Z_v",  "Z_hv", "Re <f_hh f_vv*>",
                                       "Im <f_hh f_vv*>", "K_DP", "A_H",  "A_DP"};
  for (int i = 0; i < 8; i++)
    if (!isfinite(f[i]))
      return rp_error_set(err, RP_EINVAL, "gate: %s = %g is not finite", names[i], f[i]);
  if (lin->zh_mm6_m3 <= 0.0 || lin->zv_mm6_m3 <= 0.0)
    return rp_error_set(err, RP_EDOM,
                        "gate: no drops: Z_h = %g, Z_v = %g mm^6 m^-3 (nothing scatters "
                        "back)", lin->zh_mm6_m3, lin->zv_mm6_m3);
  rp_gate_result r;
  r.zh_mm6_m3 = lin->zh_mm6_m3;
  r.zv_mm6_m3 = lin->zv_mm6_m3;
  r.zh_dbz = 10.0 * log10(lin->zh_mm6_m3);
  r.zv_dbz = 10.0 * log10(lin->zv_mm6_m3);
  r.zdr_db = r.zh_dbz - r.zv_dbz;
  /* sqrt of each factor, not of the product: no overflow for huge Z */
  r.rhohv = hypot(lin->zhhvv_re_mm6_m3, lin->zhhvv_im_mm6_m3) /
            (sqrt(lin->zh_mm6_m3) * sqrt(lin->zv_mm6_m3));
  /* Sums of moments that obey Cauchy–Schwarz with positive weights (plans, beam
   * averages, temperature interpolation) obey it too: an excess up to RHO_ROUNDOFF is the
   * round-off of this ratio (measured 2.2e-16) and is removed, so rho_hv <= 1 always;
   * a larger one means inconsistent integrals and is refused. */
  if (r.rhohv > 1.0 + RHO_ROUNDOFF)
    return rp_error_set(err, RP_EDOM,
                        "gate: rho_hv = %.17g > 1: |<f_hh f_vv*>|^2 exceeds Z_h Z_v "
                        "(inconsistent linear integrals)", r.rhohv);
  if (r.rhohv > 1.0) r.rhohv = 1.0;
  r.delta_hv_deg = (lin->zhhvv_re_mm6_m3 == 0.0 && lin->zhhvv_im_mm6_m3 == 0.0)
                       ? 0.0
                       : rad_to_deg(atan2(lin->zhhvv_im_mm6_m3, lin->zhhvv_re_mm6_m3));
  r.ldr_db = lin->zhv_mm6_m3 > 0.0
                 ? ldr_with_floor(10.0 * log10(lin->zhv_mm6_m3 / lin->zh_mm6_m3))
                 : RP_LDR_FLOOR_DB;
  r.kdp_deg_km = lin->kdp_deg_km;
  r.ah_db_km = lin->ah_db_km;
  r.adp_db_km = lin->adp_db_km;
  r.av_db_km = lin->ah_db_km - lin->adp_db_km;
  *out = r;
  return RP_OK;
}

void rp_gate_linear_from_result(const rp_gate_result *r, rp_gate_linear *out) {
  out->zh_mm6_m3 = r->zh_mm6_m3;
  out->zv_mm6_m3 = r->zv_mm6_m3;
  out->zhv_mm6_m3 = r->ldr_db > RP_LDR_FLOOR_DB ? r->zh_mm6_m3 * pow(10.0, 0.1 * r->ldr_db) : 0.0;
  const double mag = r->rhohv * sqrt(r->zh_mm6_m3) * sqrt(r->zv_mm6_m3);
  const double ph = r->delta_hv_deg * (M_PI / 180.0);
  out->zhhvv_re_mm6_m3 = mag * cos(ph);
  out->zhhvv_im_mm6_m3 = mag * sin(ph);
  out->kdp_deg_km = r->kdp_deg_km;
  out->ah_db_km = r->ah_db_km;
  out->adp_db_km = r->adp_db_km;
}

void rp_gate_linear_axpy(double w, const rp_gate_linear *b, rp_gate_linear *a) {
  a->zh_mm6_m3 += w * b->zh_mm6_m3;
  a->zv_mm6_m3 += w * b->zv_mm6_m3;
  a->zhv_mm6_m3 += w * b->zhv_mm6_m3;
  a->zhhvv_re_mm6_m3 += w * b->zhhvv_re_mm6_m3;
  a->zhhvv_im_mm6_m3 += w * b->zhhvv_im_mm6_m3;
  a->kdp_deg_km += w * b->kdp_deg_km;
  a->ah_db_km += w * b->ah_db_km;
  a->adp_db_km += w * b->adp_db_km;
}

/* ---- plan --------------------------------------------------------------------------- */

static rp_status check_table(const rp_table *t, rp_error *err) {
  if (t->n < 3)
    return rp_error_set(err, RP_ETABLE, "gate: table has %zu diameters, need at least 3",
                        t->n);
  if (!t->d_mm || !t->back_hh2_mm2 || !t->back_vv2_mm2 || !t->back_hv2_mm2 ||
      !t->back_hhvv_re_mm2 || !t->back_hhvv_im_mm2 || !t->fwd_hh_re_mm || !t->fwd_hh_im_mm ||
      !t->fwd_vv_re_mm || !t->fwd_vv_im_mm)
    return rp_error_set(err, RP_ETABLE, "gate: table has a missing (NULL) variable");
  if (!isfinite(t->wavelength_mm) || t->wavelength_mm <= 0.0)
    return rp_error_set(err, RP_ETABLE, "gate: table wavelength %g mm is not finite and > 0",
                        t->wavelength_mm);
  for (size_t i = 0; i < t->n; i++) {
    const double d = t->d_mm[i];
    if (!isfinite(d) || d <= 0.0 || (i > 0 && !(d > t->d_mm[i - 1])))
      return rp_error_set(err, RP_ETABLE,
                          "gate: table diameter %zu = %g mm is not finite, > 0 and "
                          "strictly increasing", i, d);
    const double v[10] = {t->back_hh2_mm2[i],    t->back_vv2_mm2[i],    t->back_hv2_mm2[i],
                          t->back_hhvv_re_mm2[i], t->back_hhvv_im_mm2[i], t->fwd_hh_re_mm[i],
                          t->fwd_hh_im_mm[i],    t->fwd_vv_re_mm[i],    t->fwd_vv_im_mm[i], 0};
    for (int j = 0; j < 9; j++)
      if (!isfinite(v[j]))
        return rp_error_set(err, RP_ETABLE,
                            "gate: table value %d at D = %g mm is not finite (%g)", j, d, v[j]);
    if (v[0] < 0.0 || v[1] < 0.0 || v[2] < 0.0)
      return rp_error_set(err, RP_ETABLE,
                          "gate: negative backscatter second moment at D = %g mm "
                          "(%g, %g, %g mm^2)", d, v[0], v[1], v[2]);
  }
  return RP_OK;
}

/* Quantity j of the table at index i, before scaling. */
static double table_q(const rp_table *t, int j, size_t i) {
  switch (j) {
    case Q_HH2: return t->back_hh2_mm2[i];
    case Q_DIFF: return t->back_hh2_mm2[i] - t->back_vv2_mm2[i];
    case Q_HV2: return t->back_hv2_mm2[i];
    case Q_HHVV_RE: return t->back_hhvv_re_mm2[i];
    case Q_HHVV_IM: return t->back_hhvv_im_mm2[i];
    case Q_KDP: return t->fwd_hh_re_mm[i] - t->fwd_vv_re_mm[i];
    case Q_AH: return t->fwd_hh_im_mm[i];
    default: return t->fwd_hh_im_mm[i] - t->fwd_vv_im_mm[i];
  }
}

static double pow_rayleigh(double d_mm, int j) {
  const double d3 = d_mm * d_mm * d_mm;
  return q_power[j] == 6.0 ? d3 * d3 : d3;
}

/* Axis ratio r(D) of the table's shape (fixed ratio or shape model). */
static rp_status shape_r(rp_shape_model shape, double r_fixed, double d_mm, double *r,
                         rp_error *err) {
  if (r_fixed > 0.0) {
    *r = r_fixed;
    return RP_OK;
  }
  return rp_shape_axis_ratio(shape, d_mm, r, err);
}

/* ---- piecewise cubic splines ------------------------------------------------------- */

/* Interpolating cubic through (x_i, y_i), i < n, as per-interval coefficients
 * c[4 i .. 4 i + 3] of y_i + c1 t + c2 t^2 + c3 t^3, t = x - x_i (c[4 i] = y_i).
 * n >= 4: not-a-knot end conditions (third derivative continuous across x_1 and
 * x_{n-2}; de Boor 1978, A Practical Guide to Splines, ch. IV), solved for the knot
 * slopes s_i by Gaussian elimination of the tridiagonal system without pivoting (as
 * de Boor's CUBSPL); it reproduces cubics exactly and, unlike the natural spline,
 * imposes no f'' = 0 at a piece's end next to a breakpoint. n = 3: the parabola
 * through the points; n = 2: the line; n = 1: the constant. Workspace w holds 3 n
 * doubles. The slots of the last knot are left untouched except for n = 1. */
static void spline_fit(const double *x, const double *y, size_t n, double *c,
                       size_t stride, double *w) {
  if (n == 1) {
    c[0] = y[0];
    c[1] = c[2] = c[3] = 0.0;
    return;
  }
  double *sl = w, *diag = w + n, *rhs = w + 2 * n;
  if (n == 2) {
    sl[0] = sl[1] = (y[1] - y[0]) / (x[1] - x[0]);
  } else if (n == 3) {
    /* slopes of the parabola at the three knots */
    const double h0 = x[1] - x[0], h1 = x[2] - x[1];
    const double d0 = (y[1] - y[0]) / h0, d1 = (y[2] - y[1]) / h1;
    const double c2 = (d1 - d0) / (h0 + h1);
    sl[0] = d0 - c2 * h0;
    sl[1] = d0 + c2 * h0;
    sl[2] = d1 + c2 * h1;
  } else {
    /* rows: b_i s_{i-1} + diag_i s_i + a_i s_{i+1} = rhs_i; the sub- and super-
     * diagonals are formed on the fly from the steps h */
#define H(i) (x[(i) + 1] - x[(i)])
#define DEL(i) ((y[(i) + 1] - y[(i)]) / H(i))
    double sup_prev; /* eliminated super-diagonal of the previous row */
    {
      const double h0 = H(0), h1 = H(1);
      diag[0] = h1;
      sup_prev = h0 + h1;
      rhs[0] = ((h0 + 2.0 * (h0 + h1)) * h1 * DEL(0) + h0 * h0 * DEL(1)) / (h0 + h1);
    }
    double *sup = sl; /* super-diagonals kept in sl until back substitution */
    sup[0] = sup_prev;
    for (size_t i = 1; i + 1 < n; i++) {
      const double hm = H(i - 1), hi = H(i);
      const double sub = hi, d = 2.0 * (hm + hi), up = hm;
      const double r = 3.0 * (hi * DEL(i - 1) + hm * DEL(i));
      const double f = sub / diag[i - 1];
      diag[i] = d - f * sup[i - 1];
      rhs[i] = r - f * rhs[i - 1];
      sup[i] = up;
    }
    {
      const size_t m = n - 1;
      const double hl = H(m - 1), hl2 = H(m - 2);
      const double sub = hl + hl2, d = hl2;
      const double r = (hl * hl * DEL(m - 2) + (2.0 * (hl2 + hl) + hl) * hl2 * DEL(m - 1)) /
                       (hl2 + hl);
      const double f = sub / diag[m - 1];
      diag[m] = d - f * sup[m - 1];
      rhs[m] = r - f * rhs[m - 1];
    }
    /* back substitution: s_m, then s_i = (rhs_i - sup_i s_{i+1}) / diag_i */
    double next = rhs[n - 1] / diag[n - 1];
    for (size_t i = n - 1; i-- > 0;) {
      const double si = (rhs[i] - sup[i] * next) / diag[i];
      sl[i + 1] = next;
      next = si;
    }
    sl[0] = next;
#undef H
#undef DEL
  }
  for (size_t i = 0; i + 1 < n; i++) {
    const double h = x[i + 1] - x[i], del = (y[i + 1] - y[i]) / h;
    double *ci = c + stride * i;
    ci[0] = y[i];
    ci[1] = sl[i];
    ci[2] = (3.0 * del - 2.0 * sl[i] - sl[i + 1]) / h;
    ci[3] = (sl[i] + sl[i + 1] - 2.0 * del) / (h * h);
  }
}

/* Piece of the plan holding D by the shape model's rule at its breakpoints. */
static size_t piece_of(const rp_gate_plan *p, double d_mm) {
  size_t k = 0;
  for (size_t i = 0; i < p->n_bp; i++)
    if (p->bp_left_closed[i] ? d_mm > p->bp_mm[i] : d_mm >= p->bp_mm[i]) k = i + 1;
  return k;
}

/* Value at D of quantity j's cubic in piece pc (extrapolated beyond its end knots). */
static double piece_eval(const rp_gate_plan *p, const plan_piece *pc, int j, double d_mm) {
  size_t i = pc->k0;
  if (pc->nk > 1) {
    size_t lo = pc->k0, hi = pc->k0 + pc->nk - 2; /* last interval's left knot */
    while (lo < hi) {
      const size_t mid = lo + (hi - lo + 1) / 2;
      if (p->table_d_mm[mid] <= d_mm)
        lo = mid;
      else
        hi = mid - 1;
    }
    i = lo;
  }
  const double *c = p->coef + (i * NQ + (size_t)j) * 4;
  const double t = d_mm - p->table_d_mm[i];
  return c[0] + t * (c[1] + t * (c[2] + t * c[3]));
}

/* The factor 1 - r(D) of the (1 - r) scaling. */
static rp_status oblate_factor(const rp_gate_plan *p, double d_mm, double *fac,
                               rp_error *err) {
  double r;
  RP_TRY(shape_r(p->shape, p->r_fixed, d_mm, &r, err));
  *fac = 1.0 - r;
  return RP_OK;
}

/* c_j q_j(D) from piece pc of the splines. The backscatter moments of one drop are then
 * made consistent: powers >= 0 and |<f_hh f_vv*>| <= sqrt(<|f_hh|^2> <|f_vv|^2>)
 * (Cauchy–Schwarz, which the exact moments obey and interpolated ones may not); sums of
 * such nodes with positive weights keep rho_hv <= 1. */
static rp_status piece_q(const rp_gate_plan *p, const plan_piece *pc, double d_mm,
                         double q[NQ], rp_error *err) {
  double fac = 1.0;
  if (pc->scaled) RP_TRY(oblate_factor(p, d_mm, &fac, err));
  for (int j = 0; j < NQ; j++)
    q[j] = p->unit[j] * piece_eval(p, pc, j, d_mm) * pow_rayleigh(d_mm, j) *
           (pc->scaled && q_oblate[j] ? fac : 1.0);
  if (!(q[Q_HH2] >= 0.0)) q[Q_HH2] = 0.0;
  if (!(q[Q_HV2] >= 0.0)) q[Q_HV2] = 0.0;
  double vv = q[Q_HH2] - q[Q_DIFF];
  if (!(vv >= 0.0)) {
    vv = 0.0;
    q[Q_DIFF] = q[Q_HH2];
  }
  /* the unit constant is the same for all backscatter moments: compare directly */
  const double c = hypot(q[Q_HHVV_RE], q[Q_HHVV_IM]);
  const double bound = sqrt(q[Q_HH2]) * sqrt(vv);
  if (c > bound) {
    const double s = c > 0.0 ? bound / c : 0.0;
    q[Q_HHVV_RE] *= s;
    q[Q_HHVV_IM] *= s;
  }
  return RP_OK;
}

/* c_j q_j(D) with the piece D belongs to. */
static rp_status spline_q(const rp_gate_plan *p, double d_mm, double q[NQ], rp_error *err) {
  return piece_q(p, &p->pieces[piece_of(p, d_mm)], d_mm, q, err);
}

/* Does the table say which shape it was computed for, and do its axis ratios match
 * that shape at every diameter (a hand-made table may carry a zeroed config)? */
static int table_shape_known(const rp_table *t) {
  if (t->axis_ratio == NULL) return 0;
  const rp_drop_config *c = &t->cfg;
  if (!(c->axis_ratio_fixed >= 0.0) || (int)c->shape < 0 || c->shape >= RP_SHAPE_COUNT)
    return 0;
  for (size_t i = 0; i < t->n; i++) {
    double r;
    if (shape_r(c->shape, c->axis_ratio_fixed, t->d_mm[i], &r, NULL) != RP_OK) return 0;
    if (!(fabs(r - t->axis_ratio[i]) <= 1e-9)) return 0;
  }
  return 1;
}

/* y[i] = q_j(d_i) / (d_i^p [1 - r_i]) at the knots i0 .. i0 + n - 1 (one piece); knots
 * with 1 - r < OBLATE_MIN take the value of the nearest knot of the piece that is not
 * spherical (the product with 1 - r there is ~0 whatever y is, and a smooth y keeps
 * the spline from ringing). Returns 0 when every knot of the piece is spherical (then
 * the plain scaling is used). */
static int fill_oblate(const rp_table *t, int j, size_t i0, size_t n, double *y) {
  size_t first = n;
  for (size_t k = 0; k < n; k++) {
    const size_t i = i0 + k;
    const double one_minus_r = 1.0 - t->axis_ratio[i];
    if (fabs(one_minus_r) >= OBLATE_MIN) {
      y[k] = table_q(t, j, i) / (pow_rayleigh(t->d_mm[i], j) * one_minus_r);
      if (first == n) first = k;
    } else {
      y[k] = (double)NAN;
    }
  }
  if (first == n) return 0;
  double last = y[first];
  for (size_t k = 0; k < n; k++) {
    if (isnan(y[k]))
      y[k] = last;
    else
      last = y[k];
  }
  return 1;
}

void rp_gate_plan_free(rp_gate_plan *p) {
  if (p == NULL) return;
  free(p->table_d_mm);
  free(p->coef);
  free(p->pieces);
  free(p->d_mm);
  free(p->ln_d);
  free(p->wq);
  free(p);
}

/* Split the table into the shape model's smooth pieces (fills n_bp, bp_mm,
 * bp_left_closed, n_pieces, pieces). One piece when the shape is unknown, has no
 * breakpoint inside the table, or some piece between the table's ends has no knot (a
 * table too coarse for its shape model: splined across, as a smooth model would be). */
static rp_status make_pieces(rp_gate_plan *p, const rp_table *t, rp_error *err) {
  double bp[RP_SHAPE_BREAKPOINTS_MAX];
  size_t nbp = 0;
  if (p->use_shape && !(p->r_fixed > 0.0)) {
    nbp = rp_shape_breakpoints(p->shape, bp, RP_SHAPE_BREAKPOINTS_MAX);
    if (nbp > RP_SHAPE_BREAKPOINTS_MAX) nbp = RP_SHAPE_BREAKPOINTS_MAX;
  }
  const double tmin = t->d_mm[0], tmax = t->d_mm[t->n - 1];
  p->n_bp = 0;
  for (size_t b = 0; b < nbp; b++) {
    const int lc = rp_shape_piece(p->shape, bp[b]) == b;
    /* only breakpoints with table diameters on both sides split the table */
    const int below = lc ? tmin <= bp[b] : tmin < bp[b];
    const int above = lc ? tmax > bp[b] : tmax >= bp[b];
    if (!(below && above)) continue;
    p->bp_mm[p->n_bp] = bp[b];
    p->bp_left_closed[p->n_bp] = lc;
    p->n_bp++;
  }
  p->n_pieces = p->n_bp + 1;
  p->pieces = calloc(p->n_pieces, sizeof *p->pieces);
  if (p->pieces == NULL)
    return rp_error_set(err, RP_ENOMEM, "gate plan: out of memory (%zu pieces)", p->n_pieces);
  for (size_t k = 0; k < p->n_pieces; k++) p->pieces[k].k0 = t->n;
  for (size_t i = 0; i < t->n; i++) {
    plan_piece *pc = &p->pieces[piece_of(p, t->d_mm[i])];
    if (pc->k0 == t->n) pc->k0 = i;
    pc->nk++;
  }
  int empty = 0;
  for (size_t k = 0; k < p->n_pieces; k++) empty |= p->pieces[k].nk == 0;
  if (empty) {
    p->n_bp = 0;
    p->n_pieces = 1;
    p->pieces[0].k0 = 0;
    p->pieces[0].nk = t->n;
  }
  for (size_t k = 0; k < p->n_pieces; k++) {
    p->pieces[k].lo_mm = k == 0 ? tmin : p->bp_mm[k - 1];
    p->pieces[k].hi_mm = k + 1 == p->n_pieces ? tmax : p->bp_mm[k];
  }
  return RP_OK;
}

/* Quadrature intervals of piece pc clipped to [dmin, dmax]: between its knots, plus the
 * stretches between its outermost knots and its ends (merged into the neighbouring
 * interval when narrower than GAP_MERGE_MM). Writes up to nk + 1 intervals (lo, hi)
 * to iv (if not NULL) and returns their count. */
static size_t piece_intervals(const rp_gate_plan *p, const plan_piece *pc, double *iv) {
  const double *x = p->table_d_mm + pc->k0;
  const size_t nk = pc->nk;
  size_t n = 0;
  /* edges: lo, the knots not within GAP_MERGE_MM of an end, hi */
  double prev = pc->lo_mm;
  for (size_t k = 0; k <= nk; k++) {
    double e = k < nk ? x[k] : pc->hi_mm;
    if (k < nk && (e - pc->lo_mm < GAP_MERGE_MM || pc->hi_mm - e < GAP_MERGE_MM)) continue;
    if (!(e > prev)) continue;
    const double a = fmax(prev, p->dmin_mm), b = fmin(e, p->dmax_mm);
    if (b > a) {
      if (iv != NULL) {
        iv[2 * n] = a;
        iv[2 * n + 1] = b;
      }
      n++;
    }
    prev = e;
  }
  return n;
}

rp_status rp_gate_plan_alloc_nodes(const rp_table *t, double dmin_mm, double dmax_mm,
                                   double kw2, int nodes_per_interval,
                                   rp_gate_plan **out, rp_error *err) {
  if (t == NULL || out == NULL)
    return rp_error_set(err, RP_EINVAL, "gate plan: NULL table or output");
  if (nodes_per_interval < 1 || nodes_per_interval > RP_GATE_NODES_PER_INTERVAL_MAX)
    return rp_error_set(err, RP_EINVAL, "gate plan: %d nodes per interval outside [1, %d]",
                        nodes_per_interval, RP_GATE_NODES_PER_INTERVAL_MAX);
  if (isnan(dmin_mm) || isnan(dmax_mm) || !(dmin_mm < dmax_mm))
    return rp_error_set(err, RP_EINVAL,
                        "gate plan: truncation [%g, %g] mm is not an interval", dmin_mm,
                        dmax_mm);
  if (isnan(kw2)) return rp_error_set(err, RP_EINVAL, "gate plan: |K_w|^2 is NaN");
  if (!(kw2 > 0.0 && kw2 <= 1.0))
    return rp_error_set(err, RP_EDOM, "gate plan: |K_w|^2 = %g outside (0, 1]", kw2);
  RP_TRY(check_table(t, err));
  const double tmin = t->d_mm[0], tmax = t->d_mm[t->n - 1];
  if (dmin_mm < tmin - D_SLACK_MM || dmax_mm > tmax + D_SLACK_MM)
    return rp_error_set(err, RP_EDOM,
                        "gate plan: truncation [%g, %g] mm not within the table's diameter "
                        "range [%g, %g] mm", dmin_mm, dmax_mm, tmin, tmax);
  dmin_mm = fmax(dmin_mm, tmin);
  dmax_mm = fmin(dmax_mm, tmax);

  rp_status st = RP_OK;
  gsl_integration_glfixed_table *gl = NULL;
  double *y = NULL, *iv = NULL;
  rp_gate_plan *p = calloc(1, sizeof *p);
  if (p == NULL) goto nomem;
  p->dmin_mm = dmin_mm;
  p->dmax_mm = dmax_mm;
  p->wavelength_mm = t->wavelength_mm;
  p->kw2 = kw2;
  p->n_table = t->n;
  const double lam = t->wavelength_mm;
  const double cz = 4.0 * pow(lam, 4) / (pow(M_PI, 4) * kw2); /* lambda^4/(pi^5 K) 4 pi */
  const double ck = (180.0 / M_PI) * 1e-3 * lam;
  const double ca = 2.0 * DB_PER_NEPER * 1e-3 * lam; /* 8.686e-3 lambda */
  const double units[NQ] = {cz, cz, cz, cz, cz, ck, ca, ca};
  memcpy(p->unit, units, sizeof units);

  p->table_d_mm = malloc(t->n * sizeof *p->table_d_mm);
  p->coef = calloc(t->n * NQ * 4, sizeof *p->coef);
  y = malloc(4 * t->n * sizeof *y); /* values, then the spline's 3 n workspace */
  iv = malloc(2 * (t->n + 2 * RP_SHAPE_BREAKPOINTS_MAX + 2) * sizeof *iv);
  if (!p->table_d_mm || !p->coef || !y || !iv) goto nomem;
  memcpy(p->table_d_mm, t->d_mm, t->n * sizeof *t->d_mm);
  p->use_shape = table_shape_known(t);
  p->shape = t->cfg.shape;
  p->r_fixed = t->cfg.axis_ratio_fixed;
  st = make_pieces(p, t, err);
  if (st != RP_OK) goto fail;
  int any_scaled = 0;
  for (size_t k = 0; k < p->n_pieces; k++) {
    plan_piece *pc = &p->pieces[k];
    /* the scaling needs some non-spherical knot in the piece */
    pc->scaled = p->use_shape && fill_oblate(t, Q_KDP, pc->k0, pc->nk, y);
    any_scaled |= pc->scaled;
    for (int j = 0; j < NQ; j++) {
      if (!(pc->scaled && q_oblate[j] && fill_oblate(t, j, pc->k0, pc->nk, y)))
        for (size_t i = 0; i < pc->nk; i++)
          y[i] = table_q(t, j, pc->k0 + i) / pow_rayleigh(t->d_mm[pc->k0 + i], j);
      spline_fit(t->d_mm + pc->k0, y, pc->nk, p->coef + (pc->k0 * NQ + (size_t)j) * 4,
                 4 * NQ, y + t->n);
    }
  }
  p->use_shape = any_scaled;

  /* nodes: m Gauss–Legendre points on each quadrature interval of each piece */
  const size_t m = (size_t)nodes_per_interval;
  size_t n_int = 0;
  for (size_t k = 0; k < p->n_pieces; k++) n_int += piece_intervals(p, &p->pieces[k], NULL);
  p->n_nodes = n_int * m;
  p->d_mm = malloc(p->n_nodes * sizeof *p->d_mm);
  p->ln_d = malloc(p->n_nodes * sizeof *p->ln_d);
  p->wq = malloc(p->n_nodes * NQ * sizeof *p->wq);
  gl = gsl_integration_glfixed_table_alloc(m);
  if (!p->d_mm || !p->ln_d || !p->wq || !gl) goto nomem;
  size_t k = 0;
  for (size_t ip = 0; ip < p->n_pieces; ip++) {
    const plan_piece *pc = &p->pieces[ip];
    const size_t ni = piece_intervals(p, pc, iv);
    for (size_t i = 0; i < ni; i++) {
      const double a = iv[2 * i], b = iv[2 * i + 1];
      for (size_t g = 0; g < m; g++, k++) {
        double xg, wg;
        gsl_integration_glfixed_point(a, b, g, &xg, &wg, gl);
        p->d_mm[k] = xg;
        p->ln_d[k] = log(xg);
        double q[NQ];
        st = piece_q(p, pc, xg, q, err);
        if (st != RP_OK) goto fail;
        for (int j = 0; j < NQ; j++) p->wq[k * NQ + (size_t)j] = wg * q[j];
      }
    }
  }
  gsl_integration_glfixed_table_free(gl);
  free(y);
  free(iv);
  *out = p;
  return RP_OK;

nomem:
  st = rp_error_set(err, RP_ENOMEM, "gate plan: out of memory (%zu table diameters)", t->n);
fail:
  gsl_integration_glfixed_table_free(gl);
  free(y);
  free(iv);
  rp_gate_plan_free(p);
  return st;
}

rp_status rp_gate_plan_alloc(const rp_table *t, double dmin_mm, double dmax_mm, double kw2,
                             rp_gate_plan **out, rp_error *err) {
  return rp_gate_plan_alloc_nodes(t, dmin_mm, dmax_mm, kw2, RP_GATE_NODES_PER_INTERVAL, out,
                                  err);
}

double rp_gate_plan_dmin_mm(const rp_gate_plan *p) { return p->dmin_mm; }
double rp_gate_plan_dmax_mm(const rp_gate_plan *p) { return p->dmax_mm; }
double rp_gate_plan_wavelength_mm(const rp_gate_plan *p) { return p->wavelength_mm; }
double rp_gate_plan_kw2(const rp_gate_plan *p) { return p->kw2; }
size_t rp_gate_plan_nodes(const rp_gate_plan *p) { return p->n_nodes; }
int rp_gate_plan_uses_shape(const rp_gate_plan *p) { return p->use_shape; }

/* ---- direct integration ---------------------------------------------------------- */

static void sums_to_linear(const double s[NQ], rp_gate_linear *out) {
  out->zh_mm6_m3 = s[Q_HH2];
  out->zv_mm6_m3 = s[Q_HH2] - s[Q_DIFF];
  out->zhv_mm6_m3 = s[Q_HV2];
  out->zhhvv_re_mm6_m3 = s[Q_HHVV_RE];
  out->zhhvv_im_mm6_m3 = s[Q_HHVV_IM];
  out->kdp_deg_km = s[Q_KDP];
  out->ah_db_km = s[Q_AH];
  out->adp_db_km = s[Q_ADP];
}

/* 5-point Gauss–Legendre on [-1, 1] (Abramowitz & Stegun 1964, table 25.4). */
static const double GL5_X[5] = {0.0, -0.5384693101056830910, 0.5384693101056830910,
                                -0.9061798459386639928, 0.9061798459386639928};
static const double GL5_W[5] = {0.5688888888888888889, 0.4786286704993664680,
                                0.4786286704993664680, 0.2369268850561890875,
                                0.2369268850561890875};

/* acc += ∫_lo^hi c_j q_j(D) dD of the spline interpolant, split at the knots and at the
 * breakpoints between pieces (each part a polynomial times the (1 - r) factor). */
static rp_status bin_integral(const rp_gate_plan *p, double lo, double hi, double acc[NQ],
                              rp_error *err) {
  /* first knot strictly above lo */
  size_t a_i = 0, b_i = p->n_table;
  while (a_i < b_i) {
    size_t mid = a_i + (b_i - a_i) / 2;
    if (p->table_d_mm[mid] <= lo)
      a_i = mid + 1;
    else
      b_i = mid;
  }
  size_t j = a_i;
  double a = lo;
  while (a < hi) {
    while (j < p->n_table && p->table_d_mm[j] <= a) j++;
    double b = (j < p->n_table && p->table_d_mm[j] < hi) ? p->table_d_mm[j] : hi;
    for (size_t i = 0; i < p->n_bp; i++)
      if (p->bp_mm[i] > a && p->bp_mm[i] < b) b = p->bp_mm[i];
    const double half = 0.5 * (b - a), mid = 0.5 * (a + b);
    const plan_piece *pc = &p->pieces[piece_of(p, mid)];
    for (int g = 0; g < 5; g++) {
      double q[NQ];
      RP_TRY(piece_q(p, pc, mid + half * GL5_X[g], q, err));
      for (int k = 0; k < NQ; k++) acc[k] += half * GL5_W[g] * q[k];
    }
    a = b;
  }
  return RP_OK;
}

static rp_status eval_spectrum(const rp_gate_plan *p, const rp_dsd *d, double s[NQ],
                               rp_error *err) {
  if (d->n_bins == 0 || !d->bin_center_mm || !d->bin_width_mm || !d->bin_conc_m3_mm)
    return rp_error_set(err, RP_EINVAL, "gate: spectrum DSD has no bins");
  const double tmin = p->table_d_mm[0], tmax = p->table_d_mm[p->n_table - 1];
  for (size_t i = 0; i < d->n_bins; i++) {
    const double c = d->bin_center_mm[i], w = d->bin_width_mm[i], n = d->bin_conc_m3_mm[i];
    if (!isfinite(c) || !isfinite(w) || w <= 0.0 || !isfinite(n) || n < 0.0)
      return rp_error_set(err, RP_EINVAL,
                          "gate: spectrum bin %zu (centre %g mm, width %g mm, "
                          "concentration %g m^-3 mm^-1) is malformed (bins numbered from 1)",
                          i + 1, c, w, n);
    if (n == 0.0 || c < d->dmin_mm || c > d->dmax_mm) continue;
    double lo = c - 0.5 * w, hi = c + 0.5 * w;
    if (lo < -RP_DSD_BIN_SLACK_MM || hi > tmax + D_SLACK_MM)
      return rp_error_set(err, RP_EDOM,
                          "gate: spectrum bin %zu [%g, %g] mm not within the table's "
                          "diameter range [0, %g] mm (bins numbered from 1)", i + 1, lo, hi,
                          tmax);
    lo = fmax(lo, 0.0); /* a lower edge within the slack below 0 is round-off of 0 */
    double acc[NQ] = {0};
    if (lo < tmin) {
      /* Below the table's smallest drop the Rayleigh scaling q ~ D^p holds (p = 6 for
       * backscatter, 3 for forward quantities): integrate q(tmin) (D/tmin)^p exactly. */
      double q0[NQ];
      RP_TRY(spline_q(p, tmin, q0, err));
      const double top = fmin(hi, tmin);
      for (int k = 0; k < NQ; k++) {
        const double e = q_power[k] + 1.0;
        acc[k] += q0[k] * (pow(top, e) - pow(lo, e)) / (e * pow(tmin, q_power[k]));
      }
      lo = top;
    }
    hi = fmin(hi, tmax);
    if (lo >= hi) {
      for (int k = 0; k < NQ; k++) s[k] += n * acc[k];
      continue;
    }
    RP_TRY(bin_integral(p, lo, hi, acc, err));
    for (int k = 0; k < NQ; k++) s[k] += n * acc[k];
  }
  return RP_OK;
}

static rp_status eval_analytic(const rp_gate_plan *p, const rp_dsd *d, double s[NQ],
                               rp_error *err) {
  if (!isfinite(d->n0) || d->n0 <= 0.0 || !isfinite(d->lambda_per_mm) ||
      d->lambda_per_mm <= 0.0 || !isfinite(d->mu))
    return rp_error_set(err, RP_EINVAL,
                        "gate: %s DSD with N0 = %g, mu = %g, Lambda = %g mm^-1 is malformed",
                        rp_dsd_model_name(d->model), d->n0, d->mu, d->lambda_per_mm);
  if (!(fabs(d->dmin_mm - p->dmin_mm) <= D_SLACK_MM) ||
      !(fabs(d->dmax_mm - p->dmax_mm) <= D_SLACK_MM))
    return rp_error_set(err, RP_EINVAL,
                        "gate: DSD truncation [%g, %g] mm differs from the plan's [%g, %g] "
                        "mm; set it with rp_dsd_set_truncation or make a plan for it",
                        d->dmin_mm, d->dmax_mm, p->dmin_mm, p->dmax_mm);
  const double ln_n0 = log(d->n0), mu = d->mu, lam = d->lambda_per_mm;
  double acc[NQ] = {0};
  for (size_t k = 0; k < p->n_nodes; k++) {
    /* N(D_k) = exp(ln N0 + mu ln D_k - Lambda D_k): one exp, no pow */
    const double nk = exp(ln_n0 + mu * p->ln_d[k] - lam * p->d_mm[k]);
    const double *q = p->wq + k * NQ;
    for (int j = 0; j < NQ; j++) acc[j] += nk * q[j];
  }
  memcpy(s, acc, sizeof acc);
  return RP_OK;
}

rp_status rp_gate_eval_linear(const rp_gate_plan *p, const rp_dsd *d, rp_gate_linear *out,
                              rp_error *err) {
  if (p == NULL || d == NULL || out == NULL)
    return rp_error_set(err, RP_EINVAL, "gate: NULL plan, DSD or output");
  double s[NQ] = {0};
  switch (d->model) {
    case RP_DSD_EXPONENTIAL:
    case RP_DSD_MARSHALL_PALMER:
    case RP_DSD_GAMMA:
    case RP_DSD_NORMALIZED_GAMMA_D0:
    case RP_DSD_NORMALIZED_GAMMA_DM:
      RP_TRY(eval_analytic(p, d, s, err));
      break;
    case RP_DSD_SPECTRUM:
      RP_TRY(eval_spectrum(p, d, s, err));
      break;
    default:
      return rp_error_set(err, RP_EINVAL, "gate: DSD model %d unknown", (int)d->model);
  }
  for (int j = 0; j < NQ; j++)
    if (!isfinite(s[j]))
      return rp_error_set(err, RP_EDOM,
                          "gate: %s DSD integral overflows (N0 = %g, mu = %g, Lambda = %g)",
                          rp_dsd_model_name(d->model), d->n0, d->mu, d->lambda_per_mm);
  sums_to_linear(s, out);
  return RP_OK;
}

rp_status rp_gate_eval(const rp_gate_plan *p, const rp_dsd *d, rp_gate_result *out,
                       rp_error *err) {
  rp_gate_linear lin;
  RP_TRY(rp_gate_eval_linear(p, d, &lin, err));
  if (out == NULL) return rp_error_set(err, RP_EINVAL, "gate: NULL output");
  if (lin.zh_mm6_m3 <= 0.0 && lin.zv_mm6_m3 <= 0.0)
    return rp_error_set(err, RP_EDOM,
                        "gate: no drops: the %s DSD has zero concentration over [%g, %g] mm "
                        "(or its integrals underflow)", rp_dsd_model_name(d->model),
                        d->dmin_mm, d->dmax_mm);
  return rp_gate_result_from_linear(&lin, out, err);
}

/* ---- fast path: jets ---------------------------------------------------------------- */

/* A value with its partial derivatives d/dx, d/dy and d2/dxdy (x = ln D0, y = mu). */
typedef struct {
  double v, x, y, xy;
} jet;

static jet jet_add(jet a, jet b) { return (jet){a.v + b.v, a.x + b.x, a.y + b.y, a.xy + b.xy}; }
static jet jet_sub(jet a, jet b) { return (jet){a.v - b.v, a.x - b.x, a.y - b.y, a.xy - b.xy}; }
static jet jet_scale(jet a, double s) { return (jet){s * a.v, s * a.x, s * a.y, s * a.xy}; }
static jet jet_mul(jet a, jet b) {
  return (jet){a.v * b.v, a.x * b.v + a.v * b.x, a.y * b.v + a.v * b.y,
               a.xy * b.v + a.x * b.y + a.y * b.x + a.v * b.xy};
}
/* phi(a) for a scalar function with phi(a.v) = f0, phi' = f1, phi'' = f2 */
static jet jet_fn(jet a, double f0, double f1, double f2) {
  return (jet){f0, f1 * a.x, f1 * a.y, f2 * a.x * a.y + f1 * a.xy};
}
static jet jet_log(jet a) { return jet_fn(a, log(a.v), 1.0 / a.v, -1.0 / (a.v * a.v)); }
static jet jet_exp(jet a) {
  const double e = exp(a.v);
  return jet_fn(a, e, e, e);
}
/* atan2(b, a) with its derivatives (r2 = a^2 + b^2 > 0) */
static jet jet_atan2(jet b, jet a) {
  const double r2 = a.v * a.v + b.v * b.v, r4 = r2 * r2;
  const double ga = -b.v / r2, gb = a.v / r2;
  const double gaa = 2.0 * a.v * b.v / r4, gbb = -gaa, gab = (b.v * b.v - a.v * a.v) / r4;
  return (jet){atan2(b.v, a.v), ga * a.x + gb * b.x, ga * a.y + gb * b.y,
               ga * a.xy + gb * b.xy + gaa * a.x * a.y + gbb * b.x * b.y +
                   gab * (a.x * b.y + a.y * b.x)};
}

/* ---- fast path: grid ---------------------------------------------------------------- */

enum { F_ZH, F_ZDR, F_LDR, F_RHO, F_DELTA, F_KDP, F_AH, F_ADP, NF };
enum { MODE_LOG, MODE_LIN, MODE_ZERO };
/* D0 power p + 1 used to scale K_DP, A_H, A_DP in MODE_LIN (Rayleigh moments:
 * K_DP and A_DP ~ M_4, A_H ~ M_3, and M_n ~ D0^(n+1) at fixed mu). */
static const double lin_power[NF] = {0, 0, 0, 0, 0, 5, 4, 5};

/* Grid: uniform in ln D0 (41 nodes, step 0.061) and mu (27 nodes, step 0.5). Checked
 * by tests/test_gate.c (test_fast_matches_direct_over_whole_grid) on an off-node
 * lattice over the whole grid at S, C and X band: errors <= 3.3e-4 dB and <= 7e-5
 * relative against targets of 0.02 dB and 0.5 % (docs/method.md §8). */
#define FAST_NX 41
#define FAST_NY 27
#define NCOEF 16

struct rp_gate_fast {
  double x0, inv_hx, y0, inv_hy;
  double d0_min, d0_max, mu_min, mu_max;
  int mode[NF];
  double *coef; /* (FAST_NX-1)(FAST_NY-1) cells x NCOEF x NF, a_ij at [i*4+j][f] */
};

void rp_gate_fast_free(rp_gate_fast *f) {
  if (f == NULL) return;
  free(f->coef);
  free(f);
}

/* The Nw = 1 normalised-gamma sums and their derivatives at (x = ln D0, mu). */
static rp_status grid_sums(const rp_gate_plan *p, double x, double mu, jet s[NQ],
                           rp_error *err) {
  const double c = RP_DSD_C_D0, d0 = exp(x);
  gsl_sf_result lg, ps;
  int st1 = gsl_sf_lngamma_e(mu + 4.0, &lg);
  int st2 = gsl_sf_psi_e(mu + 4.0, &ps);
  if (st1 != GSL_SUCCESS || st2 != GSL_SUCCESS)
    return rp_error_set(err, RP_EGSL, "gate fast path: log-gamma or digamma of %g failed",
                        mu + 4.0);
  /* ln f(mu) = ln(6/c^4) + (mu+4) ln(c+mu) - ln Gamma(mu+4) and its mu-derivative */
  const double ln_f = log(6.0) - 4.0 * log(c) + (mu + 4.0) * log(c + mu) - lg.val;
  const double dln_f = log(c + mu) + (mu + 4.0) / (c + mu) - ps.val;
  for (int j = 0; j < NQ; j++) s[j] = (jet){0, 0, 0, 0};
  for (size_t k = 0; k < p->n_nodes; k++) {
    const double dd = p->d_mm[k], r = dd / d0;
    /* ln N = ln f + mu (ln D - x) - (c + mu) D/D0 (Nw = 1) */
    const double n = exp(ln_f + mu * (p->ln_d[k] - x) - (c + mu) * r);
    const double a = -mu + (c + mu) * r;             /* d ln N / dx */
    const double b = dln_f + p->ln_d[k] - x - r;      /* d ln N / dmu */
    const double cab = a * b + (r - 1.0);             /* (d2 N/dx dmu) / N */
    const double *q = p->wq + k * NQ;
    for (int j = 0; j < NQ; j++) {
      const double nq = n * q[j];
      s[j].v += nq;
      s[j].x += nq * a;
      s[j].y += nq * b;
      s[j].xy += nq * cab;
    }
  }
  return RP_OK;
}

/* The interpolated fields of one grid node (mode decided beforehand). */
static void node_fields(const jet s[NQ], double x, const int mode[NF], jet f[NF]) {
  const jet lzh = jet_log(s[Q_HH2]), lzv = jet_log(jet_sub(s[Q_HH2], s[Q_DIFF]));
  f[F_ZH] = lzh;
  f[F_ZDR] = jet_sub(lzh, lzv);
  if (mode[F_LDR] == MODE_LOG)
    f[F_LDR] = jet_sub(jet_log(s[Q_HV2]), lzh);
  else if (mode[F_LDR] == MODE_LIN)
    f[F_LDR] = jet_mul(s[Q_HV2], jet_exp(jet_scale(lzh, -1.0)));
  else
    f[F_LDR] = (jet){0, 0, 0, 0};
  const jet c2 = jet_add(jet_mul(s[Q_HHVV_RE], s[Q_HHVV_RE]),
                         jet_mul(s[Q_HHVV_IM], s[Q_HHVV_IM]));
  if (c2.v > 0.0) {
    /* ln rho = (1/2) ln |C|^2 - (1/2) ln Z_h - (1/2) ln Z_v */
    const jet lrho = jet_scale(jet_sub(jet_log(c2), jet_add(lzh, lzv)), 0.5);
    if (mode[F_RHO] == MODE_LOG) {
      /* ln(1 - rho), 1 - rho = -expm1(ln rho) without cancellation */
      const double e = exp(lrho.v);
      f[F_RHO] = jet_log(jet_fn(lrho, -expm1(lrho.v), -e, -e));
    } else {
      f[F_RHO] = jet_exp(lrho);
    }
    f[F_DELTA] = jet_scale(jet_atan2(s[Q_HHVV_IM], s[Q_HHVV_RE]), 180.0 / M_PI);
  } else {
    f[F_RHO] = f[F_DELTA] = (jet){0, 0, 0, 0};
  }
  const int ext[3] = {F_KDP, F_AH, F_ADP}, src[3] = {Q_KDP, Q_AH, Q_ADP};
  for (int i = 0; i < 3; i++) {
    const int fi = ext[i];
    if (mode[fi] == MODE_LOG) {
      f[fi] = jet_log(s[src[i]]);
    } else if (mode[fi] == MODE_LIN) {
      const double e = exp(-lin_power[fi] * x);
      f[fi] = jet_mul(s[src[i]], (jet){e, -lin_power[fi] * e, 0, 0});
    } else {
      f[fi] = (jet){0, 0, 0, 0};
    }
  }
}

/* Mode of a field from the signs of its source at every node: log if all > 0, zero if
 * all == 0, linear otherwise. */
static int sign_mode(int all_pos, int all_zero) {
  return all_pos ? MODE_LOG : (all_zero ? MODE_ZERO : MODE_LIN);
}

/* Bicubic Hermite coefficients a_ij of one cell from the corner jets (unit square;
 * derivatives scaled by the steps): A = M F M^T, M the cubic Hermite matrix. */
static void hermite_coef(const jet c00, const jet c10, const jet c01, const jet c11,
                         double hx, double hy, double a[NCOEF]) {
  static const double M[4][4] = {{1, 0, 0, 0}, {0, 0, 1, 0}, {-3, 3, -2, -1}, {2, -2, 1, 1}};
  const double F[4][4] = {
      {c00.v, c01.v, c00.y * hy, c01.y * hy},
      {c10.v, c11.v, c10.y * hy, c11.y * hy},
      {c00.x * hx, c01.x * hx, c00.xy * hx * hy, c01.xy * hx * hy},
      {c10.x * hx, c11.x * hx, c10.xy * hx * hy, c11.xy * hx * hy}};
  double mf[4][4];
  for (int i = 0; i < 4; i++)
    for (int j = 0; j < 4; j++) {
      double s = 0.0;
      for (int k = 0; k < 4; k++) s += M[i][k] * F[k][j];
      mf[i][j] = s;
    }
  for (int i = 0; i < 4; i++)
    for (int j = 0; j < 4; j++) {
      double s = 0.0;
      for (int k = 0; k < 4; k++) s += mf[i][k] * M[j][k];
      a[i * 4 + j] = s;
    }
}

rp_status rp_gate_fast_alloc(const rp_gate_plan *p, rp_gate_fast **out, rp_error *err) {
  if (p == NULL || out == NULL)
    return rp_error_set(err, RP_EINVAL, "gate fast path: NULL plan or output");
  rp_status st = RP_OK;
  const size_t nx = FAST_NX, ny = FAST_NY, nn = nx * ny;
  jet *sums = malloc(nn * NQ * sizeof *sums);
  jet *fields = malloc(nn * NF * sizeof *fields);
  rp_gate_fast *f = calloc(1, sizeof *f);
  if (!sums || !fields || !f) goto nomem;
  f->coef = malloc((nx - 1) * (ny - 1) * NCOEF * NF * sizeof *f->coef);
  if (!f->coef) goto nomem;
  f->d0_min = RP_GATE_FAST_D0_MIN_MM;
  f->d0_max = RP_GATE_FAST_D0_MAX_MM;
  f->mu_min = RP_GATE_FAST_MU_MIN;
  f->mu_max = RP_GATE_FAST_MU_MAX;
  f->x0 = log(f->d0_min);
  const double hx = (log(f->d0_max) - f->x0) / (double)(nx - 1);
  f->y0 = f->mu_min;
  const double hy = (f->mu_max - f->mu_min) / (double)(ny - 1);
  f->inv_hx = 1.0 / hx;
  f->inv_hy = 1.0 / hy;

  int pos[NQ], zero[NQ];
  for (int j = 0; j < NQ; j++) pos[j] = zero[j] = 1;
  for (size_t ix = 0; ix < nx; ix++)
    for (size_t iy = 0; iy < ny; iy++) {
      const double x = f->x0 + (double)ix * hx, mu = f->y0 + (double)iy * hy;
      jet *s = sums + (ix * ny + iy) * NQ;
      st = grid_sums(p, x, mu, s, err);
      if (st != RP_OK) goto fail;
      const double zh1 = s[Q_HH2].v, zv1 = s[Q_HH2].v - s[Q_DIFF].v;
      if (!(zh1 > 0.0) || !(zv1 > 0.0) || !isfinite(zh1) || !isfinite(zv1)) {
        st = rp_error_set(err, RP_EDOM,
                          "gate fast path: Z_h = %g, Z_v = %g at D0 = %g mm, mu = %g for "
                          "Nw = 1: the table scatters nothing back", zh1, zv1, exp(x), mu);
        goto fail;
      }
      for (int j = 0; j < NQ; j++) {
        if (!(s[j].v > 0.0)) pos[j] = 0;
        if (s[j].v != 0.0) zero[j] = 0;
      }
    }
  f->mode[F_ZH] = f->mode[F_ZDR] = f->mode[F_DELTA] = MODE_LOG;
  /* rho_hv: ln(1 - rho) when 1 - rho > 0 at every node (then rho = 1 - exp(.) <= 1 by
   * construction); else rho itself, clipped to 1 after interpolation (spheres) */
  f->mode[F_RHO] = MODE_LOG;
  for (size_t node = 0; node < nn && f->mode[F_RHO] == MODE_LOG; node++) {
    const jet *s = sums + node * NQ;
    const double c2 = s[Q_HHVV_RE].v * s[Q_HHVV_RE].v + s[Q_HHVV_IM].v * s[Q_HHVV_IM].v;
    const double zh = s[Q_HH2].v, zv = s[Q_HH2].v - s[Q_DIFF].v;
    const double lrho = 0.5 * (log(c2) - log(zh) - log(zv));
    if (!(c2 > 0.0) || !(-expm1(lrho) > 0.0)) f->mode[F_RHO] = MODE_LIN;
  }
  f->mode[F_LDR] = sign_mode(pos[Q_HV2], zero[Q_HV2]);
  f->mode[F_KDP] = sign_mode(pos[Q_KDP], zero[Q_KDP]);
  f->mode[F_AH] = sign_mode(pos[Q_AH], zero[Q_AH]);
  f->mode[F_ADP] = sign_mode(pos[Q_ADP], zero[Q_ADP]);
  for (size_t ix = 0; ix < nx; ix++)
    for (size_t iy = 0; iy < ny; iy++) {
      const size_t node = ix * ny + iy;
      node_fields(sums + node * NQ, f->x0 + (double)ix * hx, f->mode, fields + node * NF);
    }
  for (size_t ix = 0; ix + 1 < nx; ix++)
    for (size_t iy = 0; iy + 1 < ny; iy++) {
      double *cell = f->coef + (ix * (ny - 1) + iy) * NCOEF * NF;
      for (int k = 0; k < NF; k++) {
        double a[NCOEF];
        hermite_coef(fields[(ix * ny + iy) * NF + (size_t)k],
                     fields[((ix + 1) * ny + iy) * NF + (size_t)k],
                     fields[(ix * ny + iy + 1) * NF + (size_t)k],
                     fields[((ix + 1) * ny + iy + 1) * NF + (size_t)k], hx, hy, a);
        for (int c = 0; c < NCOEF; c++) cell[c * NF + k] = a[c];
      }
    }
  free(sums);
  free(fields);
  *out = f;
  return RP_OK;

nomem:
  st = rp_error_set(err, RP_ENOMEM, "gate fast path: out of memory (%zu x %zu grid)", nx, ny);
fail:
  free(sums);
  free(fields);
  rp_gate_fast_free(f);
  return st;
}

rp_status rp_gate_fast_eval(const rp_gate_fast *f, double nw_m3_mm, double d0_mm, double mu,
                            rp_gate_result *out, rp_error *err) {
  if (f == NULL || out == NULL)
    return rp_error_set(err, RP_EINVAL, "gate fast path: NULL grid or output");
  if (!isfinite(nw_m3_mm) || nw_m3_mm <= 0.0 || !isfinite(d0_mm) || !isfinite(mu))
    return rp_error_set(err, RP_EINVAL,
                        "gate fast path: Nw = %g m^-3 mm^-1, D0 = %g mm, mu = %g: Nw must be "
                        "finite and > 0, D0 and mu finite", nw_m3_mm, d0_mm, mu);
  if (d0_mm < f->d0_min || d0_mm > f->d0_max || mu < f->mu_min || mu > f->mu_max)
    return rp_error_set(err, RP_EDOM,
                        "gate fast path: D0 = %g mm, mu = %g outside the grid D0 in [%g, %g] "
                        "mm, mu in [%g, %g]", d0_mm, mu, f->d0_min, f->d0_max, f->mu_min,
                        f->mu_max);
  const double x = log(d0_mm);
  double fx = (x - f->x0) * f->inv_hx, fy = (mu - f->y0) * f->inv_hy;
  if (fx < 0.0) fx = 0.0; /* round-off at the lower edge */
  if (fy < 0.0) fy = 0.0;
  size_t ix = (size_t)fx, iy = (size_t)fy;
  if (ix > FAST_NX - 2) ix = FAST_NX - 2;
  if (iy > FAST_NY - 2) iy = FAST_NY - 2;
  const double u = fx - (double)ix, v = fy - (double)iy;
  const double *a = f->coef + (ix * (FAST_NY - 1) + iy) * NCOEF * NF;
  /* Horner in v for each power of u, then in u; fields innermost (vectorisable) */
  double val[NF];
  for (int k = 0; k < NF; k++) val[k] = 0.0;
  for (int i = 3; i >= 0; i--) {
    const double *ai = a + (size_t)i * 4 * NF;
    for (int k = 0; k < NF; k++) {
      const double bi = ((ai[3 * NF + k] * v + ai[2 * NF + k]) * v + ai[NF + k]) * v + ai[k];
      val[k] = val[k] * u + bi;
    }
  }
  const double ln_nw = log(nw_m3_mm);
  rp_gate_result r;
  const double ln_zh = ln_nw + val[F_ZH];
  r.zh_mm6_m3 = exp(ln_zh);
  r.zv_mm6_m3 = exp(ln_zh - val[F_ZDR]);
  r.zh_dbz = DB_PER_NEPER * ln_zh;
  r.zdr_db = DB_PER_NEPER * val[F_ZDR];
  r.zv_dbz = r.zh_dbz - r.zdr_db;
  r.rhohv = f->mode[F_RHO] == MODE_LOG ? 1.0 - exp(val[F_RHO]) : fmin(val[F_RHO], 1.0);
  r.delta_hv_deg = val[F_DELTA];
  switch (f->mode[F_LDR]) {
    case MODE_LOG: r.ldr_db = ldr_with_floor(DB_PER_NEPER * val[F_LDR]); break;
    case MODE_LIN:
      r.ldr_db = val[F_LDR] > 0.0 ? ldr_with_floor(10.0 * log10(val[F_LDR])) : RP_LDR_FLOOR_DB;
      break;
    default: r.ldr_db = RP_LDR_FLOOR_DB; break;
  }
  double ext[3];
  const int fields[3] = {F_KDP, F_AH, F_ADP};
  for (int i = 0; i < 3; i++) {
    const int k = fields[i];
    switch (f->mode[k]) {
      case MODE_LOG: ext[i] = exp(ln_nw + val[k]); break;
      case MODE_LIN: ext[i] = nw_m3_mm * val[k] * exp(lin_power[k] * x); break;
      default: ext[i] = 0.0; break;
    }
  }
  r.kdp_deg_km = ext[0];
  r.ah_db_km = ext[1];
  r.adp_db_km = ext[2];
  r.av_db_km = ext[1] - ext[2];
  if (!isfinite(r.zh_mm6_m3) || !isfinite(r.zv_mm6_m3) || !isfinite(r.kdp_deg_km) ||
      !isfinite(r.ah_db_km) || !isfinite(r.adp_db_km) || !(r.zv_mm6_m3 > 0.0) ||
      !(r.zh_mm6_m3 > 0.0))
    return rp_error_set(err, RP_EDOM,
                        "gate fast path: result for Nw = %g m^-3 mm^-1, D0 = %g mm, mu = %g "
                        "overflows or underflows", nw_m3_mm, d0_mm, mu);
  *out = r;
  return RP_OK;
}
