/* dsd.c — drop-size distributions, their moments and derived rain quantities.
 *
 * Method (equations in docs/method.md §7):
 * - Gamma family N(D) = N0 D^mu exp(-Lambda D) (Ulbrich 1983). Truncated moments in
 *   closed form: with a = mu + n + 1 and t = Lambda D,
 *     M_n = N0 Lambda^-a ∫_{Lambda dmin}^{Lambda dmax} t^(a-1) e^-t dt
 *         = N0 Gamma(a) Lambda^-a [P(a, Lambda dmax) - P(a, Lambda dmin)]   (a > 0),
 *   P the regularised lower incomplete gamma function (Abramowitz & Stegun 6.5.1); the
 *   complementary Q is used instead when the window starts right of the mode so the
 *   difference does not cancel. For a <= 0 the unnormalised upper Gamma(a, x) is used.
 * - Normalised gamma (Testud et al. 2001, c = 4 with Dm; Bringi et al. 2003, c = 3.67
 *   with D0): N0 = Nw f(mu) Dx^-mu, Lambda = (c + mu)/Dx,
 *   f(mu) = (6/c^4) (c + mu)^(mu+4) / Gamma(mu + 4).
 * - Marshall & Palmer (1948): N0 = 8000 m^-3 mm^-1, Lambda = 4.1 R^-0.21 mm^-1.
 * - Measured spectra: midpoint sums over bins, piecewise-constant N(D).
 * - W = (pi/6) 1e-3 M3 (rho_w = 1e-3 g mm^-3), Dm = M4/M3,
 *   sigma_m^2 = ∫ (D - Dm)^2 D^3 N dD / M3, Nw = 4^4 W / (pi rho_w Dm^4) (Testud 2001),
 *   R = 6 pi 1e-4 ∫ v(D) D^3 N(D) dD (v in m/s): the factor is
 *   (pi/6) mm^3 m^-3 * m/s = (pi/6) 1e-9 m/s = (pi/6) 1e-9 * 3.6e6 mm/h = 6 pi 1e-4 mm/h.
 * - Rain-rate quadrature: adaptive Gauss–Kronrod 7/15 (Piessens et al. 1983, QUADPACK
 *   QK15 nodes) with interval storage on the stack, so nothing is allocated.
 * - D0: root of the cumulative M3 fraction = 1/2 by the Illinois variant of regula
 *   falsi (Dowell & Jarratt 1971), which keeps a bracket.
 *
 * Invariants: every constructor fills the gamma form of an analytic model; the
 * spectrum arrays are borrowed. */
#include "rainprint/dsd.h"

#include <math.h>
#include <stdbool.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_sf_gamma.h>

/* Density of liquid water in g mm^-3 (1 g cm^-3). */
static const double RHO_W_G_MM3 = 1e-3;
/* Marshall & Palmer (1948) constants. */
static const double MP_N0_M3_MM = 8000.0;
static const double MP_LAMBDA_COEF = 4.1;
static const double MP_LAMBDA_EXP = -0.21;
/* Quadrature: relative tolerance and the fixed number of subintervals. */
static const double QUAD_EPSREL = 1e-10;
#define QUAD_MAX_INTERVALS 256
/* Root finder: relative bracket width at convergence and iteration cap. */
static const double ROOT_XTOL_REL = 1e-13;
#define ROOT_MAX_ITER 200

const char *rp_dsd_model_name(rp_dsd_model m) {
  switch (m) {
    case RP_DSD_EXPONENTIAL: return "exponential";
    case RP_DSD_MARSHALL_PALMER: return "marshall-palmer";
    case RP_DSD_GAMMA: return "gamma";
    case RP_DSD_NORMALIZED_GAMMA_D0: return "normalized-gamma";
    case RP_DSD_NORMALIZED_GAMMA_DM: return "normalized-gamma";
    case RP_DSD_SPECTRUM: return "spectrum";
  }
  return "unknown";
}

double rp_dsd_normalized_f(double mu, double c) {
  if (!isfinite(mu) || !isfinite(c) || c + mu <= 0.0 || c <= 0.0) return (double)NAN;
  /* (6/c^4) (c+mu)^(mu+4) / Gamma(mu+4), evaluated in logs to avoid overflow */
  double lg = 0.0;
  gsl_sf_result r;
  if (gsl_sf_lngamma_e(mu + 4.0, &r) != GSL_SUCCESS) return (double)NAN;
  lg = r.val;
  return 6.0 / pow(c, 4.0) * exp((mu + 4.0) * log(c + mu) - lg);
}

/* ---- validation helpers ------------------------------------------------------- */

static rp_status check_positive(const char *what, const char *name, double x,
                                const char *unit, rp_error *err) {
  if (!isfinite(x) || x <= 0.0)
    return rp_error_set(err, RP_EINVAL, "%s DSD: %s = %g%s%s must be finite and > 0",
                        what, name, x, unit[0] ? " " : "", unit);
  return RP_OK;
}

static rp_status check_mu(const char *what, double mu, rp_error *err) {
  if (!isfinite(mu))
    return rp_error_set(err, RP_EINVAL, "%s DSD: mu = %g must be finite", what, mu);
  if (mu < RP_DSD_MU_MIN || mu > RP_DSD_MU_MAX)
    return rp_error_set(err, RP_EDOM, "%s DSD: mu = %g outside [%g, %g]", what, mu,
                        RP_DSD_MU_MIN, RP_DSD_MU_MAX);
  return RP_OK;
}

/* RP_EDOM unless lo <= x <= hi. */
static rp_status check_range(const char *what, const char *name, double x, double lo,
                             double hi, const char *unit, rp_error *err) {
  if (!(x >= lo && x <= hi))
    return rp_error_set(err, RP_EDOM, "%s DSD: %s = %g %s outside [%g, %g] %s", what, name, x,
                        unit, lo, hi, unit);
  return RP_OK;
}

/* The LWC of N0 D^mu exp(-Lambda D) over (0, RP_DSD_D_LIMIT_MM], the widest finite
 * truncation (so it bounds every finite truncation): (pi/6) rho_w N0 Gamma(mu+4)
 * P(mu+4, 10 Lambda) / Lambda^(mu+4), in logs (the factors span hundreds of decades);
 * it must lie within [RP_DSD_LWC_MIN, RP_DSD_LWC_MAX]. */
static rp_status check_implied_lwc(const char *what, double n0, double mu, double lam,
                                   rp_error *err) {
  gsl_sf_result lg, p;
  if (gsl_sf_lngamma_e(mu + 4.0, &lg) != GSL_SUCCESS ||
      gsl_sf_gamma_inc_P_e(mu + 4.0, lam * RP_DSD_D_LIMIT_MM, &p) != GSL_SUCCESS)
    return rp_error_set(err, RP_EDOM, "%s DSD: incomplete gamma of order %g failed", what,
                        mu + 4.0);
  const double log_w = log(M_PI / 6.0 * RHO_W_G_MM3) + log(n0) + lg.val - (mu + 4.0) * log(lam) +
                       log(p.val);
  if (!(log_w >= log(RP_DSD_LWC_MIN) && log_w <= log(RP_DSD_LWC_MAX)))
    return rp_error_set(err, RP_EDOM, "%s DSD: N0 = %g, mu = %g, Lambda = %g mm^-1 imply a "
                        "liquid water content of %g g m^-3 (drops up to %g mm), outside [%g, "
                        "%g] g m^-3", what, n0, mu, lam, exp(log_w), RP_DSD_D_LIMIT_MM,
                        RP_DSD_LWC_MIN, RP_DSD_LWC_MAX);
  return RP_OK;
}

static void init_analytic(rp_dsd *d, rp_dsd_model model, double n0, double mu,
                          double lambda) {
  memset(d, 0, sizeof *d);
  d->model = model;
  d->n0 = n0;
  d->mu = mu;
  d->lambda_per_mm = lambda;
  d->dmin_mm = RP_DSD_DMIN_DEFAULT_MM;
  d->dmax_mm = RP_DSD_DMAX_DEFAULT_MM;
}

static bool is_analytic(rp_dsd_model m) {
  return m == RP_DSD_EXPONENTIAL || m == RP_DSD_MARSHALL_PALMER || m == RP_DSD_GAMMA ||
         m == RP_DSD_NORMALIZED_GAMMA_D0 || m == RP_DSD_NORMALIZED_GAMMA_DM;
}

/* Structural check of a DSD handed in by a caller (it may have been edited by hand). */
static rp_status check_dsd(const rp_dsd *d, rp_error *err) {
  if (d == NULL) return rp_error_set(err, RP_EINVAL, "DSD is NULL");
  if (!(d->dmin_mm >= 0.0) || !(d->dmax_mm > d->dmin_mm))
    return rp_error_set(err, RP_EINVAL, "DSD truncation [%g, %g] mm is not an interval",
                        d->dmin_mm, d->dmax_mm);
  if (is_analytic(d->model)) {
    if (!isfinite(d->n0) || d->n0 <= 0.0 || !isfinite(d->lambda_per_mm) ||
        d->lambda_per_mm <= 0.0 || !isfinite(d->mu))
      return rp_error_set(err, RP_EINVAL,
                          "%s DSD: gamma form N0 = %g, mu = %g, Lambda = %g is not valid",
                          rp_dsd_model_name(d->model), d->n0, d->mu, d->lambda_per_mm);
    return RP_OK;
  }
  if (d->model == RP_DSD_SPECTRUM) {
    if (d->n_bins == 0 || !d->bin_center_mm || !d->bin_width_mm || !d->bin_conc_m3_mm)
      return rp_error_set(err, RP_EINVAL, "spectrum DSD has no bins");
    return RP_OK;
  }
  return rp_error_set(err, RP_EINVAL, "DSD model %d unknown", (int)d->model);
}

/* ---- constructors ------------------------------------------------------------- */

rp_status rp_dsd_exponential(rp_dsd *d, double n0, double lambda_per_mm, rp_error *err) {
  if (d == NULL) return rp_error_set(err, RP_EINVAL, "exponential DSD: output is NULL");
  RP_TRY(check_positive("exponential", "N0", n0, "m^-3 mm^-1", err));
  RP_TRY(check_positive("exponential", "Lambda", lambda_per_mm, "mm^-1", err));
  RP_TRY(check_implied_lwc("exponential", n0, 0.0, lambda_per_mm, err));
  init_analytic(d, RP_DSD_EXPONENTIAL, n0, 0.0, lambda_per_mm);
  return RP_OK;
}

rp_status rp_dsd_marshall_palmer(rp_dsd *d, double rain_rate_mm_h, rp_error *err) {
  if (d == NULL) return rp_error_set(err, RP_EINVAL, "Marshall-Palmer DSD: output is NULL");
  RP_TRY(check_positive("Marshall-Palmer", "rain rate", rain_rate_mm_h, "mm/h", err));
  RP_TRY(check_range("Marshall-Palmer", "rain rate", rain_rate_mm_h, RP_DSD_RAIN_RATE_MIN,
                     RP_DSD_RAIN_RATE_MAX, "mm/h", err));
  init_analytic(d, RP_DSD_MARSHALL_PALMER, MP_N0_M3_MM, 0.0,
                MP_LAMBDA_COEF * pow(rain_rate_mm_h, MP_LAMBDA_EXP));
  d->rain_rate_mm_h = rain_rate_mm_h;
  return RP_OK;
}

rp_status rp_dsd_gamma(rp_dsd *d, double n0, double mu, double lambda_per_mm, rp_error *err) {
  if (d == NULL) return rp_error_set(err, RP_EINVAL, "gamma DSD: output is NULL");
  RP_TRY(check_positive("gamma", "N0", n0, "m^-3 mm^-(1+mu)", err));
  RP_TRY(check_mu("gamma", mu, err));
  RP_TRY(check_positive("gamma", "Lambda", lambda_per_mm, "mm^-1", err));
  RP_TRY(check_implied_lwc("gamma", n0, mu, lambda_per_mm, err));
  init_analytic(d, RP_DSD_GAMMA, n0, mu, lambda_per_mm);
  return RP_OK;
}

static rp_status normalized(rp_dsd *d, rp_dsd_model model, double nw, double dx_mm,
                            double mu, double c, const char *dx_name, rp_error *err) {
  const char *what = model == RP_DSD_NORMALIZED_GAMMA_D0 ? "normalized-gamma (D0)"
                                                         : "normalized-gamma (Dm)";
  if (d == NULL) return rp_error_set(err, RP_EINVAL, "%s DSD: output is NULL", what);
  RP_TRY(check_positive(what, "Nw", nw, "m^-3 mm^-1", err));
  RP_TRY(check_range(what, "Nw", nw, RP_DSD_NW_MIN, RP_DSD_NW_MAX, "m^-3 mm^-1", err));
  RP_TRY(check_positive(what, dx_name, dx_mm, "mm", err));
  if (dx_mm > RP_DSD_D_LIMIT_MM)
    return rp_error_set(err, RP_EDOM, "%s DSD: %s = %g mm outside (0, %g] mm", what,
                        dx_name, dx_mm, RP_DSD_D_LIMIT_MM);
  RP_TRY(check_mu(what, mu, err));
  /* N(D) = Nw f(mu) (D/Dx)^mu exp(-(c+mu) D/Dx) = N0 D^mu exp(-Lambda D) */
  double n0 = nw * rp_dsd_normalized_f(mu, c) * pow(dx_mm, -mu);
  if (!isfinite(n0) || n0 <= 0.0)
    return rp_error_set(err, RP_EDOM, "%s DSD: N0 = %g from Nw = %g, %s = %g mm, mu = %g "
                        "is not representable", what, n0, nw, dx_name, dx_mm, mu);
  RP_TRY(check_implied_lwc(what, n0, mu, (c + mu) / dx_mm, err));
  init_analytic(d, model, n0, mu, (c + mu) / dx_mm);
  d->nw_m3_mm = nw;
  if (model == RP_DSD_NORMALIZED_GAMMA_D0)
    d->d0_mm = dx_mm;
  else
    d->dm_mm = dx_mm;
  return RP_OK;
}

rp_status rp_dsd_normalized_gamma_d0(rp_dsd *d, double nw, double d0_mm, double mu,
                                     rp_error *err) {
  return normalized(d, RP_DSD_NORMALIZED_GAMMA_D0, nw, d0_mm, mu, RP_DSD_C_D0, "D0", err);
}

rp_status rp_dsd_normalized_gamma_dm(rp_dsd *d, double nw, double dm_mm, double mu,
                                     rp_error *err) {
  return normalized(d, RP_DSD_NORMALIZED_GAMMA_DM, nw, dm_mm, mu, RP_DSD_C_DM, "Dm", err);
}

rp_status rp_dsd_spectrum(rp_dsd *d, const double *center, const double *width,
                          const double *conc, size_t n, rp_error *err) {
  if (d == NULL) return rp_error_set(err, RP_EINVAL, "spectrum DSD: output is NULL");
  if (n == 0 || center == NULL || width == NULL || conc == NULL)
    return rp_error_set(err, RP_EINVAL, "spectrum DSD: no bins (n = %zu)", n);
  double lwc = 0.0;
  for (size_t i = 0; i < n; i++) {
    if (!isfinite(center[i]) || center[i] <= 0.0)
      return rp_error_set(err, RP_EINVAL, "spectrum DSD: bin %zu centre %g mm must be "
                          "finite and > 0", i, center[i]);
    if (!isfinite(width[i]) || width[i] <= 0.0)
      return rp_error_set(err, RP_EINVAL, "spectrum DSD: bin %zu (centre %g mm) width %g "
                          "mm must be finite and > 0", i, center[i], width[i]);
    if (center[i] - 0.5 * width[i] < -RP_DSD_BIN_SLACK_MM)
      return rp_error_set(err, RP_EINVAL, "spectrum DSD: bin %zu (centre %g mm, width %g "
                          "mm) extends below 0 mm", i, center[i], width[i]);
    if (!isfinite(conc[i]) || conc[i] < 0.0)
      return rp_error_set(err, RP_EINVAL, "spectrum DSD: bin %zu (centre %g mm) "
                          "concentration %g m^-3 mm^-1 must be finite and >= 0", i,
                          center[i], conc[i]);
    if (conc[i] > RP_DSD_CONC_MAX)
      return rp_error_set(err, RP_EDOM, "spectrum DSD: bin %zu (centre %g mm) "
                          "concentration %g m^-3 mm^-1 above %g m^-3 mm^-1", i, center[i],
                          conc[i], RP_DSD_CONC_MAX);
    if (center[i] <= RP_DSD_D_LIMIT_MM) /* bins above are never included */
      lwc += M_PI / 6.0 * RHO_W_G_MM3 * conc[i] * center[i] * center[i] * center[i] * width[i];
    if (i > 0) {
      if (!(center[i] > center[i - 1]))
        return rp_error_set(err, RP_EINVAL, "spectrum DSD: bin centres not increasing: "
                            "bin %zu %g mm after bin %zu %g mm", i, center[i], i - 1,
                            center[i - 1]);
      double upper_prev = center[i - 1] + 0.5 * width[i - 1];
      double lower = center[i] - 0.5 * width[i];
      if (upper_prev > lower + RP_DSD_BIN_SLACK_MM)
        return rp_error_set(err, RP_EINVAL, "spectrum DSD: bin %zu [%g, %g] mm overlaps "
                            "bin %zu [%g, %g] mm", i, lower, center[i] + 0.5 * width[i],
                            i - 1, center[i - 1] - 0.5 * width[i - 1], upper_prev);
    }
  }
  if (!(lwc <= RP_DSD_LWC_MAX))
    return rp_error_set(err, RP_EDOM, "spectrum DSD: liquid water content %g g m^-3 above %g "
                        "g m^-3", lwc, RP_DSD_LWC_MAX);
  if (center[0] - 0.5 * width[0] >= RP_DSD_D_LIMIT_MM)
    return rp_error_set(err, RP_EINVAL, "spectrum DSD: every bin lies above %g mm (first "
                        "bin centre %g mm)", RP_DSD_D_LIMIT_MM, center[0]);
  memset(d, 0, sizeof *d);
  d->model = RP_DSD_SPECTRUM;
  d->bin_center_mm = center;
  d->bin_width_mm = width;
  d->bin_conc_m3_mm = conc;
  d->n_bins = n;
  d->dmin_mm = fmax(0.0, center[0] - 0.5 * width[0]);
  d->dmax_mm = fmin(center[n - 1] + 0.5 * width[n - 1], RP_DSD_D_LIMIT_MM);
  return RP_OK;
}

rp_status rp_dsd_set_truncation(rp_dsd *d, double dmin_mm, double dmax_mm, rp_error *err) {
  if (d == NULL) return rp_error_set(err, RP_EINVAL, "DSD truncation: DSD is NULL");
  if (!isfinite(dmin_mm) || dmin_mm < 0.0)
    return rp_error_set(err, RP_EINVAL, "DSD truncation: dmin = %g mm must be finite and "
                        ">= 0", dmin_mm);
  if (isnan(dmax_mm) || dmax_mm <= dmin_mm)
    return rp_error_set(err, RP_EINVAL, "DSD truncation: dmax = %g mm must be > dmin = %g "
                        "mm", dmax_mm, dmin_mm);
  if (isfinite(dmax_mm) && dmax_mm > RP_DSD_D_LIMIT_MM)
    return rp_error_set(err, RP_EDOM, "DSD truncation: dmax = %g mm outside (0, %g] mm "
                        "(use infinity for an untruncated DSD)", dmax_mm,
                        RP_DSD_D_LIMIT_MM);
  d->dmin_mm = dmin_mm;
  d->dmax_mm = dmax_mm;
  return RP_OK;
}

/* ---- evaluation ----------------------------------------------------------------- */

/* Index of the bin that contains D (the last bin whose lower edge is <= D, if D is
 * not above its upper edge), or n when none does. */
static size_t spectrum_bin(const rp_dsd *d, double d_mm) {
  size_t lo = 0, hi = d->n_bins; /* find the last bin with lower edge <= D */
  while (lo < hi) {
    size_t mid = lo + (hi - lo) / 2;
    if (d->bin_center_mm[mid] - 0.5 * d->bin_width_mm[mid] <= d_mm)
      lo = mid + 1;
    else
      hi = mid;
  }
  if (lo == 0) return d->n_bins;
  size_t i = lo - 1;
  return d_mm <= d->bin_center_mm[i] + 0.5 * d->bin_width_mm[i] ? i : d->n_bins;
}

static bool bin_included(const rp_dsd *d, size_t i) {
  return d->bin_center_mm[i] >= d->dmin_mm && d->bin_center_mm[i] <= d->dmax_mm;
}

double rp_dsd_eval(const rp_dsd *d, double d_mm) {
  if (d == NULL || isnan(d_mm)) return (double)NAN;
  if (d_mm <= 0.0 || d_mm < d->dmin_mm || d_mm > d->dmax_mm) return 0.0;
  if (d->model == RP_DSD_SPECTRUM) {
    if (d->n_bins == 0 || d->bin_center_mm == NULL) return (double)NAN;
    size_t i = spectrum_bin(d, d_mm);
    return (i < d->n_bins && bin_included(d, i)) ? d->bin_conc_m3_mm[i] : 0.0;
  }
  if (!is_analytic(d->model)) return (double)NAN;
  return d->n0 * pow(d_mm, d->mu) * exp(-d->lambda_per_mm * d_mm);
}

/* (1/Gamma(a)) ∫_{x1}^{x2} t^(a-1) e^-t dt for a > 0 and 0 <= x1 < x2 <= inf. */
static rp_status gamma_window(double a, double x1, double x2, double *frac, rp_error *err) {
  gsl_sf_result r1 = {0.0, 0.0}, r2 = {0.0, 0.0};
  int s1 = GSL_SUCCESS, s2 = GSL_SUCCESS;
  if (x1 >= a) {
    /* right of the mode: Q(a, x1) - Q(a, x2), both <= ~1/2, no cancellation */
    s1 = gsl_sf_gamma_inc_Q_e(a, x1, &r1);
    if (isinf(x2))
      r2.val = 0.0;
    else
      s2 = gsl_sf_gamma_inc_Q_e(a, x2, &r2);
    *frac = r1.val - r2.val;
  } else {
    if (x1 == 0.0)
      r1.val = 0.0;
    else
      s1 = gsl_sf_gamma_inc_P_e(a, x1, &r1);
    if (isinf(x2))
      r2.val = 1.0;
    else
      s2 = gsl_sf_gamma_inc_P_e(a, x2, &r2);
    *frac = r2.val - r1.val;
  }
  if (s1 != GSL_SUCCESS || s2 != GSL_SUCCESS)
    return rp_error_set(err, RP_EGSL, "incomplete gamma function failed for a = %g on "
                        "[%g, %g]: %s", a, x1, x2,
                        gsl_strerror(s1 != GSL_SUCCESS ? s1 : s2));
  if (*frac < 0.0) *frac = 0.0; /* round-off when the window is far in a tail */
  return RP_OK;
}

static rp_status analytic_moment(const rp_dsd *d, double n, double *m, rp_error *err) {
  const double a = d->mu + n + 1.0;
  const double lam = d->lambda_per_mm;
  const double x1 = lam * d->dmin_mm;
  const double x2 = isinf(d->dmax_mm) ? HUGE_VAL : lam * d->dmax_mm;
  double val;
  if (a > 0.0) {
    double frac;
    RP_TRY(gamma_window(a, x1, x2, &frac, err));
    /* N0 Gamma(a) Lambda^-a frac, in logs: the factors can be far from 1. GSL's
     * ln Gamma, not lgamma(), which writes the global signgam (not thread-safe). */
    gsl_sf_result lg;
    const int sg = gsl_sf_lngamma_e(a, &lg);
    if (sg != GSL_SUCCESS)
      return rp_error_set(err, RP_EGSL, "ln Gamma(%g) failed: %s", a, gsl_strerror(sg));
    val = frac > 0.0 ? exp(log(d->n0) + lg.val - a * log(lam) + log(frac)) : 0.0;
  } else {
    if (x1 <= 0.0)
      return rp_error_set(err, RP_EDOM, "moment M%g of a %s DSD with mu = %g diverges at "
                          "D -> 0 (dmin = 0 mm)", n, rp_dsd_model_name(d->model), d->mu);
    gsl_sf_result r1, r2 = {0.0, 0.0};
    int s1 = gsl_sf_gamma_inc_e(a, x1, &r1);
    int s2 = isinf(x2) ? GSL_SUCCESS : gsl_sf_gamma_inc_e(a, x2, &r2);
    if (s1 != GSL_SUCCESS || s2 != GSL_SUCCESS)
      return rp_error_set(err, RP_EGSL, "upper incomplete gamma function failed for a = %g "
                          "on [%g, %g]: %s", a, x1, x2,
                          gsl_strerror(s1 != GSL_SUCCESS ? s1 : s2));
    double diff = r1.val - r2.val;
    val = diff > 0.0 ? exp(log(d->n0) - a * log(lam) + log(diff)) : 0.0;
  }
  if (!isfinite(val))
    return rp_error_set(err, RP_EDOM, "moment M%g of a %s DSD overflows (N0 = %g, mu = %g, "
                        "Lambda = %g mm^-1)", n, rp_dsd_model_name(d->model), d->n0, d->mu,
                        lam);
  *m = val;
  return RP_OK;
}

static double spectrum_moment(const rp_dsd *d, double n) {
  double sum = 0.0;
  for (size_t i = 0; i < d->n_bins; i++)
    if (bin_included(d, i))
      sum += d->bin_conc_m3_mm[i] * pow(d->bin_center_mm[i], n) * d->bin_width_mm[i];
  return sum;
}

rp_status rp_dsd_moment(const rp_dsd *d, double n, double *m, rp_error *err) {
  RP_TRY(check_dsd(d, err));
  if (m == NULL) return rp_error_set(err, RP_EINVAL, "DSD moment: output is NULL");
  if (!isfinite(n))
    return rp_error_set(err, RP_EINVAL, "DSD moment: order n = %g must be finite", n);
  if (d->model == RP_DSD_SPECTRUM) {
    double v = spectrum_moment(d, n);
    if (!isfinite(v))
      return rp_error_set(err, RP_EDOM, "moment M%g of the spectrum overflows", n);
    *m = v;
    return RP_OK;
  }
  return analytic_moment(d, n, m, err);
}

/* ---- rain rate: adaptive Gauss–Kronrod 7/15 ------------------------------------ */

/* QK15 abscissae and weights (Piessens et al. 1983, QUADPACK): xgk[1,3,5,7] are the
 * 7-point Gauss nodes with weights wg. */
static const double XGK[8] = {
    0.991455371120812639206854697526329, 0.949107912342758524526189684047851,
    0.864864423359769072789712788640926, 0.741531185599394439863864773280788,
    0.586087235467691130294144845693013, 0.405845151377397166906606412076961,
    0.207784955007898467600689403773245, 0.000000000000000000000000000000000};
static const double WGK[8] = {
    0.022935322010529224963732008058970, 0.063092092629978553290700663189204,
    0.104790010322250183839876322541518, 0.140653259715525918745189590510238,
    0.169004726639267902826583426598550, 0.190350578064785409913256402421014,
    0.204432940075298892414161999234649, 0.209482141084727828012999174891714};
static const double WG[4] = {
    0.129484966168869693270611432679082, 0.279705391489276667901467771423780,
    0.381830050505118944950369775488975, 0.417959183673469387755102040816327};

typedef struct {
  const rp_dsd *dsd;
  rp_fall_model fall;
  double density_factor;
} rate_ctx;

/* v(D) D^3 N(D) with v in m/s */
static rp_status rate_integrand(const rate_ctx *c, double d_mm, double *f, rp_error *err) {
  double v = 0.0;
  RP_TRY(rp_fallspeed_eval(c->fall, d_mm, &v, err));
  *f = c->density_factor * v * d_mm * d_mm * d_mm * rp_dsd_eval(c->dsd, d_mm);
  return RP_OK;
}

static rp_status qk15(const rate_ctx *c, double a, double b, double *res, double *abserr,
                      rp_error *err) {
  const double center = 0.5 * (a + b), half = 0.5 * (b - a);
  double fc;
  RP_TRY(rate_integrand(c, center, &fc, err));
  double rk = fc * WGK[7], rg = fc * WG[3];
  for (int j = 0; j < 7; j++) {
    double f1, f2, dx = half * XGK[j];
    RP_TRY(rate_integrand(c, center - dx, &f1, err));
    RP_TRY(rate_integrand(c, center + dx, &f2, err));
    rk += WGK[j] * (f1 + f2);
    if (j % 2 == 1) rg += WG[j / 2] * (f1 + f2);
  }
  *res = rk * half;
  *abserr = fabs((rk - rg) * half);
  return RP_OK;
}

static rp_status integrate_rate(const rate_ctx *c, double lo, double hi, double *result,
                                rp_error *err) {
  double ia[QUAD_MAX_INTERVALS], ib[QUAD_MAX_INTERVALS];
  double ir[QUAD_MAX_INTERVALS], ie[QUAD_MAX_INTERVALS];
  size_t n = 1;
  ia[0] = lo;
  ib[0] = hi;
  RP_TRY(qk15(c, lo, hi, &ir[0], &ie[0], err));
  for (;;) {
    double total = 0.0, total_err = 0.0;
    size_t worst = 0;
    for (size_t i = 0; i < n; i++) {
      total += ir[i];
      total_err += ie[i];
      if (ie[i] > ie[worst]) worst = i;
    }
    /* the floor guards a zero integrand (e.g. everything below the fall-speed cut) */
    if (total_err <= fmax(QUAD_EPSREL * fabs(total), 1e-300)) {
      *result = total;
      return RP_OK;
    }
    double a = ia[worst], b = ib[worst], mid = 0.5 * (a + b);
    if (n == QUAD_MAX_INTERVALS || !(mid > a && mid < b))
      return rp_error_set(err, RP_ENOCONV, "rain-rate quadrature over [%g, %g] mm did not "
                          "reach relative error %g (estimate %g of %g after %zu intervals)",
                          lo, hi, QUAD_EPSREL, total_err, total, n);
    RP_TRY(qk15(c, a, mid, &ir[worst], &ie[worst], err));
    ib[worst] = mid;
    ia[n] = mid;
    ib[n] = b;
    RP_TRY(qk15(c, mid, b, &ir[n], &ie[n], err));
    n++;
  }
}

static rp_status rain_rate(const rp_dsd *d, rp_fall_model fall, double density_factor,
                           double *r_mm_h, rp_error *err) {
  /* 6 pi 1e-4 converts ∫ v[m/s] D^3[mm^3] N[m^-3 mm^-1] dD[mm] to mm/h (see header) */
  const double k = 6.0 * M_PI * 1e-4;
  rate_ctx c = {d, fall, density_factor};
  if (d->model == RP_DSD_SPECTRUM) {
    double sum = 0.0;
    for (size_t i = 0; i < d->n_bins; i++) {
      if (!bin_included(d, i)) continue;
      double f;
      RP_TRY(rate_integrand(&c, d->bin_center_mm[i], &f, err));
      sum += f * d->bin_width_mm[i];
    }
    *r_mm_h = k * sum;
    return RP_OK;
  }
  double hi = fmin(d->dmax_mm, RP_DSD_D_LIMIT_MM), integral = 0.0;
  if (hi > d->dmin_mm) RP_TRY(integrate_rate(&c, d->dmin_mm, hi, &integral, err));
  *r_mm_h = k * integral;
  return RP_OK;
}

/* ---- median volume diameter -------------------------------------------------------- */

/* Cumulative M3 fraction at D minus 1/2 (analytic models). */
static rp_status m3_fraction(const rp_dsd *d, double total_frac, double d_mm, double *g,
                             rp_error *err) {
  double frac;
  RP_TRY(gamma_window(d->mu + 4.0, d->lambda_per_mm * d->dmin_mm, d->lambda_per_mm * d_mm,
                      &frac, err));
  *g = frac / total_frac - 0.5;
  return RP_OK;
}

static rp_status analytic_d0(const rp_dsd *d, double *d0, rp_error *err) {
  const double a = d->mu + 4.0, lam = d->lambda_per_mm;
  double total;
  RP_TRY(gamma_window(a, lam * d->dmin_mm, isinf(d->dmax_mm) ? HUGE_VAL : lam * d->dmax_mm,
                      &total, err));
  if (!(total > 0.0))
    return rp_error_set(err, RP_EDOM, "%s DSD holds no water in [%g, %g] mm: D0 undefined",
                        rp_dsd_model_name(d->model), d->dmin_mm, d->dmax_mm);
  double lo = d->dmin_mm, hi = d->dmax_mm, glo = -0.5, ghi = 0.5;
  if (isinf(hi)) { /* untruncated: walk out from the mean of D^3 N until past the median */
    hi = fmax(lo, a / lam);
    for (int k = 0;; k++) {
      hi *= 2.0;
      RP_TRY(m3_fraction(d, total, hi, &ghi, err));
      if (ghi > 0.0) break;
      if (k == 60)
        return rp_error_set(err, RP_ENOCONV, "D0: no bracket found up to %g mm", hi);
    }
  }
  /* Illinois regula falsi: keeps [lo, hi] with g(lo) < 0 < g(hi) */
  int side = 0;
  for (int it = 0; it < ROOT_MAX_ITER; it++) {
    double x = (lo * ghi - hi * glo) / (ghi - glo);
    if (!(x > lo && x < hi)) x = 0.5 * (lo + hi);
    double gx;
    RP_TRY(m3_fraction(d, total, x, &gx, err));
    if (gx == 0.0) {
      *d0 = x;
      return RP_OK;
    }
    if (gx < 0.0) {
      lo = x, glo = gx;
      if (side == -1) ghi *= 0.5;
      side = -1;
    } else {
      hi = x, ghi = gx;
      if (side == 1) glo *= 0.5;
      side = 1;
    }
    if (hi - lo <= ROOT_XTOL_REL * hi) {
      *d0 = 0.5 * (lo + hi);
      return RP_OK;
    }
  }
  return rp_error_set(err, RP_ENOCONV, "D0 root finder did not converge in %d iterations "
                      "(bracket [%.17g, %.17g] mm)", ROOT_MAX_ITER, lo, hi);
}

static double spectrum_d0(const rp_dsd *d, double m3) {
  const double half = 0.5 * m3;
  double cum = 0.0;
  for (size_t i = 0; i < d->n_bins; i++) {
    if (!bin_included(d, i)) continue;
    double c = d->bin_center_mm[i], w = d->bin_width_mm[i];
    double part = d->bin_conc_m3_mm[i] * c * c * c * w;
    if (part > 0.0 && cum + part >= half) /* linear inside the bin's [lower, upper] */
      return (c - 0.5 * w) + (half - cum) / part * w;
    cum += part;
  }
  return (double)NAN; /* not reached when m3 > 0 */
}

rp_status rp_dsd_moments_eval(const rp_dsd *d, rp_fall_model fall, double density_factor,
                              rp_dsd_moments *out, rp_error *err) {
  RP_TRY(check_dsd(d, err));
  if (out == NULL) return rp_error_set(err, RP_EINVAL, "DSD moments: output is NULL");
  if (!isfinite(density_factor) || density_factor <= 0.0)
    return rp_error_set(err, RP_EINVAL, "DSD moments: air-density factor %g must be finite "
                        "and > 0", density_factor);
  double m0, m3, m4, m5, m6;
  RP_TRY(rp_dsd_moment(d, 0.0, &m0, err));
  RP_TRY(rp_dsd_moment(d, 3.0, &m3, err));
  RP_TRY(rp_dsd_moment(d, 4.0, &m4, err));
  RP_TRY(rp_dsd_moment(d, 5.0, &m5, err));
  RP_TRY(rp_dsd_moment(d, 6.0, &m6, err));
  if (!(m3 > 0.0))
    return rp_error_set(err, RP_EDOM, "%s DSD holds no water in [%g, %g] mm (M3 = 0): Dm, "
                        "D0 and Nw undefined", rp_dsd_model_name(d->model), d->dmin_mm,
                        d->dmax_mm);
  rp_dsd_moments r;
  r.nt_m3 = m0;
  r.lwc_g_m3 = M_PI / 6.0 * RHO_W_G_MM3 * m3; /* g mm^-3 * mm^3 m^-3 = g m^-3 */
  r.dm_mm = m4 / m3;
  if (d->model == RP_DSD_SPECTRUM) {
    double s = 0.0; /* direct sum: no cancellation for narrow spectra */
    for (size_t i = 0; i < d->n_bins; i++) {
      if (!bin_included(d, i)) continue;
      double c = d->bin_center_mm[i];
      s += (c - r.dm_mm) * (c - r.dm_mm) * c * c * c * d->bin_conc_m3_mm[i] *
           d->bin_width_mm[i];
    }
    r.sigma_m_mm = sqrt(s / m3);
    r.d0_mm = spectrum_d0(d, m3);
  } else {
    r.sigma_m_mm = sqrt(fmax(m5 / m3 - r.dm_mm * r.dm_mm, 0.0));
    RP_TRY(analytic_d0(d, &r.d0_mm, err));
  }
  /* Nw = 4^4 W / (pi rho_w Dm^4): g m^-3 / (g mm^-3 mm^4) = m^-3 mm^-1 */
  r.nw_m3_mm = 256.0 * r.lwc_g_m3 / (M_PI * RHO_W_G_MM3 * pow(r.dm_mm, 4.0));
  /* Nw(D0) = 3.67^4 W / (pi rho_w D0^4) (Bringi et al. 2003) */
  r.nw_d0_m3_mm = pow(RP_DSD_C_D0, 4.0) * r.lwc_g_m3 / (M_PI * RHO_W_G_MM3 * pow(r.d0_mm, 4.0));
  RP_TRY(rain_rate(d, fall, density_factor, &r.rain_rate_mm_h, err));
  r.z_rayleigh_mm6_m3 = m6;
  r.z_rayleigh_dbz = 10.0 * log10(m6);
  const struct { const char *name; double v; } fields[] = {
      {"Nt", r.nt_m3}, {"LWC", r.lwc_g_m3}, {"rain rate", r.rain_rate_mm_h}, {"Dm", r.dm_mm},
      {"D0", r.d0_mm}, {"sigma_m", r.sigma_m_mm}, {"Nw", r.nw_m3_mm}, {"Nw(D0)", r.nw_d0_m3_mm},
      {"Z", r.z_rayleigh_mm6_m3}, {"dBZ", r.z_rayleigh_dbz}};
  for (size_t i = 0; i < sizeof fields / sizeof fields[0]; i++)
    if (!isfinite(fields[i].v))
      return rp_error_set(err, RP_EDOM, "%s DSD: %s = %g is not finite (parameters outside a "
                          "physical range)", rp_dsd_model_name(d->model), fields[i].name,
                          fields[i].v);
  if (r.lwc_g_m3 > RP_DSD_LWC_MAX)
    return rp_error_set(err, RP_EDOM, "%s DSD: liquid water content %g g m^-3 above %g g m^-3",
                        rp_dsd_model_name(d->model), r.lwc_g_m3, RP_DSD_LWC_MAX);
  /* a window far in the tail (e.g. Lambda = 145 mm^-1 over [5.2, 7] mm) leaves M3 a
   * denormal and the LWC 0 after rounding: no water, not a result (found by fuzz_preset) */
  if (r.lwc_g_m3 < RP_DSD_LWC_MIN)
    return rp_error_set(err, RP_EDOM, "%s DSD holds almost no water in [%g, %g] mm (LWC %g "
                        "g m^-3, below %g g m^-3)", rp_dsd_model_name(d->model), d->dmin_mm,
                        d->dmax_mm, r.lwc_g_m3, RP_DSD_LWC_MIN);
  *out = r;
  return RP_OK;
}
