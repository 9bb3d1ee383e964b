/* fit.c — power-law relations y = a x1^b [x2^c] by least squares, their confidence
 * intervals, and skill scores on held-out data.
 *
 * Method (docs/method.md §9):
 * - Log fit: ordinary least squares of ln y on (1, ln x1 [, ln x2]); one predictor with
 *   gsl_fit_linear, two with gsl_multifit_linear (SVD; rank checked with
 *   gsl_multifit_linear_rank). Both return the covariance already scaled by
 *   s^2 = SSE/(n - p) (GSL reference manual, "Linear regression" / "Multi-parameter
 *   regression"), so the standard error of coefficient j is sqrt(cov_jj) and the 95 %
 *   interval is coef ± t sqrt(cov_jj), t = gsl_cdf_tdist_Pinv(0.975, n - p) (Student's
 *   t interval of a regression coefficient under normal errors in ln y).
 *   a = exp(ln a); its interval is exp() of the interval of ln a.
 * - Refinement: minimise sum (a x1^b x2^c - y)^2 with gsl_multifit_nlinear (trust region,
 *   Levenberg–Marquardt, analytic Jacobian [x1^b x2^c, f ln x1, f ln x2]) from the log
 *   fit; interval from s^2 (J^T J)^-1 at the solution with the same t quantile.
 *   The trust-region driver reports "no progress" when it starts at an exact minimum
 *   (e.g. noise-free data: the log fit is already the answer); that case is accepted
 *   only when the residual vector is at rounding level or orthogonal to the Jacobian.
 * - Skill: bias % = 100 (sum est - sum truth)/sum truth, RMSE, FSE % = 100 RMSE/mean
 *   truth, Pearson correlation (gsl_stats_correlation). */
#include "rainprint/fit.h"

#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_blas.h>
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_fit.h>
#include <gsl/gsl_multifit.h>
#include <gsl/gsl_multifit_nlinear.h>
#include <gsl/gsl_statistics_double.h>

/* ---- data selection ---------------------------------------------------------------- */

/* The kept points, copied as logarithms ln x1, ln x2 (NULL for one predictor), ln y,
 * and y itself (for the refinement); n of them. */
typedef struct {
  double *lx1, *lx2, *ly, *y;
  size_t n, n_below;
} points;

static void points_free(points *p) {
  free(p->lx1);
  free(p->lx2);
  free(p->ly);
  free(p->y);
}

static rp_status check_point(const char *what, size_t i, double v, rp_error *err) {
  if (isfinite(v) && v > 0.0) return RP_OK;
  return rp_error_set(err, RP_EINVAL, "power-law fit: point %zu: %s = %g must be finite and "
                      "> 0 for a fit in log space", i, what, v);
}

static rp_status select_points(const double *x1, const double *x2, const double *y, size_t n,
                               double x1_min, points *p, rp_error *err) {
  memset(p, 0, sizeof *p);
  if (x1 == NULL || y == NULL)
    return rp_error_set(err, RP_EINVAL, "power-law fit: data array is NULL");
  if (!isfinite(x1_min))
    return rp_error_set(err, RP_EINVAL, "power-law fit: threshold x_min = %g is not finite",
                        x1_min);
  size_t kept = 0;
  for (size_t i = 0; i < n; i++) {
    if (x1[i] < x1_min) continue; /* NaN is kept, then refused below */
    RP_TRY(check_point(x2 ? "x1" : "x", i, x1[i], err));
    if (x2) RP_TRY(check_point("x2", i, x2[i], err));
    RP_TRY(check_point("y", i, y[i], err));
    kept++;
  }
  if (kept < RP_FIT_MIN_POINTS)
    return rp_error_set(err, RP_EINVAL, "power-law fit: only %zu of %zu points have x >= %g; "
                        "need at least %d", kept, n, x1_min, RP_FIT_MIN_POINTS);
  p->lx1 = malloc(kept * sizeof *p->lx1);
  p->ly = malloc(kept * sizeof *p->ly);
  p->y = malloc(kept * sizeof *p->y);
  p->lx2 = x2 ? malloc(kept * sizeof *p->lx2) : NULL;
  if (p->lx1 == NULL || p->ly == NULL || p->y == NULL || (x2 && p->lx2 == NULL)) {
    points_free(p);
    memset(p, 0, sizeof *p);
    return rp_error_set(err, RP_ENOMEM, "power-law fit: out of memory for %zu points", kept);
  }
  for (size_t i = 0, j = 0; i < n; i++) {
    if (x1[i] < x1_min) continue;
    p->lx1[j] = log(x1[i]);
    if (x2) p->lx2[j] = log(x2[i]);
    p->ly[j] = log(y[i]);
    p->y[j] = y[i];
    j++;
  }
  p->n = kept;
  p->n_below = n - kept;
  return RP_OK;
}

static double t_quantile(size_t dof) {
  return gsl_cdf_tdist_Pinv(0.5 + 0.5 * RP_FIT_CONFIDENCE, (double)dof);
}

/* ---- nonlinear refinement ----------------------------------------------------------- */

/* x1^b [x2^c] = exp(b ln x1 [+ c ln x2]) at point i for coefficients c = (a, b [, c]). */
static double shape(const points *p, size_t i, const gsl_vector *c) {
  double e = gsl_vector_get(c, 1) * p->lx1[i];
  if (p->lx2) e += gsl_vector_get(c, 2) * p->lx2[i];
  return exp(e);
}

static int nl_f(const gsl_vector *c, void *data, gsl_vector *f) {
  const points *p = data;
  double a = gsl_vector_get(c, 0);
  for (size_t i = 0; i < p->n; i++) gsl_vector_set(f, i, a * shape(p, i, c) - p->y[i]);
  return GSL_SUCCESS;
}

static int nl_df(const gsl_vector *c, void *data, gsl_matrix *J) {
  const points *p = data;
  double a = gsl_vector_get(c, 0);
  for (size_t i = 0; i < p->n; i++) {
    double g = shape(p, i, c), m = a * g;
    gsl_matrix_set(J, i, 0, g);
    gsl_matrix_set(J, i, 1, m * p->lx1[i]);
    if (p->lx2) gsl_matrix_set(J, i, 2, m * p->lx2[i]);
  }
  return GSL_SUCCESS;
}

/* True when the start is already a least-squares minimum: residuals at rounding level
 * relative to y, or every Jacobian column orthogonal to the residual (cosine <= 1e-8). */
static int start_is_minimum(const gsl_vector *f, const gsl_matrix *J, const points *p) {
  double fn = gsl_blas_dnrm2(f), yn = 0.0;
  for (size_t i = 0; i < p->n; i++) yn = hypot(yn, p->y[i]);
  if (fn <= 1e-12 * yn) return 1;
  for (size_t j = 0; j < J->size2; j++) {
    gsl_vector_const_view col = gsl_matrix_const_column(J, j);
    double dot;
    gsl_blas_ddot(&col.vector, f, &dot);
    double cn = gsl_blas_dnrm2(&col.vector);
    if (fabs(dot) > 1e-8 * cn * fn) return 0;
  }
  return 1;
}

static rp_status refine_points(const points *p, size_t max_iter, rp_fit_power *fit,
                               rp_error *err) {
  const size_t np = p->lx2 ? 3 : 2;
  if (p->n <= np)
    return rp_error_set(err, RP_EINVAL, "nonlinear fit: %zu points for %zu parameters", p->n,
                        np);
  gsl_multifit_nlinear_parameters par = gsl_multifit_nlinear_default_parameters();
  /* Normal equations (p x p) instead of QR of the n x p Jacobian: several times faster
   * for n ~ 1e5 and well conditioned for 2-3 parameters in (a, b, c). */
  par.solver = gsl_multifit_nlinear_solver_cholesky;
  gsl_multifit_nlinear_fdf fdf;
  memset(&fdf, 0, sizeof fdf);
  fdf.f = nl_f;
  fdf.df = nl_df;
  fdf.n = p->n;
  fdf.p = np;
  fdf.params = (void *)p;
  gsl_multifit_nlinear_workspace *w =
      gsl_multifit_nlinear_alloc(gsl_multifit_nlinear_trust, &par, p->n, np);
  gsl_vector *c0 = gsl_vector_alloc(np);
  gsl_matrix *cov = gsl_matrix_alloc(np, np);
  rp_status s = RP_OK;
  if (w == NULL || c0 == NULL || cov == NULL) {
    s = rp_error_set(err, RP_ENOMEM, "nonlinear fit: out of memory for %zu points", p->n);
    goto done;
  }
  gsl_vector_set(c0, 0, fit->a);
  gsl_vector_set(c0, 1, fit->b);
  if (np == 3) gsl_vector_set(c0, 2, fit->c);
  int gs = gsl_multifit_nlinear_init(c0, &fdf, w);
  if (gs != GSL_SUCCESS) {
    s = rp_error_set(err, RP_EGSL, "nonlinear fit: initialisation failed: %s", gsl_strerror(gs));
    goto done;
  }
  int info = 0;
  gs = gsl_multifit_nlinear_driver(max_iter, 1e-10, 1e-10, 0.0, NULL, NULL, &info, w);
  size_t iters = gsl_multifit_nlinear_niter(w);
  gsl_vector *f = gsl_multifit_nlinear_residual(w);
  gsl_matrix *J = gsl_multifit_nlinear_jac(w);
  if (gs != GSL_SUCCESS) {
    /* The driver returns GSL_EMAXITER with info = GSL_ENOPROG when not even the first
     * step reduced the cost: fine if the start already is the minimum. */
    int no_first_step = gs == GSL_EMAXITER && info == GSL_ENOPROG;
    if (no_first_step && start_is_minimum(f, J, p)) {
      iters = 0;
    } else if (no_first_step) {
      s = rp_error_set(err, RP_ENOCONV, "nonlinear power-law fit made no progress from the "
                       "log-space start (%zu points)", p->n);
      goto done;
    } else {
      s = rp_error_set(err, RP_ENOCONV, "nonlinear power-law fit did not converge after %zu "
                       "iterations (limit %zu, %zu points): %s", iters, max_iter, p->n,
                       gsl_strerror(gs));
      goto done;
    }
  }
  const gsl_vector *c = gsl_multifit_nlinear_position(w);
  for (size_t j = 0; j < np; j++)
    if (!isfinite(gsl_vector_get(c, j))) {
      s = rp_error_set(err, RP_ENOCONV, "nonlinear power-law fit ended on a non-finite "
                       "coefficient %zu", j);
      goto done;
    }
  double chisq;
  gsl_blas_ddot(f, f, &chisq);
  gs = gsl_multifit_nlinear_covar(J, 0.0, cov);
  if (gs != GSL_SUCCESS) {
    s = rp_error_set(err, RP_EGSL, "nonlinear fit: covariance failed: %s", gsl_strerror(gs));
    goto done;
  }
  double s2 = chisq / (double)(p->n - np), t = t_quantile(p->n - np);
  rp_fit_power r = *fit;
  double *coef[3] = {&r.a, &r.b, &r.c}, *ci[3] = {r.a_ci, r.b_ci, r.c_ci};
  for (size_t j = 0; j < np; j++) {
    double half = t * sqrt(s2 * gsl_matrix_get(cov, j, j));
    *coef[j] = gsl_vector_get(c, j);
    ci[j][0] = *coef[j] - half;
    ci[j][1] = *coef[j] + half;
  }
  r.nonlinear = 1;
  r.n_iter = iters;
  r.resid_sd = sqrt(s2);
  *fit = r;
done:
  gsl_multifit_nlinear_free(w);
  gsl_vector_free(c0);
  gsl_matrix_free(cov);
  return s;
}

/* ---- log fits ----------------------------------------------------------------------- */

static rp_status log_fit1(const points *p, rp_fit_power *r, rp_error *err) {
  const size_t n = p->n;
  double lo = (double)INFINITY, hi = -(double)INFINITY;
  for (size_t i = 0; i < n; i++) {
    lo = fmin(lo, p->lx1[i]);
    hi = fmax(hi, p->lx1[i]);
  }
  if (!(hi > lo))
    return rp_error_set(err, RP_EINVAL, "power-law fit: all %zu kept points have x = %g; the "
                        "exponent is undefined", n, exp(p->lx1[0]));
  double c0, c1, cov00, cov01, cov11, sse;
  int gs = gsl_fit_linear(p->lx1, 1, p->ly, 1, n, &c0, &c1, &cov00, &cov01, &cov11, &sse);
  if (gs != GSL_SUCCESS || !isfinite(c0) || !isfinite(c1))
    return rp_error_set(err, RP_EGSL, "power-law fit: linear regression failed: %s",
                        gsl_strerror(gs));
  double t = t_quantile(n - 2), ha = t * sqrt(cov00), hb = t * sqrt(cov11);
  memset(r, 0, sizeof *r);
  r->a = exp(c0);
  r->a_ci[0] = exp(c0 - ha);
  r->a_ci[1] = exp(c0 + ha);
  r->b = c1;
  r->b_ci[0] = c1 - hb;
  r->b_ci[1] = c1 + hb;
  r->resid_sd = sqrt(sse / (double)(n - 2));
  return RP_OK;
}

static rp_status log_fit2(const points *p, rp_fit_power *r, rp_error *err) {
  const size_t n = p->n;
  gsl_matrix *X = gsl_matrix_alloc(n, 3), *cov = gsl_matrix_alloc(3, 3);
  gsl_vector *Y = gsl_vector_alloc(n), *c = gsl_vector_alloc(3);
  gsl_multifit_linear_workspace *w = gsl_multifit_linear_alloc(n, 3);
  rp_status s = RP_OK;
  if (X == NULL || cov == NULL || Y == NULL || c == NULL || w == NULL) {
    s = rp_error_set(err, RP_ENOMEM, "power-law fit: out of memory for %zu points", n);
    goto done;
  }
  for (size_t i = 0; i < n; i++) {
    gsl_matrix_set(X, i, 0, 1.0);
    gsl_matrix_set(X, i, 1, p->lx1[i]);
    gsl_matrix_set(X, i, 2, p->lx2[i]);
    gsl_vector_set(Y, i, p->ly[i]);
  }
  double sse;
  int gs = gsl_multifit_linear(X, Y, c, cov, &sse, w);
  if (gs != GSL_SUCCESS) {
    s = rp_error_set(err, RP_EGSL, "power-law fit: multilinear regression failed: %s",
                     gsl_strerror(gs));
    goto done;
  }
  size_t rank = gsl_multifit_linear_rank(1e-10, w);
  if (rank < 3) {
    s = rp_error_set(err, RP_EINVAL, "two-predictor fit: ln x1, ln x2 and the constant are "
                     "linearly dependent over the %zu kept points (rank %zu of 3)", n, rank);
    goto done;
  }
  double t = t_quantile(n - 3), half[3];
  for (size_t j = 0; j < 3; j++) half[j] = t * sqrt(gsl_matrix_get(cov, j, j));
  double c0 = gsl_vector_get(c, 0), c1 = gsl_vector_get(c, 1), c2 = gsl_vector_get(c, 2);
  memset(r, 0, sizeof *r);
  r->a = exp(c0);
  r->a_ci[0] = exp(c0 - half[0]);
  r->a_ci[1] = exp(c0 + half[0]);
  r->b = c1;
  r->b_ci[0] = c1 - half[1];
  r->b_ci[1] = c1 + half[1];
  r->c = c2;
  r->c_ci[0] = c2 - half[2];
  r->c_ci[1] = c2 + half[2];
  r->resid_sd = sqrt(sse / (double)(n - 3));
done:
  gsl_matrix_free(X);
  gsl_matrix_free(cov);
  gsl_vector_free(Y);
  gsl_vector_free(c);
  gsl_multifit_linear_free(w);
  return s;
}

static rp_status fit_power(const double *x1, const double *x2, const double *y, size_t n,
                           double x1_min, int nonlinear, rp_fit_power *out, rp_error *err) {
  if (out == NULL) return rp_error_set(err, RP_EINVAL, "power-law fit: output is NULL");
  points p;
  RP_TRY(select_points(x1, x2, y, n, x1_min, &p, err));
  rp_fit_power r;
  rp_status s = x2 ? log_fit2(&p, &r, err) : log_fit1(&p, &r, err);
  if (s == RP_OK) {
    r.n_fit = p.n;
    r.n_below_min = p.n_below;
    r.n_predictors = x2 ? 2 : 1;
    if (nonlinear) s = refine_points(&p, RP_FIT_NLINEAR_MAX_ITER, &r, err);
  }
  points_free(&p);
  if (s == RP_OK) *out = r;
  return s;
}

rp_status rp_fit_power1(const double *x, const double *y, size_t n, double x_min,
                        int nonlinear, rp_fit_power *out, rp_error *err) {
  return fit_power(x, NULL, y, n, x_min, nonlinear, out, err);
}

rp_status rp_fit_power2(const double *x1, const double *x2, const double *y, size_t n,
                        double x1_min, int nonlinear, rp_fit_power *out, rp_error *err) {
  if (x2 == NULL) return rp_error_set(err, RP_EINVAL, "two-predictor fit: x2 is NULL");
  return fit_power(x1, x2, y, n, x1_min, nonlinear, out, err);
}

rp_status rp_fit_power_refine(const double *x1, const double *x2, const double *y, size_t n,
                              double x1_min, size_t max_iter, rp_fit_power *fit,
                              rp_error *err) {
  if (fit == NULL) return rp_error_set(err, RP_EINVAL, "nonlinear fit: fit is NULL");
  if (max_iter == 0)
    return rp_error_set(err, RP_EINVAL, "nonlinear fit: iteration limit 0");
  if ((x2 != NULL) != (fit->n_predictors == 2))
    return rp_error_set(err, RP_EINVAL, "nonlinear fit: the fit has %d predictor(s) but x2 "
                        "is %s", fit->n_predictors, x2 ? "given" : "NULL");
  if (!isfinite(fit->a) || !isfinite(fit->b) || !isfinite(fit->c))
    return rp_error_set(err, RP_EINVAL, "nonlinear fit: starting coefficients a = %g, b = %g, "
                        "c = %g are not finite", fit->a, fit->b, fit->c);
  points p;
  RP_TRY(select_points(x1, x2, y, n, x1_min, &p, err));
  rp_fit_power r = *fit;
  r.n_fit = p.n;
  r.n_below_min = p.n_below;
  rp_status s = refine_points(&p, max_iter, &r, err);
  points_free(&p);
  if (s == RP_OK) *fit = r;
  return s;
}

double rp_fit_power_eval(const rp_fit_power *f, double x1, double x2) {
  if (f == NULL) return (double)NAN;
  double v = f->a * pow(x1, f->b);
  return f->n_predictors == 2 ? v * pow(x2, f->c) : v;
}

/* ---- skill and split ---------------------------------------------------------------- */

rp_status rp_fit_skill_eval(const double *est, const double *truth, size_t n,
                            rp_fit_skill *out, rp_error *err) {
  if (est == NULL || truth == NULL || out == NULL)
    return rp_error_set(err, RP_EINVAL, "skill: argument is NULL");
  if (n < 2) return rp_error_set(err, RP_EINVAL, "skill: %zu points; need at least 2", n);
  double se = 0.0, st = 0.0, sq = 0.0;
  for (size_t i = 0; i < n; i++) {
    if (!isfinite(est[i]) || !isfinite(truth[i]))
      return rp_error_set(err, RP_EINVAL, "skill: point %zu: estimate %g, truth %g must be "
                          "finite", i, est[i], truth[i]);
    double d = est[i] - truth[i];
    se += est[i];
    st += truth[i];
    sq += d * d;
  }
  if (!(st > 0.0))
    return rp_error_set(err, RP_EDOM, "skill: sum of the truth = %g; bias and FSE need a "
                        "positive total", st);
  double ve = gsl_stats_variance(est, 1, n), vt = gsl_stats_variance(truth, 1, n);
  if (!(ve > 0.0) || !(vt > 0.0))
    return rp_error_set(err, RP_EDOM, "skill: %s has zero variance over %zu points; the "
                        "correlation is undefined", ve > 0.0 ? "truth" : "estimate", n);
  rp_fit_skill r;
  r.n = n;
  r.bias_pct = 100.0 * (se - st) / st;
  r.rmse = sqrt(sq / (double)n);
  r.fse_pct = 100.0 * r.rmse / (st / (double)n);
  r.corr = gsl_stats_correlation(est, 1, truth, 1, n);
  *out = r;
  return RP_OK;
}

int rp_fit_is_held_out(size_t i) {
  return i % RP_FIT_HOLDOUT_EVERY == RP_FIT_HOLDOUT_EVERY - 1;
}

rp_status rp_fit_split(const double *v, size_t n, double *fit_part, double *held_part,
                       size_t *n_fit, size_t *n_held, rp_error *err) {
  if (v == NULL || fit_part == NULL || held_part == NULL || n_fit == NULL || n_held == NULL)
    return rp_error_set(err, RP_EINVAL, "split: argument is NULL");
  size_t nf = 0, nh = 0;
  for (size_t i = 0; i < n; i++) {
    if (rp_fit_is_held_out(i))
      held_part[nh++] = v[i];
    else
      fit_part[nf++] = v[i];
  }
  *n_fit = nf;
  *n_held = nh;
  return RP_OK;
}
