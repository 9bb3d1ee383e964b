/* ensemble.c — seeded ensembles of normalised-gamma DSD parameters (log10 Nw, D0, mu)
 * drawn from a climate: a weighted mixture of clusters.
 *
 * Method (equations and parameter sources in docs/method.md §9):
 * - Cluster k is chosen with probability w_k (one uniform deviate u1).
 * - D0 ~ N(m_D, s_D) truncated to [0.5, 3.5] mm, drawn by inverting the truncated CDF:
 *   x = Phi^-1(Phi(a) + u2 (Phi(b) - Phi(a))), a, b the standardised bounds (upper-tail
 *   form Q when a > 0, so that both tails keep their precision).
 * - log10 Nw | D0 ~ N(m_N + rho s_N (D0 - m_D)/s_D, s_N sqrt(1 - rho^2)), the conditional
 *   law of the bivariate normal, truncated to [2, 5.5] the same way (u3). Where the
 *   truncation of log10 Nw does not bite, (D0, log10 Nw) is the bivariate normal with
 *   D0 truncated; it is not the bivariate normal truncated to the box, which would need
 *   rejection (an unbounded loop).
 * - mu ~ N(mu_mean, mu_sd) truncated to [-1, 12] (u4), or mu from D0 by the constrained
 *   mu-Lambda relation of Zhang et al. (2001), mu = -0.016 L^2 + 1.213 L - 1.957 with
 *   L D0 = 3.67 + mu (Ulbrich's approximation used by the D0 form), solved exactly as a
 *   quadratic in L, then clipped to [-1, 12]; u4 is drawn and discarded so that both mu
 *   models give the same (D0, Nw) for the same seed.
 * Generator: member i draws its four uniform deviates from its own stream (seed, i) of
 * rng.h, so members are drawn in parallel and the ensemble does not depend on the thread
 * count.
 *
 * Climates read from YAML files: src/io/climate_file.c. */
#include "rainprint/ensemble.h"

#include "rainprint/rng.h"

#include <math.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_cdf.h>

/* ---- built-in climates ------------------------------------------------------------- */

/* Cluster centres follow the clusters of Bringi et al. (2003, J. Atmos. Sci. 60,
 * 354-365; values from memory): stratiform log10 Nw about 3.3-3.5 decreasing with D0;
 * maritime-like convective log10 Nw about 4.5 with D0 about 1.5-1.75 mm; continental-
 * like convective log10 Nw about 3-3.5 with D0 about 2-2.75 mm. The spreads, the
 * correlations and the weights are our own choices (docs/method.md §9); mu ~ N(3, 2)
 * is common practice (from memory). */
#define STRATIFORM {"stratiform", 0.0, 3.4, 0.30, 1.40, 0.35, -0.5, 3.0, 2.0}
#define CONV_MARITIME {"convective-maritime", 0.0, 4.5, 0.25, 1.60, 0.25, -0.6, 3.0, 2.0}
#define CONV_CONTINENTAL {"convective-continental", 0.0, 3.25, 0.25, 2.40, 0.30, -0.6, 3.0, 2.0}

static rp_climate_cluster with_weight(rp_climate_cluster k, double w) {
  k.weight = w;
  return k;
}

static const char *const climate_names[] = {"maritime", "continental", "mixed"};
#define N_CLIMATES (sizeof climate_names / sizeof climate_names[0])

static rp_climate builtin(size_t i) {
  const rp_climate_cluster strat = STRATIFORM, mar = CONV_MARITIME, con = CONV_CONTINENTAL;
  rp_climate c;
  memset(&c, 0, sizeof c);
  snprintf(c.name, sizeof c.name, "%s", climate_names[i]);
  c.mu_model = RP_MU_GAUSSIAN;
  switch (i) {
    case 0: /* maritime */
      c.n_clusters = 2;
      c.clusters[0] = with_weight(strat, 0.6);
      c.clusters[1] = with_weight(mar, 0.4);
      break;
    case 1: /* continental */
      c.n_clusters = 2;
      c.clusters[0] = with_weight(strat, 0.6);
      c.clusters[1] = with_weight(con, 0.4);
      break;
    default: /* mixed */
      c.n_clusters = 3;
      c.clusters[0] = with_weight(strat, 0.5);
      c.clusters[1] = with_weight(mar, 0.25);
      c.clusters[2] = with_weight(con, 0.25);
      break;
  }
  return c;
}

const char *const *rp_climate_names(size_t *n) {
  if (n) *n = N_CLIMATES;
  return climate_names;
}

rp_status rp_climate_from_name(const char *name, rp_climate *c, rp_error *err) {
  if (name == NULL || c == NULL)
    return rp_error_set(err, RP_EINVAL, "climate: name or output is NULL");
  for (size_t i = 0; i < N_CLIMATES; i++)
    if (strcmp(name, climate_names[i]) == 0) {
      *c = builtin(i);
      return RP_OK;
    }
  char known[256] = "";
  for (size_t i = 0; i < N_CLIMATES; i++) {
    size_t len = strlen(known);
    snprintf(known + len, sizeof known - len, "%s%s", i ? ", " : "", climate_names[i]);
  }
  return rp_error_set(err, RP_EINVAL, "unknown climate '%s' (known: %s)", name, known);
}

/* ---- validation -------------------------------------------------------------------- */

static rp_status check_range(const char *where, const char *field, double v, double lo,
                             bool lo_open, double hi, rp_error *err) {
  bool ok = isfinite(v) && (lo_open ? v > lo : v >= lo) && v <= hi;
  if (ok) return RP_OK;
  return rp_error_set(err, RP_EINVAL, "%s%s = %g outside %s%g, %g]", where, field, v,
                      lo_open ? "(" : "[", lo, hi);
}

rp_status rp_climate_validate(const rp_climate *c, rp_error *err) {
  if (c == NULL) return rp_error_set(err, RP_EINVAL, "climate is NULL");
  if (c->n_clusters < 1 || c->n_clusters > RP_CLIMATE_MAX_CLUSTERS)
    return rp_error_set(err, RP_EINVAL, "climate '%.63s': %zu clusters outside [1, %d]",
                        c->name, c->n_clusters, RP_CLIMATE_MAX_CLUSTERS);
  if (c->mu_model != RP_MU_GAUSSIAN && c->mu_model != RP_MU_ZHANG2001)
    return rp_error_set(err, RP_EINVAL, "climate '%.63s': mu_model %d is not gaussian (0) "
                        "or zhang2001 (1)", c->name, (int)c->mu_model);
  double wsum = 0.0;
  for (size_t k = 0; k < c->n_clusters; k++) {
    const rp_climate_cluster *q = &c->clusters[k];
    char where[128];
    snprintf(where, sizeof where, "clusters[%zu] (\"%.63s\"): ", k, q->name);
    RP_TRY(check_range(where, "weight", q->weight, 0.0, true, 1.0, err));
    RP_TRY(check_range(where, "log10_nw_mean", q->log10_nw_mean, RP_ENSEMBLE_LOG10_NW_MIN,
                       false, RP_ENSEMBLE_LOG10_NW_MAX, err));
    RP_TRY(check_range(where, "log10_nw_sd", q->log10_nw_sd, 0.0, true, RP_CLIMATE_SD_MAX,
                       err));
    RP_TRY(check_range(where, "d0_mean_mm", q->d0_mean_mm, RP_ENSEMBLE_D0_MIN_MM, false,
                       RP_ENSEMBLE_D0_MAX_MM, err));
    RP_TRY(check_range(where, "d0_sd_mm", q->d0_sd_mm, 0.0, true, RP_CLIMATE_SD_MAX, err));
    RP_TRY(check_range(where, "corr_log10_nw_d0", q->corr_log10_nw_d0, -RP_CLIMATE_CORR_MAX,
                       false, RP_CLIMATE_CORR_MAX, err));
    if (c->mu_model == RP_MU_GAUSSIAN) {
      RP_TRY(check_range(where, "mu_mean", q->mu_mean, RP_ENSEMBLE_MU_MIN, false,
                         RP_ENSEMBLE_MU_MAX, err));
      RP_TRY(check_range(where, "mu_sd", q->mu_sd, 0.0, false, RP_CLIMATE_MU_SD_MAX, err));
    }
    wsum += q->weight;
  }
  if (fabs(wsum - 1.0) > RP_CLIMATE_WEIGHT_SUM_TOL)
    return rp_error_set(err, RP_EINVAL, "climate '%.63s': cluster weights sum to %g, not 1",
                        c->name, wsum);
  return RP_OK;
}

/* ---- drawing ----------------------------------------------------------------------- */

/* Normal(m, s) truncated to [lo, hi] at the uniform deviate u in (0, 1), by inverting
 * the CDF. The clamp catches the case where both bounds lie so deep in one tail that
 * the probabilities underflow (the value then is the nearest bound). */
static double truncated_normal(double u, double m, double s, double lo, double hi) {
  if (s == 0.0) return fmin(fmax(m, lo), hi);
  double a = (lo - m) / s, b = (hi - m) / s, x;
  if (a > 0.0) {
    double qa = gsl_cdf_ugaussian_Q(a), qb = gsl_cdf_ugaussian_Q(b);
    x = gsl_cdf_ugaussian_Qinv(qa - u * (qa - qb));
  } else {
    double pa = gsl_cdf_ugaussian_P(a), pb = gsl_cdf_ugaussian_P(b);
    x = gsl_cdf_ugaussian_Pinv(pa + u * (pb - pa));
  }
  double v = m + s * x;
  if (!(v >= lo)) v = lo; /* also NaN and -inf */
  if (v > hi) v = hi;
  return v;
}

double rp_ensemble_mu_zhang2001(double d0_mm) {
  if (!isfinite(d0_mm) || d0_mm <= 0.0) return (double)NAN;
  /* 0.016 L^2 + B L + C = 0 with B = D0 - 1.213, C = -(3.67 - 1.957); C < 0, so exactly
   * one positive root. q = -(B + sign(B) sqrt(B^2 - 4AC))/2, roots q/A and C/q: take
   * the positive one, which avoids cancellation for either sign of B. */
  const double A = 0.016, B = d0_mm - 1.213, C = -(3.67 - 1.957);
  double disc = sqrt(B * B - 4.0 * A * C);
  double q = -0.5 * (B + (B >= 0.0 ? disc : -disc));
  double r1 = q / A, r2 = C / q;
  double lambda = r1 > 0.0 ? r1 : r2;
  return lambda * d0_mm - 3.67;
}

/* Member i from its own four uniform deviates u[0..3] (see the file header). */
static rp_ensemble_member draw_member(const rp_climate *c, const double cum[], const double u[4]) {
  size_t k = 0;
  while (k + 1 < c->n_clusters && u[0] >= cum[k]) k++;
  const rp_climate_cluster *q = &c->clusters[k];
  const double d0 = truncated_normal(u[1], q->d0_mean_mm, q->d0_sd_mm, RP_ENSEMBLE_D0_MIN_MM,
                                     RP_ENSEMBLE_D0_MAX_MM);
  const double rho = q->corr_log10_nw_d0;
  const double m_n = q->log10_nw_mean + rho * q->log10_nw_sd * (d0 - q->d0_mean_mm) / q->d0_sd_mm;
  const double s_n = q->log10_nw_sd * sqrt(1.0 - rho * rho);
  const double lnw = truncated_normal(u[2], m_n, s_n, RP_ENSEMBLE_LOG10_NW_MIN,
                                      RP_ENSEMBLE_LOG10_NW_MAX);
  double mu;
  if (c->mu_model == RP_MU_ZHANG2001)
    mu = fmin(fmax(rp_ensemble_mu_zhang2001(d0), RP_ENSEMBLE_MU_MIN), RP_ENSEMBLE_MU_MAX);
  else
    mu = truncated_normal(u[3], q->mu_mean, q->mu_sd, RP_ENSEMBLE_MU_MIN, RP_ENSEMBLE_MU_MAX);
  rp_ensemble_member m = {lnw, d0, mu, k};
  return m;
}

rp_status rp_ensemble_draw(const rp_climate *c, size_t n, unsigned long seed,
                           rp_ensemble_member *out, rp_error *err) {
  if (c == NULL || out == NULL)
    return rp_error_set(err, RP_EINVAL, "ensemble: climate or output is NULL");
  if (n == 0) return rp_error_set(err, RP_EINVAL, "ensemble size 0: need at least 1 member");
  RP_TRY(rp_climate_validate(c, err));
  double cum[RP_CLIMATE_MAX_CLUSTERS], wsum = 0.0;
  for (size_t k = 0; k < c->n_clusters; k++) wsum += c->clusters[k].weight;
  double acc = 0.0;
  for (size_t k = 0; k < c->n_clusters; k++) {
    acc += c->clusters[k].weight;
    cum[k] = acc / wsum;
  }
  /* Each member draws from its own stream (seed, member index): the ensemble is the same
   * for any thread count and schedule. */
#pragma omp parallel for schedule(static)
  for (size_t i = 0; i < n; i++) {
    rp_rng r;
    rp_rng_init(&r, seed, rp_rng_key(RP_RNG_ENSEMBLE, i, 0, 0));
    double u[4];
    for (int j = 0; j < 4; j++) u[j] = rp_rng_uniform_pos(&r);
    out[i] = draw_member(c, cum, u);
  }
  return RP_OK;
}

rp_status rp_ensemble_member_dsd(const rp_ensemble_member *m, rp_dsd *d, rp_error *err) {
  if (m == NULL || d == NULL)
    return rp_error_set(err, RP_EINVAL, "ensemble member or DSD output is NULL");
  return rp_dsd_normalized_gamma_d0(d, pow(10.0, m->log10_nw), m->d0_mm, m->mu, err);
}
