/* fit.h — power-law relations between radar and rain variables (R(Z), R(KDP),
 * R(Z, ZDR), A(KDP), ...) fitted on plain arrays, with 95 % confidence intervals, and
 * the skill of a relation on held-out data.
 *
 * Fits (equations in docs/method.md §9):
 *   one predictor   y = a x^b          least squares of ln y = ln a + b ln x
 *                                      (GSL gsl_fit_linear)
 *   two predictors  y = a x1^b x2^c    least squares of ln y = ln a + b ln x1 + c ln x2
 *                                      (GSL gsl_multifit_linear, SVD)
 *   optional refinement: nonlinear least squares of y itself (not ln y), GSL
 *   gsl_multifit_nlinear trust region (Levenberg–Marquardt), started from the log fit.
 * Confidence intervals: estimate ± t_{0.975, n-p} × standard error, with the standard
 * errors from the covariance matrix scaled by the residual variance (n - p degrees of
 * freedom, p = 2 or 3 parameters). For the log fits the interval of a is exp() of the
 * interval of ln a (not symmetric about a).
 * The log fit estimates the median of y given x (ln y symmetric about ln a + b ln x);
 * the nonlinear fit estimates the mean and is dominated by the largest y. For lognormal
 * scatter of SD s in ln y the mean is exp(s^2/2) times the median (4.6 % for s = 0.3).
 *
 * Threshold: points with x1 < x1_min are dropped before fitting (counted in
 * n_below_min); all kept points must be finite and positive.
 *
 * Held-out split: member i of an ensemble is held out when i % RP_FIT_HOLDOUT_EVERY ==
 * RP_FIT_HOLDOUT_EVERY - 1 (every 4th member; the rest are fitted). Ensemble members
 * are independent draws, so this is a random 75/25 split that needs no second seed.
 *
 * Memory: the fit functions allocate O(n) scratch (freed before returning). */
#ifndef RAINPRINT_FIT_H
#define RAINPRINT_FIT_H

#include <stddef.h>

#include "rainprint/status.h"

/* Fewest points a fit accepts after the threshold. With 10 points a 2- (3-) parameter
 * fit keeps 8 (7) degrees of freedom, where t_{0.975} = 2.31 (2.36): intervals stay
 * finite and meaningful; fewer points are almost certainly a threshold mistake. */
#define RP_FIT_MIN_POINTS 10
#define RP_FIT_CONFIDENCE 0.95
#define RP_FIT_HOLDOUT_EVERY 4
/* Iteration limit of the nonlinear refinement in rp_fit_power1/2. */
#define RP_FIT_NLINEAR_MAX_ITER 200

typedef struct {
  double a, b, c;                   /* y = a x1^b x2^c; c = 0 for one predictor */
  double a_ci[2], b_ci[2], c_ci[2]; /* 95 % intervals [low, high]; c_ci = {0, 0} for one */
  size_t n_fit;                     /* points used */
  int n_predictors;                 /* 1 or 2 */
  size_t n_below_min;               /* points dropped because x1 < x1_min */
  int nonlinear;                    /* 0: log-space fit; 1: refined on y itself */
  size_t n_iter;                    /* iterations of the refinement (0 for the log fit) */
  double resid_sd;                  /* residual standard deviation: of ln y for the log
                                       fit, of y (its units) for the refined fit */
} rp_fit_power;

/* Fit y = a x^b to the points (x[i], y[i]), i < n, with x[i] >= x_min, in log space;
 * with nonlinear != 0 then refine by nonlinear least squares on y
 * (rp_fit_power_refine with RP_FIT_NLINEAR_MAX_ITER).
 * Preconditions: x, y of n entries (borrowed); x_min finite (0 keeps all).
 * Returns RP_OK and fills *out; RP_EINVAL for NULL arguments, non-finite x_min, fewer
 * than RP_FIT_MIN_POINTS points left, a kept point that is not finite and > 0 (message
 * names the index and value), or x taking a single value; RP_ENOCONV when the
 * refinement does not converge; RP_EGSL for another GSL failure; RP_ENOMEM.
 * *out is unchanged on error. */
rp_status rp_fit_power1(const double *x, const double *y, size_t n, double x_min,
                        int nonlinear, rp_fit_power *out, rp_error *err);

/* Fit y = a x1^b x2^c in log space (e.g. R(Zh, ZDR) with ZDR as the linear ratio
 * 10^(ZDR/10)); the threshold applies to x1 only. Same options as rp_fit_power1.
 * Returns as rp_fit_power1, plus RP_EINVAL when ln x1, ln x2 and the constant are
 * linearly dependent (rank < 3 at relative tolerance 1e-10). */
rp_status rp_fit_power2(const double *x1, const double *x2, const double *y, size_t n,
                        double x1_min, int nonlinear, rp_fit_power *out, rp_error *err);

/* Refine *fit (from rp_fit_power1 with x2 = NULL, or rp_fit_power2) by nonlinear least
 * squares of y = a x1^b [x2^c] on the same points and threshold, starting from fit's
 * coefficients, with at most max_iter trust-region iterations (xtol 1e-10,
 * gtol 1e-10). On success *fit gets the new coefficients and symmetric 95 %
 * intervals, nonlinear = 1, n_iter and resid_sd (in y units).
 * Returns RP_OK; RP_EINVAL (NULL data or fit, max_iter = 0, x2 present or absent
 * against fit->n_predictors, or a data error as in rp_fit_power1/2); RP_ENOCONV (no
 * convergence within max_iter, or no step could improve a start that is not a
 * minimum); RP_EGSL; RP_ENOMEM. *fit is unchanged on error. */
rp_status rp_fit_power_refine(const double *x1, const double *x2, const double *y, size_t n,
                              double x1_min, size_t max_iter, rp_fit_power *fit,
                              rp_error *err);

/* a x1^b x2^c (x2 ignored for one predictor). NaN for a NULL f. */
double rp_fit_power_eval(const rp_fit_power *f, double x1, double x2);

typedef struct {
  double bias_pct; /* 100 (sum est - sum truth) / sum truth */
  double rmse;     /* sqrt(mean (est - truth)^2), units of the variable */
  double fse_pct;  /* fractional standard error 100 rmse / mean(truth) */
  double corr;     /* Pearson correlation of est and truth */
  size_t n;
} rp_fit_skill;

/* Skill of estimates est[i] against truth[i], i < n (n >= 2).
 * Returns RP_OK; RP_EINVAL for NULL arguments, n < 2 or a value that is not finite
 * (message names the index); RP_EDOM when sum(truth) <= 0 (bias and FSE undefined) or
 * est or truth has zero variance (correlation undefined). *out unchanged on error. */
rp_status rp_fit_skill_eval(const double *est, const double *truth, size_t n,
                            rp_fit_skill *out, rp_error *err);

/* 1 when member i is held out (i % RP_FIT_HOLDOUT_EVERY == RP_FIT_HOLDOUT_EVERY - 1). */
int rp_fit_is_held_out(size_t i);

/* Split v[0..n-1] into fit_part (kept members, in order) and held_part (held-out
 * members, in order), both caller-allocated with room for n entries (exact sizes:
 * n - n/4 and n/4). *n_fit and *n_held get the counts. Returns RP_OK or RP_EINVAL
 * for NULL arguments. */
rp_status rp_fit_split(const double *v, size_t n, double *fit_part, double *held_part,
                       size_t *n_fit, size_t *n_held, rp_error *err);

#endif
