/* test_beam.c — 4/3-earth geometry at worked points and the Gauss–Hermite beam rule. */
#include "rp_test.h"

#include <gsl/gsl_integration.h>

#include "rainprint/beam.h"

/* Worked points of the 4/3-earth model (Doviak & Zrnić 1993 eqs. 2.28a/b, from memory;
 * k_e = 4/3, a = 6371 km) computed independently of the code's closed form: the target
 * placed in Cartesian coordinates about the earth's centre, antenna at (0, k_e a),
 * target at (r cos e, k_e a + r sin e), h = |target| - k_e a and s = k_e a atan2(x, y),
 * evaluated with Python's decimal module (40 digits) and printed to the millimetre.
 * The brief asks for 1 m; 0.01 m allows for the printed rounding only. */
static void test_height_matches_the_four_thirds_earth_formula(void **state) {
  (void)state;
  static const struct {
    double r_m, el_deg, h_m, s_m;
  } pts[] = {
      {50000, 0.0, 147.150, 49999.423},    {50000, 0.5, 583.458, 49994.951},
      {50000, 3.0, 2763.499, 49915.525},   {100000, 0.0, 588.584, 99995.381},
      {100000, 0.5, 1461.133, 99981.304},  {100000, 3.0, 5820.206, 99796.874},
      {200000, 0.0, 2354.092, 199963.057}, {200000, 0.5, 4098.737, 199914.387},
      {200000, 3.0, 12811.948, 199443.450},
  };
  for (size_t i = 0; i < sizeof pts / sizeof pts[0]; i++) {
    assert_close(rp_beam_height_m(pts[i].r_m, pts[i].el_deg), pts[i].h_m, 0, 0.01);
    assert_close(rp_beam_ground_range_m(pts[i].r_m, pts[i].el_deg), pts[i].s_m, 0, 0.01);
    double h, g;
    rp_beam_geometry(pts[i].r_m, pts[i].el_deg, &h, &g);
    assert_close(h, pts[i].h_m, 0, 0.01);
    assert_close(g, pts[i].s_m, 0, 0.01);
  }
  /* first-order check at 0 deg, 100 km: r^2/(2 k_e a) = 588.6 m (the series is accurate
   * to (r/R)^2 relative, far below 1 m) */
  const double R = 4.0 / 3.0 * 6371000.0;
  assert_close(rp_beam_height_m(100000.0, 0.0), 1e10 / (2 * R), 0, 1.0);
  /* vertical beam: height is range, ground range 0 */
  assert_close(rp_beam_height_m(5000.0, 90.0), 5000.0, 0, 1e-6);
  assert_close(rp_beam_ground_range_m(5000.0, 90.0), 0.0, 0, 1e-6);
  /* NaN in, NaN out (documented) */
  assert_true(isnan(rp_beam_height_m(NAN, 1.0)));
}

/* The two-way pattern of a beam of half-power (one-way) width theta_1 is 6 dB down
 * (a quarter) at theta_1 / 2 off axis: one-way power 1/2 there, squared for two ways
 * (Doviak & Zrnić 1993 §5.3, from memory). The normal weight of standard deviation
 * rp_beam_sigma_deg must give exactly that, for any beamwidth. */
static void test_beam_sigma_puts_the_two_way_pattern_6_db_down_at_half_the_beamwidth(void **state) {
  (void)state;
  const double bw[3] = {0.5, 1.0, 1.3};
  for (int i = 0; i < 3; i++) {
    const double sg = rp_beam_sigma_deg(bw[i]), off = 0.5 * bw[i];
    /* 1e-12: a closed form evaluated in double precision */
    assert_close(exp(-off * off / (2.0 * sg * sg)), 0.25, 1e-12, 0);
  }
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
}

int main(void) {
  rp_test_init();
  const struct CMUnitTest tests[] = {
      cmocka_unit_test(test_height_matches_the_four_thirds_earth_formula),
      cmocka_unit_test(test_beam_sigma_puts_the_two_way_pattern_6_db_down_at_half_the_beamwidth),
      cmocka_unit_test(test_gauss_hermite_rule_matches_gsl),
      cmocka_unit_test(test_bad_rule_order_is_refused),
  };
  return cmocka_run_group_tests(tests, NULL, NULL);
}
