/* test_yaml_check.c — the YAML pre-scan shared by the preset and climate loaders. */
#include "rp_test.h"

#include <string.h>

#include "io/yaml_check.h"

static const char *const keys[] = {"mu", "d0_mm"};

static rp_status scan_text(const char *text, rp_error *err) {
  FILE *f = fmemopen((void *)(uintptr_t)text, strlen(text), "r");
  assert_non_null(f);
  const rp_status s = rp_yaml_scan_numbers("mem.yaml", f, keys, 2, err);
  fclose(f);
  return s;
}

static void test_scan_accepts_plain_numbers_and_ignores_other_keys(void **state) {
  (void)state;
  rp_error err = {0};
  assert_int_equal(scan_text("name: x\nparameters:\n  mu: 3\n  d0_mm: 1.5e0\nnote: inf\n", &err),
                   RP_OK);
}

static void test_scan_names_file_line_column_and_field(void **state) {
  (void)state;
  rp_error err = {0};
  assert_int_equal(scan_text("name: x\nparameters:\n  mu: 3\n  d0_mm: 1.6mm\n", &err), RP_EPARSE);
  assert_non_null(strstr(err.msg, "mem.yaml:4:10"));
  assert_non_null(strstr(err.msg, "parameters.d0_mm"));
  assert_int_equal(scan_text("items:\n  - mu: nan\n", &err), RP_EPARSE);
  assert_non_null(strstr(err.msg, "items[0].mu"));
  assert_int_equal(scan_text("mu: 1e999\n", &err), RP_EPARSE);
  assert_non_null(strstr(err.msg, "range"));
}

static void test_scan_reports_yaml_syntax_errors_with_position(void **state) {
  (void)state;
  rp_error err = {0};
  assert_int_equal(scan_text("a: [1, 2\nb: 3\n", &err), RP_EPARSE);
  assert_non_null(strstr(err.msg, "mem.yaml:"));
  assert_non_null(strstr(err.msg, "YAML syntax"));
}

/* A second document was silently ignored by libcyaml: the scan refuses it, from a file
 * stream and from memory alike, with the position of its start. */
static void test_scan_refuses_a_second_document(void **state) {
  (void)state;
  rp_error err = {0};
  assert_int_equal(scan_text("mu: 3\n---\nmu: 4\n", &err), RP_EPARSE);
  assert_non_null(strstr(err.msg, "mem.yaml:2:1: a second YAML document"));
  const char two[] = "---\nmu: 3\n...\n---\nmu: 4\n";
  assert_int_equal(rp_yaml_scan_numbers_data("two.yaml", two, sizeof two - 1, keys, 2, &err),
                   RP_EPARSE);
  assert_non_null(strstr(err.msg, "two.yaml:4:1"));
  const char one[] = "---\nmu: 3\n...\n";
  assert_int_equal(rp_yaml_scan_numbers_data("one.yaml", one, sizeof one - 1, keys, 2, &err),
                   RP_OK);
  assert_int_equal(rp_yaml_scan_numbers_data(NULL, one, 3, keys, 2, &err), RP_EINVAL);
}

static void test_scan_rejects_null_arguments(void **state) {
  (void)state;
  rp_error err = {0};
  assert_int_equal(rp_yaml_scan_numbers("x.yaml", NULL, keys, 2, &err), RP_EINVAL);
}

int main(void) {
  rp_test_init();
  const struct CMUnitTest tests[] = {
      cmocka_unit_test(test_scan_accepts_plain_numbers_and_ignores_other_keys),
      cmocka_unit_test(test_scan_names_file_line_column_and_field),
      cmocka_unit_test(test_scan_reports_yaml_syntax_errors_with_position),
      cmocka_unit_test(test_scan_refuses_a_second_document),
      cmocka_unit_test(test_scan_rejects_null_arguments),
  };
  return cmocka_run_group_tests_name("yaml_check", tests, NULL, NULL);
}
