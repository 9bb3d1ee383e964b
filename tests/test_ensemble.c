/* test_ensemble.c — climates (built-in and YAML) and seeded DSD ensembles. */
#include "rp_test.h"

#include <string.h>
#include <unistd.h>

#include <gsl/gsl_statistics_double.h>

#include "rainprint/ensemble.h"
#include "rainprint/climate_file.h"

/* ---- helpers ------------------------------------------------------------------------ */

/* Sample statistics of one parameter over the members of cluster k. */
typedef struct {
  double mean, sd;
  size_t n;
} stats;

typedef enum { P_LOG10_NW, P_D0, P_MU } param;

static double member_value(const rp_ensemble_member *m, param p) {
  return p == P_LOG10_NW ? m->log10_nw : p == P_D0 ? m->d0_mm : m->mu;
}

static stats cluster_stats(const rp_ensemble_member *m, size_t n, size_t k, param p,
                           double *buf) {
  stats s = {0, 0, 0};
  for (size_t i = 0; i < n; i++)
    if (m[i].cluster == k) buf[s.n++] = member_value(&m[i], p);
  s.mean = gsl_stats_mean(buf, 1, s.n);
  s.sd = gsl_stats_sd(buf, 1, s.n);
  return s;
}

static double cluster_corr(const rp_ensemble_member *m, size_t n, size_t k, double *a,
                           double *b) {
  size_t j = 0;
  for (size_t i = 0; i < n; i++)
    if (m[i].cluster == k) a[j] = m[i].log10_nw, b[j] = m[i].d0_mm, j++;
  return gsl_stats_correlation(a, 1, b, 1, j);
}

/* Write text to a new temporary *.yaml file; its name goes to path. */
static void write_temp(const char *text, char *path, size_t n) {
  snprintf(path, n, "/tmp/rp_test_climate_XXXXXX.yaml");
  int fd = mkstemps(path, 5);
  assert_true(fd >= 0);
  FILE *f = fdopen(fd, "w");
  assert_non_null(f);
  fputs(text, f);
  fclose(f);
}

static const char *const good_yaml =
    "name: test-island\n"
    "source: invented for the test\n"
    "clusters:\n"
    "  - name: stratiform\n"
    "    weight: 0.6\n"
    "    log10_nw_mean: 3.4\n"
    "    log10_nw_sd: 0.3\n"
    "    d0_mean_mm: 1.4\n"
    "    d0_sd_mm: 0.35\n"
    "    corr_log10_nw_d0: -0.5\n"
    "    mu_mean: 3\n"
    "    mu_sd: 2\n"
    "  - name: convective\n"
    "    weight: 0.4\n"
    "    log10_nw_mean: 4.5\n"
    "    log10_nw_sd: 0.25\n"
    "    d0_mean_mm: 1.6\n"
    "    d0_sd_mm: 0.25\n"
    "    corr_log10_nw_d0: -0.6\n"
    "    mu_mean: 3\n"
    "    mu_sd: 2\n";

/* good_yaml with the first occurrence of `from` replaced by `to`, loaded. */
static rp_status load_variant(const char *from, const char *to, rp_climate *c, rp_error *e,
                              char *path, size_t n) {
  char text[4096];
  const char *at = strstr(good_yaml, from);
  assert_non_null(at);
  snprintf(text, sizeof text, "%.*s%s%s", (int)(at - good_yaml), good_yaml, to,
           at + strlen(from));
  write_temp(text, path, n);
  rp_status s = rp_climate_load_yaml(path, c, e);
  unlink(path);
  return s;
}

/* ---- built-in climates ------------------------------------------------------------- */

static void test_climate_builtins_load_and_validate(void **state) {
  (void)state;
  size_t n = 0;
  const char *const *names = rp_climate_names(&n);
  assert_int_equal(n, 3);
  int have_default = 0;
  for (size_t i = 0; i < n; i++) {
    rp_climate c;
    rp_error e = {0};
    assert_int_equal(rp_climate_from_name(names[i], &c, &e), RP_OK);
    assert_string_equal(c.name, names[i]);
    assert_int_equal(rp_climate_validate(&c, &e), RP_OK);
    assert_int_equal(c.mu_model, RP_MU_GAUSSIAN);
    have_default |= strcmp(names[i], RP_CLIMATE_DEFAULT) == 0;
  }
  assert_true(have_default);
}

static void test_climate_unknown_name_lists_known_names(void **state) {
  (void)state;
  rp_climate c;
  memset(&c, 0x5a, sizeof c);
  rp_climate before = c;
  rp_error e = {0};
  assert_int_equal(rp_climate_from_name("tropical", &c, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "'tropical'"));
  assert_non_null(strstr(e.msg, "maritime, continental, mixed"));
  assert_memory_equal(&c, &before, sizeof c);
  assert_int_equal(rp_climate_from_name(NULL, &c, &e), RP_EINVAL);
  assert_int_equal(rp_climate_from_name("mixed", NULL, &e), RP_EINVAL);
}

/* The shipped YAML copies must hold exactly the compiled-in numbers. */
static void test_climate_shipped_yaml_equals_builtin(void **state) {
  (void)state;
  size_t n = 0;
  const char *const *names = rp_climate_names(&n);
  for (size_t i = 0; i < n; i++) {
    char rel[128], path[1024];
    snprintf(rel, sizeof rel, "dsd-presets/climates/%s.yaml", names[i]);
    rp_climate a, b;
    rp_error e = {0};
    assert_int_equal(rp_climate_from_name(names[i], &a, &e), RP_OK);
    if (rp_climate_load_yaml(rp_test_source_path(rel, path, sizeof path), &b, &e) != RP_OK)
      fail_msg("%s", e.msg);
    assert_string_equal(a.name, b.name);
    assert_int_equal(a.mu_model, b.mu_model);
    assert_int_equal(a.n_clusters, b.n_clusters);
    for (size_t k = 0; k < a.n_clusters; k++) {
      const rp_climate_cluster *p = &a.clusters[k], *q = &b.clusters[k];
      assert_string_equal(p->name, q->name);
      /* decimal text -> double is exact for the same literal: compare exactly */
      assert_close(q->weight, p->weight, 0.0, 0.0);
      assert_close(q->log10_nw_mean, p->log10_nw_mean, 0.0, 0.0);
      assert_close(q->log10_nw_sd, p->log10_nw_sd, 0.0, 0.0);
      assert_close(q->d0_mean_mm, p->d0_mean_mm, 0.0, 0.0);
      assert_close(q->d0_sd_mm, p->d0_sd_mm, 0.0, 0.0);
      assert_close(q->corr_log10_nw_d0, p->corr_log10_nw_d0, 0.0, 0.0);
      assert_close(q->mu_mean, p->mu_mean, 0.0, 0.0);
      assert_close(q->mu_sd, p->mu_sd, 0.0, 0.0);
    }
  }
}

/* ---- drawing: reproducibility and bounds ----------------------------------------- */

static void test_ensemble_same_seed_is_bit_identical(void **state) {
  (void)state;
  enum { N = 2000 };
  static rp_ensemble_member a[N], b[N], c[10];
  rp_climate cl;
  rp_error e = {0};
  assert_int_equal(rp_climate_from_name("mixed", &cl, &e), RP_OK);
  memset(a, 0, sizeof a);
  memset(b, 0xff, sizeof b);
  assert_int_equal(rp_ensemble_draw(&cl, N, 12345, a, &e), RP_OK);
  assert_int_equal(rp_ensemble_draw(&cl, N, 12345, b, &e), RP_OK);
  for (size_t i = 0; i < N; i++) {
    assert_memory_equal(&a[i].log10_nw, &b[i].log10_nw, sizeof(double));
    assert_memory_equal(&a[i].d0_mm, &b[i].d0_mm, sizeof(double));
    assert_memory_equal(&a[i].mu, &b[i].mu, sizeof(double));
    assert_int_equal(a[i].cluster, b[i].cluster);
  }
  /* member i does not depend on the ensemble size */
  assert_int_equal(rp_ensemble_draw(&cl, 10, 12345, c, &e), RP_OK);
  for (size_t i = 0; i < 10; i++) assert_memory_equal(&a[i].d0_mm, &c[i].d0_mm, sizeof(double));
}

static void test_ensemble_different_seed_differs(void **state) {
  (void)state;
  enum { N = 2000 };
  static rp_ensemble_member a[N], b[N];
  rp_climate cl;
  rp_error e = {0};
  assert_int_equal(rp_climate_from_name("mixed", &cl, &e), RP_OK);
  assert_int_equal(rp_ensemble_draw(&cl, N, 1, a, &e), RP_OK);
  assert_int_equal(rp_ensemble_draw(&cl, N, 2, b, &e), RP_OK);
  size_t same = 0;
  for (size_t i = 0; i < N; i++) same += a[i].d0_mm == b[i].d0_mm;
  /* continuous draws from independent streams: no member should coincide */
  assert_int_equal(same, 0);
}

static void check_inside(const rp_ensemble_member *m, size_t n, size_t n_clusters) {
  for (size_t i = 0; i < n; i++) {
    assert_true(m[i].d0_mm >= RP_ENSEMBLE_D0_MIN_MM && m[i].d0_mm <= RP_ENSEMBLE_D0_MAX_MM);
    assert_true(m[i].log10_nw >= RP_ENSEMBLE_LOG10_NW_MIN &&
                m[i].log10_nw <= RP_ENSEMBLE_LOG10_NW_MAX);
    assert_true(m[i].mu >= RP_ENSEMBLE_MU_MIN && m[i].mu <= RP_ENSEMBLE_MU_MAX);
    assert_true(m[i].cluster < n_clusters);
  }
}

static void test_ensemble_members_lie_inside_the_truncation(void **state) {
  (void)state;
  enum { N = 20000 };
  static rp_ensemble_member m[N];
  size_t n = 0;
  const char *const *names = rp_climate_names(&n);
  for (size_t i = 0; i < n; i++)
    for (int mz = 0; mz <= 1; mz++) {
      rp_climate cl;
      rp_error e = {0};
      assert_int_equal(rp_climate_from_name(names[i], &cl, &e), RP_OK);
      cl.mu_model = mz ? RP_MU_ZHANG2001 : RP_MU_GAUSSIAN;
      assert_int_equal(rp_ensemble_draw(&cl, N, 77, m, &e), RP_OK);
      check_inside(m, N, cl.n_clusters);
    }
  /* a cluster squeezed against the corners, wide spreads: still inside */
  rp_climate edge = {.name = "edge", .mu_model = RP_MU_GAUSSIAN, .n_clusters = 1};
  edge.clusters[0] = (rp_climate_cluster){"corner", 1.0, 5.5, 1.5, 0.5, 1.5, 0.95, 12.0, 5.0};
  rp_error e = {0};
  assert_int_equal(rp_ensemble_draw(&edge, N, 3, m, &e), RP_OK);
  check_inside(m, N, 1);
}

/* ---- drawing: the distribution ----------------------------------------------------- */

/* A climate whose truncation is negligible (every bound >= 5.8 SD from its mean; the
 * conditional log10 Nw even further): sample statistics must match the parameters.
 * Sampling-error bounds at 5 SD (sampling theory of normal samples, any statistics
 * text): mean s/sqrt(n), SD s/sqrt(2n), correlation (1 - rho^2)/sqrt(n), weight
 * sqrt(w(1-w)/N). */
static void test_ensemble_untruncated_clusters_match_parameters(void **state) {
  (void)state;
  enum { N = 40000 };
  static rp_ensemble_member m[N];
  static double buf[N], buf2[N];
  rp_climate cl = {.name = "wide-box", .mu_model = RP_MU_GAUSSIAN, .n_clusters = 2};
  cl.clusters[0] = (rp_climate_cluster){"a", 0.3, 3.5, 0.2, 2.0, 0.2, -0.6, 5.0, 1.0};
  cl.clusters[1] = (rp_climate_cluster){"b", 0.7, 4.2, 0.15, 1.5, 0.15, 0.4, 6.0, 1.0};
  rp_error e = {0};
  assert_int_equal(rp_ensemble_draw(&cl, N, 31, m, &e), RP_OK);
  for (size_t k = 0; k < 2; k++) {
    const rp_climate_cluster *q = &cl.clusters[k];
    stats sn = cluster_stats(m, N, k, P_LOG10_NW, buf);
    stats sd = cluster_stats(m, N, k, P_D0, buf);
    stats sm = cluster_stats(m, N, k, P_MU, buf);
    double n = (double)sd.n;
    assert_close(n / N, q->weight, 0.0, 5.0 * sqrt(q->weight * (1 - q->weight) / N));
    assert_close(sn.mean, q->log10_nw_mean, 0.0, 5.0 * q->log10_nw_sd / sqrt(n));
    assert_close(sn.sd, q->log10_nw_sd, 0.0, 5.0 * q->log10_nw_sd / sqrt(2 * n));
    assert_close(sd.mean, q->d0_mean_mm, 0.0, 5.0 * q->d0_sd_mm / sqrt(n));
    assert_close(sd.sd, q->d0_sd_mm, 0.0, 5.0 * q->d0_sd_mm / sqrt(2 * n));
    assert_close(sm.mean, q->mu_mean, 0.0, 5.0 * q->mu_sd / sqrt(n));
    assert_close(sm.sd, q->mu_sd, 0.0, 5.0 * q->mu_sd / sqrt(2 * n));
    double rho = q->corr_log10_nw_d0;
    assert_close(cluster_corr(m, N, k, buf, buf2), rho, 0.0, 5.0 * (1 - rho * rho) / sqrt(n));
  }
}

/* The built-in "mixed" climate, truncation included. Expected D0 and mu moments are
 * those of the truncated normal laws, from SciPy 1.10.1 stats.truncnorm(a, b, loc,
 * scale).mean()/.std(). For log10 Nw, E = m_N + rho s_N (E[D0] - m_D)/s_D and
 * Var = s_N^2 (1 - rho^2) + rho^2 s_N^2 Var(D0)/s_D^2 (law of total expectation and
 * variance over the conditional normal), neglecting the truncation of log10 Nw at
 * [2, 5.5]: it lies >= 4 s_N from m_N in every cluster (4.7, 4.0, 5.0), so it touches a
 * few 1e-5 of the members, far below the bounds.
 * Bounds: 5 sampling SDs as above. */
static void test_ensemble_builtin_clusters_match_truncated_laws(void **state) {
  (void)state;
  enum { N = 60000 };
  static rp_ensemble_member m[N];
  static double buf[N];
  rp_climate cl;
  rp_error e = {0};
  assert_int_equal(rp_climate_from_name("mixed", &cl, &e), RP_OK);
  assert_int_equal(rp_ensemble_draw(&cl, N, 2718, m, &e), RP_OK);
  /* SciPy truncnorm moments of D0 per cluster, and of mu ~ N(3, 2) on [-1, 12] */
  const double d0_mean[3] = {1.4051446051327752, 1.6000062356515448, 2.399855901332967};
  const double d0_sd[3] = {0.3432832387495519, 0.2499862811122477, 0.29973566688282427};
  const double mu_mean = 3.1104633977366327, mu_sd = 1.8829548570085322;
  for (size_t k = 0; k < 3; k++) {
    const rp_climate_cluster *q = &cl.clusters[k];
    stats sn = cluster_stats(m, N, k, P_LOG10_NW, buf);
    stats sd = cluster_stats(m, N, k, P_D0, buf);
    stats sm = cluster_stats(m, N, k, P_MU, buf);
    double n = (double)sd.n, rho = q->corr_log10_nw_d0, g = rho * q->log10_nw_sd / q->d0_sd_mm;
    assert_close(n / N, q->weight, 0.0, 5.0 * sqrt(q->weight * (1 - q->weight) / N));
    assert_close(sd.mean, d0_mean[k], 0.0, 5.0 * d0_sd[k] / sqrt(n));
    assert_close(sd.sd, d0_sd[k], 0.0, 5.0 * d0_sd[k] / sqrt(2 * n));
    assert_close(sm.mean, mu_mean, 0.0, 5.0 * mu_sd / sqrt(n));
    assert_close(sm.sd, mu_sd, 0.0, 5.0 * mu_sd / sqrt(2 * n));
    double en = q->log10_nw_mean + g * (d0_mean[k] - q->d0_mean_mm);
    double sdn = sqrt(q->log10_nw_sd * q->log10_nw_sd * (1 - rho * rho) +
                      g * g * d0_sd[k] * d0_sd[k]);
    assert_close(sn.mean, en, 0.0, 5.0 * sdn / sqrt(n));
    assert_close(sn.sd, sdn, 0.0, 5.0 * sdn / sqrt(2 * n));
  }
}

/* ---- mu from the constrained mu-Lambda relation ------------------------------------ */

static void test_ensemble_zhang_mu_follows_the_relation(void **state) {
  (void)state;
  /* Zhang et al. (2001) mu = -0.016 L^2 + 1.213 L - 1.957 (coefficients from memory)
   * with L D0 = 3.67 + mu. Hand-solved quadratic 0.016 L^2 + (D0 - 1.213) L - 1.713 = 0:
   * D0 = 1.5 mm: L = 4.7243495966, mu = 3.4165243949; D0 = 2 mm: L = 2.0879860579,
   * mu = 0.5059721158 (10 digits quoted: 1e-9). */
  assert_close(rp_ensemble_mu_zhang2001(1.5), 3.4165243949, 1e-9, 0.0);
  assert_close(rp_ensemble_mu_zhang2001(2.0), 0.5059721158, 1e-9, 0.0);
  assert_true(isnan(rp_ensemble_mu_zhang2001(0.0)));
  assert_true(isnan(rp_ensemble_mu_zhang2001((double)NAN)));
  assert_true(isnan(rp_ensemble_mu_zhang2001(-1.0)));

  enum { N = 5000 };
  static rp_ensemble_member g[N], z[N];
  rp_climate cl;
  rp_error e = {0};
  assert_int_equal(rp_climate_from_name("mixed", &cl, &e), RP_OK);
  assert_int_equal(rp_ensemble_draw(&cl, N, 8, g, &e), RP_OK);
  cl.mu_model = RP_MU_ZHANG2001;
  assert_int_equal(rp_ensemble_draw(&cl, N, 8, z, &e), RP_OK);
  size_t clipped = 0;
  for (size_t i = 0; i < N; i++) {
    /* same seed: the same (D0, Nw) under either mu model, bit for bit */
    assert_memory_equal(&g[i].d0_mm, &z[i].d0_mm, sizeof(double));
    assert_memory_equal(&g[i].log10_nw, &z[i].log10_nw, sizeof(double));
    double mu = z[i].mu, raw = rp_ensemble_mu_zhang2001(z[i].d0_mm);
    if (raw < RP_ENSEMBLE_MU_MIN || raw > RP_ENSEMBLE_MU_MAX) {
      clipped++;
      assert_close(mu, raw < RP_ENSEMBLE_MU_MIN ? RP_ENSEMBLE_MU_MIN : RP_ENSEMBLE_MU_MAX, 0.0, 0.0);
      continue;
    }
    /* the drawn mu satisfies the relation with its own L = (3.67 + mu)/D0; the
     * residual is rounding in a quadratic of size ~10: 1e-11 absolute */
    double L = (3.67 + mu) / z[i].d0_mm;
    assert_close(-0.016 * L * L + 1.213 * L - 1.957, mu, 0.0, 1e-11);
  }
  /* mu > 12 below D0 ~ 1.2 mm and mu < -1 above D0 ~ 3.3 mm: some members clip */
  assert_true(clipped > 0 && clipped < N);
}

/* ---- members to DSDs -------------------------------------------------------------- */

static void test_ensemble_member_dsd_is_normalized_gamma(void **state) {
  (void)state;
  rp_ensemble_member m = {3.5, 1.8, 2.0, 0};
  rp_dsd d;
  rp_error e = {0};
  assert_int_equal(rp_ensemble_member_dsd(&m, &d, &e), RP_OK);
  assert_int_equal(d.model, RP_DSD_NORMALIZED_GAMMA_D0);
  /* 10^3.5 through pow: one rounding (1e-14) */
  assert_close(d.nw_m3_mm, pow(10.0, 3.5), 1e-14, 0.0);
  assert_close(d.d0_mm, 1.8, 0.0, 0.0);
  assert_close(d.mu, 2.0, 0.0, 0.0);
  assert_int_equal(rp_ensemble_member_dsd(NULL, &d, &e), RP_EINVAL);
  assert_int_equal(rp_ensemble_member_dsd(&m, NULL, &e), RP_EINVAL);
  m.mu = 40.0; /* outside the DSD module's mu range: its status passes through */
  assert_int_equal(rp_ensemble_member_dsd(&m, &d, &e), RP_EDOM);
}

/* ---- argument and climate errors -------------------------------------------------- */

static void test_ensemble_draw_refuses_bad_arguments(void **state) {
  (void)state;
  rp_ensemble_member m[4];
  rp_climate cl;
  rp_error e = {0};
  assert_int_equal(rp_climate_from_name("maritime", &cl, &e), RP_OK);
  assert_int_equal(rp_ensemble_draw(NULL, 4, 1, m, &e), RP_EINVAL);
  assert_int_equal(rp_ensemble_draw(&cl, 4, 1, NULL, &e), RP_EINVAL);
  assert_int_equal(rp_ensemble_draw(&cl, 0, 1, m, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "size 0"));

  rp_climate bad = cl;
  bad.clusters[1].d0_sd_mm = (double)NAN;
  assert_int_equal(rp_ensemble_draw(&bad, 4, 1, m, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "clusters[1] (\"convective-maritime\"): d0_sd_mm = nan"));
  bad = cl;
  bad.clusters[0].log10_nw_mean = 6.0;
  assert_int_equal(rp_climate_validate(&bad, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "log10_nw_mean = 6 outside [2, 5.5]"));
  bad = cl;
  bad.clusters[0].corr_log10_nw_d0 = -1.0;
  assert_int_equal(rp_climate_validate(&bad, &e), RP_EINVAL);
  bad = cl;
  bad.clusters[0].weight = 0.5;
  assert_int_equal(rp_climate_validate(&bad, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "sum to 0.9"));
  bad = cl;
  bad.n_clusters = 0;
  assert_int_equal(rp_climate_validate(&bad, &e), RP_EINVAL);
  bad.n_clusters = RP_CLIMATE_MAX_CLUSTERS + 1;
  assert_int_equal(rp_climate_validate(&bad, &e), RP_EINVAL);
  bad = cl;
  bad.mu_model = (rp_mu_model)7;
  assert_int_equal(rp_climate_validate(&bad, &e), RP_EINVAL);
  bad = cl;
  bad.clusters[0].mu_sd = -1.0;
  assert_int_equal(rp_climate_validate(&bad, &e), RP_EINVAL);
  bad.mu_model = RP_MU_ZHANG2001; /* mu fields are not used then */
  assert_int_equal(rp_climate_validate(&bad, &e), RP_OK);
  assert_int_equal(rp_climate_validate(NULL, &e), RP_EINVAL);
}

/* ---- YAML ------------------------------------------------------------------------- */

static void test_climate_yaml_loads_a_valid_file(void **state) {
  (void)state;
  char path[256];
  rp_climate c;
  rp_error e = {0};
  assert_int_equal(load_variant("name: test-island", "name: test-island", &c, &e, path,
                                sizeof path), RP_OK);
  assert_string_equal(c.name, "test-island");
  assert_int_equal(c.n_clusters, 2);
  assert_int_equal(c.mu_model, RP_MU_GAUSSIAN);
  assert_string_equal(c.clusters[1].name, "convective");
  assert_close(c.clusters[1].d0_sd_mm, 0.25, 0.0, 0.0);
  /* zhang2001 without mu fields is fine */
  const char *no_mu = "name: z\nsource: s\nmu_model: zhang2001\nclusters:\n  - name: one\n"
                      "    weight: 1\n    log10_nw_mean: 3.4\n    log10_nw_sd: 0.3\n"
                      "    d0_mean_mm: 1.4\n    d0_sd_mm: 0.35\n    corr_log10_nw_d0: 0\n";
  write_temp(no_mu, path, sizeof path);
  assert_int_equal(rp_climate_load_yaml(path, &c, &e), RP_OK);
  unlink(path);
  assert_int_equal(c.mu_model, RP_MU_ZHANG2001);
}

typedef struct {
  const char *from, *to;   /* edit of good_yaml */
  rp_status status;
  const char *needle;      /* must appear in the message */
} yaml_case;

static void test_climate_yaml_errors_name_file_and_field(void **state) {
  (void)state;
  const yaml_case cases[] = {
      /* missing field */
      {"    d0_sd_mm: 0.35\n", "", RP_EPARSE, "Missing required mapping field: d0_sd_mm"},
      /* wrong type */
      {"weight: 0.6", "weight: heavy", RP_EPARSE, "weight: 'heavy' is not a plain decimal"},
      {"d0_mean_mm: 1.4", "d0_mean_mm: [1, 2]", RP_EPARSE, "d0_mean_mm"},
      /* NaN, infinity, trailing junk, hex */
      {"log10_nw_sd: 0.3", "log10_nw_sd: nan", RP_EPARSE,
       "clusters[0].log10_nw_sd: 'nan' is not a plain decimal"},
      {"log10_nw_sd: 0.25", "log10_nw_sd: .inf", RP_EPARSE,
       "clusters[1].log10_nw_sd: '.inf'"},
      {"d0_mean_mm: 1.4", "d0_mean_mm: 1.4mm", RP_EPARSE, "'1.4mm' is not a plain decimal"},
      {"mu_sd: 2", "mu_sd: 0x2", RP_EPARSE, "'0x2'"},
      {"mu_sd: 2", "mu_sd: 1e999", RP_EPARSE, "out of the range of a double"},
      /* out of range (after loading) */
      {"d0_mean_mm: 1.4", "d0_mean_mm: 4.0", RP_EPARSE,
       "clusters[0] (\"stratiform\"): d0_mean_mm = 4 outside [0.5, 3.5]"},
      {"log10_nw_sd: 0.3", "log10_nw_sd: -0.3", RP_EPARSE, "log10_nw_sd = -0.3 outside (0, 1.5]"},
      {"corr_log10_nw_d0: -0.6", "corr_log10_nw_d0: -1.2", RP_EPARSE, "corr_log10_nw_d0 = -1.2"},
      {"weight: 0.4", "weight: 0.5", RP_EPARSE, "weights sum to 1.1"},
      {"mu_mean: 3", "mu_mean: 13", RP_EPARSE, "mu_mean = 13 outside [-1, 12]"},
      /* structure */
      {"    mu_sd: 2\n", "", RP_EPARSE, "mu_sd missing: mu_model gaussian needs"},
      {"source: invented", "mu_model: gamma\nsource: invented", RP_EPARSE,
       "Invalid ENUM value: gamma"},
      {"source: invented", "colour: blue\nsource: invented", RP_EPARSE, "Unexpected key: colour"},
      {"name: test-island\n", "", RP_EPARSE, "Missing required mapping field: name"},
      {"    weight: 0.6\n", "    weight: 0.6\n  weight: 1\n", RP_EPARSE, "YAML syntax"},
  };
  for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
    char path[256];
    rp_climate c;
    memset(&c, 0x5a, sizeof c);
    rp_climate before = c;
    rp_error e = {0};
    rp_status s = load_variant(cases[i].from, cases[i].to, &c, &e, path, sizeof path);
    if (s != cases[i].status || strstr(e.msg, cases[i].needle) == NULL ||
        strstr(e.msg, path) == NULL)
      fail_msg("case %zu: status %s, message \"%s\"; expected %s with \"%s\" and the path", i,
               rp_status_name(s), e.msg, rp_status_name(cases[i].status), cases[i].needle);
    assert_int_equal(e.status, cases[i].status);
    assert_memory_equal(&c, &before, sizeof c);
  }
}

static void test_climate_yaml_too_many_clusters_empty_and_missing_file(void **state) {
  (void)state;
  char text[8192] = "name: many\nsource: s\nclusters:\n";
  for (int k = 0; k < RP_CLIMATE_MAX_CLUSTERS + 1; k++)
    strcat(text, "  - name: c\n    weight: 0.2\n    log10_nw_mean: 3.4\n    log10_nw_sd: 0.3\n"
                 "    d0_mean_mm: 1.4\n    d0_sd_mm: 0.35\n    corr_log10_nw_d0: 0\n"
                 "    mu_mean: 3\n    mu_sd: 2\n");
  char path[256];
  rp_climate c;
  rp_error e = {0};
  write_temp(text, path, sizeof path);
  assert_int_equal(rp_climate_load_yaml(path, &c, &e), RP_EPARSE);
  unlink(path);
  assert_non_null(strstr(e.msg, "Excessive entries"));

  write_temp("name: none\nsource: s\nclusters: []\n", path, sizeof path);
  assert_int_equal(rp_climate_load_yaml(path, &c, &e), RP_EPARSE);
  unlink(path);
  assert_non_null(strstr(e.msg, "Insufficient entries"));

  write_temp("", path, sizeof path);
  assert_int_equal(rp_climate_load_yaml(path, &c, &e), RP_EPARSE);
  unlink(path);
  assert_non_null(strstr(e.msg, "empty file"));

  assert_int_equal(rp_climate_load_yaml("/nonexistent/dir/none.yaml", &c, &e), RP_EIO);
  assert_non_null(strstr(e.msg, "/nonexistent/dir/none.yaml: cannot open"));
  assert_int_equal(rp_climate_load_yaml(NULL, &c, &e), RP_EINVAL);
  assert_int_equal(rp_climate_load_yaml("x.yaml", NULL, &e), RP_EINVAL);
}

int main(void) {
  rp_test_init();
  const struct CMUnitTest tests[] = {
      cmocka_unit_test(test_climate_builtins_load_and_validate),
      cmocka_unit_test(test_climate_unknown_name_lists_known_names),
      cmocka_unit_test(test_climate_shipped_yaml_equals_builtin),
      cmocka_unit_test(test_ensemble_same_seed_is_bit_identical),
      cmocka_unit_test(test_ensemble_different_seed_differs),
      cmocka_unit_test(test_ensemble_members_lie_inside_the_truncation),
      cmocka_unit_test(test_ensemble_untruncated_clusters_match_parameters),
      cmocka_unit_test(test_ensemble_builtin_clusters_match_truncated_laws),
      cmocka_unit_test(test_ensemble_zhang_mu_follows_the_relation),
      cmocka_unit_test(test_ensemble_member_dsd_is_normalized_gamma),
      cmocka_unit_test(test_ensemble_draw_refuses_bad_arguments),
      cmocka_unit_test(test_climate_yaml_loads_a_valid_file),
      cmocka_unit_test(test_climate_yaml_errors_name_file_and_field),
      cmocka_unit_test(test_climate_yaml_too_many_clusters_empty_and_missing_file),
  };
  return cmocka_run_group_tests_name("ensemble", tests, NULL, NULL);
}
