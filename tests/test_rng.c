/* test_rng.c — split random streams: reproducible, independent across keys, and the
 * right distributions (moments and a chi-square test of uniformity). */
#include "rp_test.h"

#include <string.h>

#include "rainprint/rng.h"

static void test_rng_same_seed_and_key_same_stream(void **state) {
  (void)state;
  rp_rng a, b;
  rp_rng_init(&a, 7, rp_rng_key(RP_RNG_TEST, 1, 2, 3));
  rp_rng_init(&b, 7, rp_rng_key(RP_RNG_TEST, 1, 2, 3));
  for (int i = 0; i < 1000; i++) assert_true(rp_rng_u64(&a) == rp_rng_u64(&b));
  for (int i = 0; i < 1000; i++) assert_true(rp_rng_normal(&a) == rp_rng_normal(&b));
}

static void test_rng_keys_and_seeds_differ(void **state) {
  (void)state;
  /* the key's parts are ordered: (1, 2) and (2, 1) are different streams */
  assert_true(rp_rng_key(RP_RNG_TEST, 1, 2, 0) != rp_rng_key(RP_RNG_TEST, 2, 1, 0));
  assert_true(rp_rng_key(RP_RNG_TEST, 0, 0, 0) != rp_rng_key(RP_RNG_ENSEMBLE, 0, 0, 0));
  rp_rng a, b, c;
  rp_rng_init(&a, 1, 5);
  rp_rng_init(&b, 1, 6);
  rp_rng_init(&c, 2, 5);
  int same_ab = 0, same_ac = 0;
  for (int i = 0; i < 1000; i++) {
    const uint64_t x = rp_rng_u64(&a);
    same_ab += x == rp_rng_u64(&b);
    same_ac += x == rp_rng_u64(&c);
  }
  assert_int_equal(same_ab, 0);
  assert_int_equal(same_ac, 0);
}

/* Neighbouring keys (the gates of one ray) must not give correlated streams: the
 * correlation of the first uniforms of 20000 consecutive keys with those of the next key
 * is within 4 standard errors (1/sqrt(n)) of 0. */
static void test_rng_neighbouring_keys_uncorrelated(void **state) {
  (void)state;
  enum { N = 20000 };
  static double u[N + 1];
  for (int k = 0; k <= N; k++) {
    rp_rng r;
    rp_rng_init(&r, 42, rp_rng_key(RP_RNG_TEST, 0, 0, (uint64_t)k));
    u[k] = rp_rng_uniform(&r);
  }
  double sx = 0, sy = 0, sxx = 0, syy = 0, sxy = 0;
  for (int k = 0; k < N; k++) {
    sx += u[k]; sy += u[k + 1];
    sxx += u[k] * u[k]; syy += u[k + 1] * u[k + 1]; sxy += u[k] * u[k + 1];
  }
  const double cov = sxy / N - (sx / N) * (sy / N);
  const double corr = cov / sqrt((sxx / N - (sx / N) * (sx / N)) * (syy / N - (sy / N) * (sy / N)));
  assert_true(fabs(corr) < 4.0 / sqrt((double)N));
}

/* Uniform: 100 equal bins over 1e6 draws; chi-square with 99 degrees of freedom has mean
 * 99 and SD 14; 99 + 5 SD = 169 fails a correct generator with probability < 1e-5. */
static void test_rng_uniform_chi_square(void **state) {
  (void)state;
  enum { BINS = 100, N = 1000000 };
  long count[BINS];
  memset(count, 0, sizeof count);
  rp_rng r;
  rp_rng_init(&r, 3, rp_rng_key(RP_RNG_TEST, 9, 0, 0));
  for (int i = 0; i < N; i++) {
    const double x = rp_rng_uniform(&r);
    assert_true(x >= 0.0 && x < 1.0);
    count[(int)(x * BINS)]++;
  }
  double chi2 = 0.0;
  const double expect = (double)N / BINS;
  for (int b = 0; b < BINS; b++) chi2 += (count[b] - expect) * (count[b] - expect) / expect;
  assert_true(chi2 < 169.0);
  for (int i = 0; i < 1000; i++) {
    const double x = rp_rng_uniform_pos(&r);
    assert_true(x > 0.0 && x < 1.0);
  }
}

/* Normal and exponential moments over 1e6 draws: the mean within 5 standard errors
 * (1e-3 x 5), the variance of N(0,1) within 5 x sqrt(2/n) = 0.0071, of Exp(1) (variance
 * 1, fourth central moment 9) within 5 x sqrt(8/n) = 0.014. */
static void test_rng_normal_and_exponential_moments(void **state) {
  (void)state;
  enum { N = 1000000 };
  rp_rng r;
  rp_rng_init(&r, 11, rp_rng_key(RP_RNG_TEST, 4, 0, 0));
  double s = 0, s2 = 0, e = 0, e2 = 0;
  for (int i = 0; i < N; i++) {
    const double x = rp_rng_normal(&r), y = rp_rng_exponential(&r);
    s += x; s2 += x * x; e += y; e2 += y * y;
  }
  assert_close(s / N, 0.0, 0.0, 5e-3);
  assert_close(s2 / N - (s / N) * (s / N), 1.0, 0.0, 7.1e-3);
  assert_close(e / N, 1.0, 0.0, 5e-3);
  assert_close(e2 / N - (e / N) * (e / N), 1.0, 0.0, 1.4e-2);
}

int main(void) {
  rp_test_init();
  const struct CMUnitTest tests[] = {
      cmocka_unit_test(test_rng_same_seed_and_key_same_stream),
      cmocka_unit_test(test_rng_keys_and_seeds_differ),
      cmocka_unit_test(test_rng_neighbouring_keys_uncorrelated),
      cmocka_unit_test(test_rng_uniform_chi_square),
      cmocka_unit_test(test_rng_normal_and_exponential_moments),
  };
  return cmocka_run_group_tests_name("rng", tests, NULL, NULL);
}
