/* test_decimal.c — the plain-decimal rule shared by the file readers. */
#include "rp_test.h"

#include "io/decimal.h"

static void test_plain_decimals_are_accepted(void **state) {
  (void)state;
  const char *ok[] = {"0", "-3", "+2.5", "1.", ".5", "1e3", "2.5E-4", "-0.0e+0"};
  for (size_t i = 0; i < sizeof ok / sizeof ok[0]; i++) {
    double x = -1.0;
    assert_true(rp_decimal_is_plain(ok[i]));
    assert_int_equal(rp_decimal_parse(ok[i], &x), RP_DECIMAL_OK);
  }
  double x = 0.0;
  assert_int_equal(rp_decimal_parse("2.5E-4", &x), RP_DECIMAL_OK);
  assert_close(x, 2.5e-4, 0.0, 0.0); /* strtod of an exact decimal: bit-exact */
}

static void test_what_strtod_would_take_is_refused(void **state) {
  (void)state;
  const char *bad[] = {"", "nan", "inf", "-inf", "0x10", "1.6mm", " 1", "1 ", "1_000",
                       "e5", ".", "+", "1e", "1e+", "--1"};
  for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
    double x = 42.0;
    assert_false(rp_decimal_is_plain(bad[i]));
    assert_int_equal(rp_decimal_parse(bad[i], &x), RP_DECIMAL_NOT_PLAIN);
    assert_close(x, 42.0, 0.0, 0.0); /* untouched on failure */
  }
}

static void test_out_of_range_values_are_named(void **state) {
  (void)state;
  double x = 42.0;
  assert_int_equal(rp_decimal_parse("1e999", &x), RP_DECIMAL_OUT_OF_RANGE);
  assert_int_equal(rp_decimal_parse("-1e999", &x), RP_DECIMAL_OUT_OF_RANGE);
  assert_int_equal(rp_decimal_parse("1e-999", &x), RP_DECIMAL_OUT_OF_RANGE);
  assert_close(x, 42.0, 0.0, 0.0);
}

int main(void) {
  rp_test_init();
  const struct CMUnitTest tests[] = {
      cmocka_unit_test(test_plain_decimals_are_accepted),
      cmocka_unit_test(test_what_strtod_would_take_is_refused),
      cmocka_unit_test(test_out_of_range_values_are_named),
  };
  return cmocka_run_group_tests_name("decimal", tests, NULL, NULL);
}
