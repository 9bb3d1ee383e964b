/* test_mie.c — Mie scattering by spheres (src/scatter/mie.c).
 *
 * Oracles: a published worked example (Bohren & Huffman 1983 appendix A, values from
 * memory), the Rayleigh limit (Bohren & Huffman 1983 ch. 5, small spheres), energy
 * conservation for lossless spheres, the optical theorem and the amplitude
 * conventions of scatter.h. An independent SciPy sum is in tests/ref_special_functions.py. */
#include "rp_test.h"

#include <complex.h>
#include <string.h>

#include "rainprint/mie.h"

/* Complex relative difference |a - b| / |b|. */
static double crel(double complex a, double complex b) { return cabs(a - b) / cabs(b); }

static void test_mie_bohren_huffman_worked_example(void **state) {
  (void)state;
  /* Bohren & Huffman (1983), appendix A, example output of their sphere program:
   * m = 1.55 + 0i, radius 0.525, wavelength 0.6328 (x = 5.213), Qext = 3.10543,
   * Qsca = 3.10543, Qback = 2.92534 — from memory. The printed values have 6
   * significant digits, so the tolerance is half a unit in the last digit plus
   * margin: 1e-5 absolute. (The independent SciPy sum in ref_special_functions.py
   * checks the same case to 1e-9.) */
  rp_mie_result r;
  rp_error err = {0};
  assert_int_equal(rp_mie_sphere_eval(2.0 * 0.525, 0.6328, 1.55, &r, &err), RP_OK);
  assert_close(r.qext, 3.10543, 0.0, 1e-5);
  assert_close(r.qsca, 3.10543, 0.0, 1e-5);
  assert_close(r.qback, 2.92534, 0.0, 1e-5);
  /* Wiscombe (1980): n_max = x + 4.05 x^(1/3) + 2 = 13.98 -> 14 terms */
  assert_int_equal(r.nmax, 14);
}

/* Relative deviations of Qback and Qsca from the Rayleigh forms at size parameter x. */
static void rayleigh_deviation(double x, double complex m, double *dback, double *dsca,
                               double *dabs) {
  rp_mie_result r;
  rp_error err = {0};
  /* diameter 2x at wavelength 2 pi gives size parameter x */
  assert_int_equal(rp_mie_sphere_eval(2.0 * x, 2.0 * M_PI, m, &r, &err), RP_OK);
  const double complex K = (m * m - 1.0) / (m * m + 2.0);
  const double k2 = creal(K) * creal(K) + cimag(K) * cimag(K);
  *dback = fabs(r.qback / (4.0 * pow(x, 4) * k2) - 1.0);
  *dsca = fabs(r.qsca / (8.0 / 3.0 * pow(x, 4) * k2) - 1.0);
  *dabs = cimag(K) > 0.0 ? fabs((r.qext - r.qsca) / (4.0 * x * cimag(K)) - 1.0) : 0.0;
}

static void test_mie_rayleigh_limit_small_spheres(void **state) {
  (void)state;
  /* Bohren & Huffman (1983) ch. 5 (small spheres): for x -> 0,
   * Qsca -> (8/3) x^4 |K|^2, Qback -> 4 x^4 |K|^2 (from |S1(pi)| -> x^3 |K|) and
   * Qabs -> 4 x Im K, K = (m^2-1)/(m^2+2). The first corrections are O(x^2) with
   * coefficients that grow like |m|^2 (Bohren & Huffman's series for a_1, b_1): at
   * x = 1e-3 they are below 1e-5 for Qsca, Qback (about 5e-6 for a water-like
   * m ~ 9 + 1i) and below 2e-4 for Qabs. The limit itself is checked by the O(x^2)
   * shrinkage: 10x smaller x must give at least 50x smaller deviations (100x in
   * exact arithmetic). */
  const double complex ms[] = {csqrt(CMPLX(80.0, 20.0)), 1.33, CMPLX(1.78, 0.004)};
  for (size_t i = 0; i < sizeof ms / sizeof ms[0]; i++) {
    double b3, s3, a3, b4, s4, a4;
    rayleigh_deviation(1e-3, ms[i], &b3, &s3, &a3);
    rayleigh_deviation(1e-4, ms[i], &b4, &s4, &a4);
    assert_close(b3, 0.0, 0.0, 1e-5);
    assert_close(s3, 0.0, 0.0, 1e-5);
    assert_close(a3, 0.0, 0.0, 2e-4);
    assert_true(b4 < b3 / 50.0);
    assert_true(s4 < s3 / 50.0);
    if (a3 > 0.0) assert_true(a4 < a3 / 50.0);
  }
}

static void test_mie_small_sphere_amplitude_convention(void **state) {
  (void)state;
  /* scatter.h / docs/method.md §1: f -> k^2 (D/2)^3 K, positive real for a lossless
   * small sphere, equal forward and back. At x = 1e-3 the O(x^2) size correction is
   * ~3e-7 for m = 1.33 (tolerance 1e-5) and Im f / Re f = (2/3) x^3 K (radiation
   * reaction) ~ 1e-10 (tolerance 1e-8). */
  rp_mie_result r;
  rp_error err = {0};
  const double lam = 10.0, d = 1e-3 * lam / M_PI; /* x = 1e-3 */
  const double complex m = 1.33, K = (m * m - 1.0) / (m * m + 2.0);
  const double k = 2.0 * M_PI / lam;
  assert_int_equal(rp_mie_sphere_eval(d, lam, m, &r, &err), RP_OK);
  const double f0 = k * k * pow(0.5 * d, 3) * creal(K);
  assert_true(creal(r.f_back_mm) > 0.0);
  assert_close(creal(r.f_back_mm), f0, 1e-5, 0.0);
  assert_close(creal(r.f_fwd_mm), f0, 1e-5, 0.0);
  assert_close(cimag(r.f_back_mm) / creal(r.f_back_mm), 0.0, 0.0, 1e-8);
  assert_true(cimag(r.f_fwd_mm) >= 0.0); /* C_ext = 2 lambda Im f(0) >= 0 */
}

static void test_mie_lossless_sphere_conserves_energy(void **state) {
  (void)state;
  /* For real m there is no absorption: Qext == Qsca (Bohren & Huffman 1983 eq. 4.61,
   * 4.62 — numbers from memory — with Re a_n = |a_n|^2 for real m). Both sums are
   * O(nmax) terms of the same numbers, so they agree to round-off: 1e-10 relative. */
  const double ms[] = {1.33, 1.55, 3.0, 9.0};
  const double xs[] = {0.05, 0.5, 5.0, 50.0, 500.0};
  rp_error err = {0};
  for (size_t i = 0; i < sizeof ms / sizeof ms[0]; i++) {
    for (size_t j = 0; j < sizeof xs / sizeof xs[0]; j++) {
      rp_mie_result r;
      assert_int_equal(rp_mie_sphere_eval(2.0 * xs[j], 2.0 * M_PI, ms[i], &r, &err), RP_OK);
      assert_close(r.qext, r.qsca, 1e-10, 0.0);
    }
  }
}

static void test_mie_cross_sections_follow_from_amplitudes(void **state) {
  (void)state;
  /* scatter.h: C_ext = 2 lambda Im f(0) (optical theorem) and sigma_back =
   * 4 pi |f(pi)|^2; these are identities of the definitions, so 1e-12. */
  rp_mie_result r;
  rp_error err = {0};
  const double lam = 31.9;
  assert_int_equal(rp_mie_sphere_eval(6.0, lam, csqrt(CMPLX(62.0, 30.0)), &r, &err), RP_OK);
  assert_close(r.c_ext_mm2, 2.0 * lam * cimag(r.f_fwd_mm), 1e-12, 0.0);
  const double fb = cabs(r.f_back_mm);
  assert_close(r.sigma_back_mm2, 4.0 * M_PI * fb * fb, 1e-12, 0.0);
  assert_true(r.c_ext_mm2 > r.c_sca_mm2); /* absorbing */
}

static void test_mie_s12_matches_forward_and_back_sums(void **state) {
  (void)state;
  /* Bohren & Huffman (1983) ch. 4: S1(0) = S2(0) = sum (2n+1)(a_n+b_n)/2 and
   * S2(pi) = -S1(pi); rp_mie_s12 evaluates the general series (eq. 4.74, number from
   * memory), the result struct the special-case sums, so they agree to round-off
   * (1e-12). */
  const double x = 3.7;
  const double complex m = CMPLX(7.9, 2.1);
  const size_t nmax = rp_mie_nmax(x);
  double complex a[32], b[32], s1, s2;
  rp_error err = {0};
  assert_int_equal(rp_mie_coefficients(x, m, nmax, a, b, &err), RP_OK);
  rp_mie_result r;
  assert_int_equal(rp_mie_sphere_eval(2.0 * x, 2.0 * M_PI, m, &r, &err), RP_OK);
  rp_mie_s12(a, b, nmax, 1.0, &s1, &s2);
  assert_close(crel(s1, r.s1_fwd), 0.0, 0.0, 1e-12);
  assert_close(crel(s2, r.s1_fwd), 0.0, 0.0, 1e-12);
  rp_mie_s12(a, b, nmax, -1.0, &s1, &s2);
  assert_close(crel(s1, r.s1_back), 0.0, 0.0, 1e-12);
  assert_close(crel(s2, -r.s1_back), 0.0, 0.0, 1e-12);
}

static void test_mie_coefficients_far_above_x_vanish(void **state) {
  (void)state;
  /* Asking for far more terms than Wiscombe's n_max: the orders where y_n(x)
   * overflows get exact zeros (|a_n| < 1e-300) instead of NaN, and the low orders
   * are unchanged (the recurrences differ only in their start index: 1e-13). */
  static double complex a[400], b[400];
  double complex a3[3], b3[3];
  rp_error err = {0};
  assert_int_equal(rp_mie_coefficients(1e-3, 1.33, 400, a, b, &err), RP_OK);
  assert_int_equal(rp_mie_coefficients(1e-3, 1.33, 3, a3, b3, &err), RP_OK);
  assert_true(a[399] == 0.0 && b[399] == 0.0);
  for (int n = 0; n < 3; n++) {
    assert_close(crel(a[n], a3[n]), 0.0, 0.0, 1e-13);
    assert_close(crel(b[n], b3[n]), 0.0, 0.0, 1e-13);
  }
  for (int n = 0; n < 400; n++) assert_true(isfinite(creal(a[n])) && isfinite(cimag(b[n])));
}

static void test_mie_nmax_follows_wiscombe(void **state) {
  (void)state;
  /* Wiscombe (1980): n_max = x + 4.05 x^(1/3) + 2, rounded:
   * x = 10 -> 20.73 -> 21; x = 100 -> 120.8 -> 121. */
  assert_int_equal(rp_mie_nmax(10.0), 21);
  assert_int_equal(rp_mie_nmax(100.0), 121);
  assert_int_equal(rp_mie_nmax(0.0), 2);
  assert_int_equal(rp_mie_nmax(NAN), 1);
  assert_int_equal(rp_mie_nmax(-1.0), 1);
}

static void test_mie_rejects_invalid_input(void **state) {
  (void)state;
  rp_mie_result r;
  rp_error err = {0};
  const double complex m = 1.33;
  assert_int_equal(rp_mie_sphere_eval(0.0, 10.0, m, &r, &err), RP_EINVAL);
  assert_non_null(strstr(err.msg, "diameter"));
  assert_int_equal(rp_mie_sphere_eval(-1.0, 10.0, m, &r, &err), RP_EINVAL);
  assert_int_equal(rp_mie_sphere_eval(NAN, 10.0, m, &r, &err), RP_EINVAL);
  assert_int_equal(rp_mie_sphere_eval(1.0, 0.0, m, &r, &err), RP_EINVAL);
  assert_non_null(strstr(err.msg, "wavelength"));
  assert_int_equal(rp_mie_sphere_eval(1.0, INFINITY, m, &r, &err), RP_EINVAL);
  assert_int_equal(rp_mie_sphere_eval(1.0, 10.0, m, NULL, &err), RP_EINVAL);
  /* outside the domain: absorbing with the wrong sign, NaN index, too large */
  assert_int_equal(rp_mie_sphere_eval(1.0, 10.0, CMPLX(1.33, -0.1), &r, &err), RP_EDOM);
  assert_non_null(strstr(err.msg, "refractive index"));
  assert_int_equal(rp_mie_sphere_eval(1.0, 10.0, CMPLX(NAN, 0.0), &r, &err), RP_EDOM);
  assert_int_equal(rp_mie_sphere_eval(1e4, 1.0, m, &r, &err), RP_EDOM);
  assert_non_null(strstr(err.msg, "size parameter"));

  double complex a[4], b[4];
  assert_int_equal(rp_mie_coefficients(1.0, m, 4, NULL, b, &err), RP_EINVAL);
  assert_int_equal(rp_mie_coefficients(1.0, m, 0, a, b, &err), RP_EINVAL);
  assert_int_equal(rp_mie_coefficients(0.0, m, 4, a, b, &err), RP_EINVAL);
  assert_int_equal(rp_mie_coefficients(NAN, m, 4, a, b, &err), RP_EINVAL);
  assert_int_equal(rp_mie_coefficients(2000.0, m, 4, a, b, &err), RP_EDOM);
  assert_int_equal(rp_mie_coefficients(1.0, CMPLX(0.0, 1.0), 4, a, b, &err), RP_EDOM);
  assert_int_equal(rp_mie_coefficients(1.0, m, 4, a, b, &err), RP_OK);
}

int main(void) {
  rp_test_init();
  const struct CMUnitTest tests[] = {
      cmocka_unit_test(test_mie_bohren_huffman_worked_example),
      cmocka_unit_test(test_mie_rayleigh_limit_small_spheres),
      cmocka_unit_test(test_mie_small_sphere_amplitude_convention),
      cmocka_unit_test(test_mie_lossless_sphere_conserves_energy),
      cmocka_unit_test(test_mie_cross_sections_follow_from_amplitudes),
      cmocka_unit_test(test_mie_s12_matches_forward_and_back_sums),
      cmocka_unit_test(test_mie_coefficients_far_above_x_vanish),
      cmocka_unit_test(test_mie_nmax_follows_wiscombe),
      cmocka_unit_test(test_mie_rejects_invalid_input),
  };
  return cmocka_run_group_tests_name("mie", tests, NULL, NULL);
}
