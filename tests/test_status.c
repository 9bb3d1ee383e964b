/* test_status.c — the status table and the error record. */
#include "rp_test.h"

#include <string.h>

#include "rainprint/status.h"

static void test_status_names_and_messages(void **state) {
  (void)state;
  assert_string_equal(rp_status_name(RP_OK), "OK");
  assert_string_equal(rp_status_name(RP_ENOCONV), "ENOCONV");
  assert_string_equal(rp_status_message(RP_EINVAL), "invalid argument");
  assert_string_equal(rp_status_name((rp_status)999), "UNKNOWN");
}

static void test_status_input_errors_map_to_exit_2(void **state) {
  (void)state;
  assert_true(rp_status_is_input_error(RP_EINVAL));
  assert_true(rp_status_is_input_error(RP_EPARSE));
  assert_true(rp_status_is_input_error(RP_ETABLE));
  assert_false(rp_status_is_input_error(RP_ENOCONV));
  assert_false(rp_status_is_input_error(RP_ENOMEM));
  assert_false(rp_status_is_input_error(RP_OK));
}

static void test_error_set_and_prefix(void **state) {
  (void)state;
  rp_error e = {0};
  assert_int_equal(rp_error_set(&e, RP_EDOM, "D = %.1f mm", 12.0), RP_EDOM);
  assert_int_equal(e.status, RP_EDOM);
  assert_string_equal(e.msg, "D = 12.0 mm");
  rp_error_prefix(&e, "%s: ", "drop");
  assert_string_equal(e.msg, "drop: D = 12.0 mm");
  rp_error_clear(&e);
  assert_int_equal(e.status, RP_OK);
  assert_string_equal(e.msg, "");
  assert_int_equal(rp_error_set(NULL, RP_EIO, "ignored"), RP_EIO);
}

static void test_assert_close_helper_rejects_nan(void **state) {
  (void)state;
  /* The helper itself: equal infinities pass, tolerances are honoured. */
  assert_close(INFINITY, INFINITY, 0.0, 0.0);
  assert_close(1.0 + 1e-13, 1.0, 1e-12, 0.0);
  assert_close(1e-20, 0.0, 0.0, 1e-18);
}

int main(void) {
  rp_test_init();
  const struct CMUnitTest tests[] = {
      cmocka_unit_test(test_status_names_and_messages),
      cmocka_unit_test(test_status_input_errors_map_to_exit_2),
      cmocka_unit_test(test_error_set_and_prefix),
      cmocka_unit_test(test_assert_close_helper_rejects_nan),
  };
  return cmocka_run_group_tests_name("status", tests, NULL, NULL);
}
