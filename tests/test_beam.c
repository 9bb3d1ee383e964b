/* test_beam.c — 4/3-earth geometry at worked points and the Gauss–Hermite beam rule. */
#include "rp_test.h"

#include <gsl/gsl_integration.h>

#include "rainprint/beam.h"

/* Worked points computed by hand from Doviak & Zrnić 1993 eqs. 2.28a/b (from memory)
 * with k_e = 4/3 and a = 6371 km: at 0 deg, r = 100 km, h = r^2 / (2 k_e a) to first
 * order = 588.6 m; the exact formula gives sqrt(r^2 + R^2) - R. Within 1 m (brief). */
static void test_height_matches_the_four_thirds_earth_formula(void **state) {
  (void)state;
  const double R = 4.0 / 3.0 * 6371000.0;
  const double r[3] = {50000.0, 100000.0, 200000.0}, el[3] = {0.0, 0.5, 3.0};
  for (int i = 0; i < 3; i++)
    for (int j = 0; j < 3; j++) {
      const double e = el[j] * M_PI / 180.0;
      const double h = sqrt(r[i] * r[i] + R * R + 2 * r[i] * R * sin(e)) - R;
      const double s = R * asin(r[i] * cos(e) / (R + h));
      assert_close(rp_beam_height_m(r[i], el[j]), h, 0, 1.0);
      assert_close(rp_beam_ground_range_m(r[i], el[j]), s, 0, 1.0);
    }
  /* first-order check at 0 deg, 100 km: r^2/(2R) = 588.6 m (the series is accurate to
   * (r/R)^2 relative, far below 1 m) */
  assert_close(rp_beam_height_m(100000.0, 0.0), 1e10 / (2 * R), 0, 1.0);
  /* vertical beam: height is range, ground range 0 */
  assert_close(rp_beam_height_m(5000.0, 90.0), 5000.0, 0, 1e-6);
  assert_close(rp_beam_ground_range_m(5000.0, 90.0), 0.0, 0, 1e-6);
}

/* Gauss–Hermite nodes against GSL's fixed Hermite rule (weight exp(-x^2)). */
static void test_gauss_hermite_rule_matches_gsl(void **state) {
  (void)state;
  for (int n = 1; n <= RP_BEAM_SAMPLES_MAX; n++) {
    double x[RP_BEAM_SAMPLES_MAX], w[RP_BEAM_SAMPLES_MAX];
    assert_int_equal(rp_beam_gauss_hermite(n, x, w, NULL), RP_OK);
    gsl_integration_fixed_workspace *ws =
        gsl_integration_fixed_alloc(gsl_integration_fixed_hermite, (size_t)n, 0.0, 1.0, 0.0, 0.0);
    const double *gx = gsl_integration_fixed_nodes(ws), *gw = gsl_integration_fixed_weights(ws);
    double sum = 0, var = 0;
    for (int i = 0; i < n; i++) {
      /* GSL orders nodes increasingly, as we do; tolerance 1e-12: tabulated digits */
      assert_close(x[i], M_SQRT2 * gx[i], 1e-12, 1e-12);
      assert_close(w[i], gw[i] / sqrt(M_PI), 1e-12, 1e-14);
      sum += w[i];
      var += w[i] * x[i] * x[i];
    }
    gsl_integration_fixed_free(ws);
    assert_close(sum, 1.0, 1e-14, 0);
    /* the rule is exact for x^2 from n = 2 on (n = 1 has its node at 0) */
    if (n >= 2) assert_close(var, 1.0, 1e-13, 0);
  }
}

static void test_bad_rule_order_is_refused(void **state) {
  (void)state;
  double x[8], w[8];
  rp_error e = {0};
  assert_int_equal(rp_beam_gauss_hermite(0, x, w, &e), RP_EINVAL);
  assert_int_equal(rp_beam_gauss_hermite(RP_BEAM_SAMPLES_MAX + 1, x, w, &e), RP_EINVAL);
  assert_int_equal(rp_beam_gauss_hermite(2, NULL, w, &e), RP_EINVAL);
  /* two-way sigma: theta_1 / (4 sqrt(ln 2)) (D&Z 1993 eq. 5.75 form, from memory) */
  assert_close(rp_beam_sigma_deg(1.0), 1.0 / (4.0 * sqrt(log(2.0))), 1e-15, 0);
}

int main(void) {
  rp_test_init();
  const struct CMUnitTest tests[] = {
      cmocka_unit_test(test_height_matches_the_four_thirds_earth_formula),
      cmocka_unit_test(test_gauss_hermite_rule_matches_gsl),
      cmocka_unit_test(test_bad_rule_order_is_refused),
  };
  return cmocka_run_group_tests(tests, NULL, NULL);
}
