/* test_text_rules.c — one set of text rules for every reader (spectrum CSV, preset and
 * climate YAML): NUL bytes, byte-order marks, line length, one YAML document, regular
 * files only; and the DSD bounds reached through the files. */
#include "rp_test.h"

#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "io/climate_data.h"
#include "io/text_rules.h"
#include "rainprint/presets.h"
#include "rainprint/spectrum.h"

static const char CSV[] = "bin_center_mm,0.5,1.5\nbin_width_mm,1,1\nt1,10,5\n";
static const char PRESET[] =
    "name: test-rain\ndescription: \"a test\"\nmodel: normalized-gamma\nparameters:\n"
    "  nw_m3_mm: 8000\n  d0_mm: 1.6\n  mu: 3\nsource: \"invented for the test\"\n";
static const char CLIMATE[] =
    "name: test-climate\nsource: \"invented for the test\"\nclusters:\n"
    "  - name: one\n    weight: 1\n    log10_nw_mean: 3.4\n    log10_nw_sd: 0.3\n"
    "    d0_mean_mm: 1.4\n    d0_sd_mm: 0.35\n    corr_log10_nw_d0: -0.5\n"
    "    mu_mean: 3\n    mu_sd: 2\n";

static rp_status load_csv(const char *data, size_t n, rp_error *e) {
  rp_spectrum_set *s = NULL;
  rp_status st = rp_spectrum_load_data("mem.csv", data, n, &s, e);
  rp_spectrum_free(s);
  return st;
}

static rp_status load_preset(const char *data, size_t n, rp_error *e) {
  rp_preset p;
  return rp_preset_load_data("mem.yaml", data, n, &p, e);
}

static rp_status load_climate(const char *data, size_t n, rp_error *e) {
  rp_climate c;
  return rp_climate_load_yaml_data("mem.yaml", data, n, &c, e);
}

typedef rp_status (*loader)(const char *, size_t, rp_error *);

static void test_every_reader_accepts_the_plain_files(void **state) {
  (void)state;
  rp_error e = {0};
  assert_int_equal(load_csv(CSV, strlen(CSV), &e), RP_OK);
  assert_int_equal(load_preset(PRESET, strlen(PRESET), &e), RP_OK);
  if (load_climate(CLIMATE, strlen(CLIMATE), &e) != RP_OK) fail_msg("%s", e.msg);
}

/* "1<NUL>0" read as 1 before: now refused with line and column, by every reader. */
static void test_nul_byte_refused_with_line_and_column(void **state) {
  (void)state;
  const loader loaders[] = {load_csv, load_preset, load_climate};
  const char *texts[] = {CSV, PRESET, CLIMATE};
  for (size_t k = 0; k < 3; k++) {
    char buf[1024];
    const size_t n = strlen(texts[k]);
    memcpy(buf, texts[k], n);
    /* second line, third byte */
    const char *nl = memchr(buf, '\n', n);
    const size_t at = (size_t)(nl - buf) + 3;
    buf[at] = '\0';
    rp_error e = {0};
    assert_int_equal(loaders[k](buf, n, &e), RP_EPARSE);
    if (strstr(e.msg, "mem.") == NULL || strstr(e.msg, ":2:3: NUL byte") == NULL)
      fail_msg("reader %zu: '%s'", k, e.msg);
  }
  /* the case of the issue: a number with a NUL inside */
  const char csv[] = "bin_center_mm,0.5,1.5\nbin_width_mm,1,1\nt1,1\0" "0,5\n";
  rp_error e = {0};
  assert_int_equal(load_csv(csv, sizeof csv - 1, &e), RP_EPARSE);
  assert_non_null(strstr(e.msg, "mem.csv:3:5"));
}

/* A UTF-8 byte-order mark is accepted the same way by every reader; UTF-16 is refused
 * with a readable message. */
static void test_byte_order_marks(void **state) {
  (void)state;
  const loader loaders[] = {load_csv, load_preset, load_climate};
  const char *texts[] = {CSV, PRESET, CLIMATE};
  for (size_t k = 0; k < 3; k++) {
    char buf[1024] = "\xEF\xBB\xBF";
    const size_t n = strlen(texts[k]);
    memcpy(buf + 3, texts[k], n);
    rp_error e = {0};
    if (loaders[k](buf, n + 3, &e) != RP_OK) fail_msg("reader %zu with BOM: %s", k, e.msg);
    buf[0] = (char)0xFF;
    buf[1] = (char)0xFE;
    assert_int_equal(loaders[k](buf, n + 3, &e), RP_EPARSE);
    assert_non_null(strstr(e.msg, "UTF-8"));
  }
  size_t body = 9;
  rp_error e = {0};
  assert_int_equal(rp_text_check("x", "abc", 3, &body, &e), RP_OK);
  assert_int_equal(body, 0);
  assert_int_equal(rp_text_check("x", "\xEF\xBB\xBF" "abc", 6, &body, &e), RP_OK);
  assert_int_equal(body, 3);
  assert_int_equal(rp_text_check("x", "\0\0\xFE\xFF", 4, &body, &e), RP_EPARSE);
}

static void test_line_length_limit(void **state) {
  (void)state;
  const size_t n = RP_TEXT_MAX_LINE_BYTES + 10;
  char *buf = malloc(n + 1);
  memset(buf, '1', n);
  buf[n] = '\0';
  rp_error e = {0};
  assert_int_equal(rp_text_check("long.csv", buf, n, NULL, &e), RP_EPARSE);
  assert_non_null(strstr(e.msg, "long.csv:1: line longer than"));
  /* exactly at the limit, with "\r\n", is fine */
  buf[RP_TEXT_MAX_LINE_BYTES] = '\r';
  buf[RP_TEXT_MAX_LINE_BYTES + 1] = '\n';
  assert_int_equal(rp_text_check("ok.csv", buf, RP_TEXT_MAX_LINE_BYTES + 2, NULL, &e), RP_OK);
  assert_int_equal(load_csv(buf, n, &e), RP_EPARSE);
  free(buf);
  assert_int_equal(rp_text_check(NULL, "a", 1, NULL, &e), RP_EINVAL);
}

/* A second YAML document was silently ignored: refused now, with its position. */
static void test_multi_document_yaml_refused(void **state) {
  (void)state;
  char buf[2048];
  rp_error e = {0};
  snprintf(buf, sizeof buf, "%s---\n%s", PRESET, PRESET);
  assert_int_equal(load_preset(buf, strlen(buf), &e), RP_EPARSE);
  assert_non_null(strstr(e.msg, "second YAML document"));
  assert_non_null(strstr(e.msg, "mem.yaml:9:"));
  snprintf(buf, sizeof buf, "%s---\nname: other\n", CLIMATE);
  assert_int_equal(load_climate(buf, strlen(buf), &e), RP_EPARSE);
  assert_non_null(strstr(e.msg, "second YAML document"));
  /* an explicit start marker of the one document is fine */
  snprintf(buf, sizeof buf, "---\n%s", PRESET);
  assert_int_equal(load_preset(buf, strlen(buf), &e), RP_OK);
}

/* A FIFO given as a file is refused at once (it would block in open or read). */
static void test_fifo_refused_by_file_readers(void **state) {
  (void)state;
  char path[512];
  snprintf(path, sizeof path, "%s/test_text_rules.fifo",
           getenv("RP_BINARY_DIR") ? getenv("RP_BINARY_DIR") : ".");
  unlink(path);
  assert_int_equal(mkfifo(path, 0600), 0);
  rp_error e = {0};
  rp_spectrum_set *s = NULL;
  assert_int_equal(rp_spectrum_load(path, &s, &e), RP_EIO);
  assert_non_null(strstr(e.msg, "not a regular file"));
  rp_preset p;
  assert_int_equal(rp_preset_load_file(path, &p, &e), RP_EIO);
  char *text = NULL;
  size_t n = 0;
  assert_int_equal(rp_text_read_file(path, &text, &n, &e), RP_EIO);
  assert_null(text);
  unlink(path);
  assert_int_equal(rp_text_read_file(NULL, &text, &n, &e), RP_EINVAL);
}

/* Values far outside the physical range are refused through the DSD bounds: a preset
 * with nw 1e300 gave 3000 dBZ, a spectrum row at 1e307 became a relation sample. */
static void test_files_with_absurd_values_refused(void **state) {
  (void)state;
  char buf[1024];
  rp_error e = {0};
  snprintf(buf, sizeof buf, "%s", PRESET);
  char *nw = strstr(buf, "8000");
  memcpy(nw, "1e300", 5); /* "1e3000" after the overwrite: out of double range */
  assert_int_equal(load_preset(buf, strlen(buf), &e), RP_EPARSE);
  const char p2[] =
      "name: test-rain\ndescription: \"a test\"\nmodel: normalized-gamma\nparameters:\n"
      "  nw_m3_mm: 1e300\n  d0_mm: 1.6\n  mu: 3\nsource: \"invented for the test\"\n";
  assert_int_equal(load_preset(p2, strlen(p2), &e), RP_EPARSE);
  assert_non_null(strstr(e.msg, "Nw"));
  /* bins that all lie above 10 mm cannot make a DSD: refused at load (fuzz_spectrum) */
  const char high[] = "bin_center_mm,11,20,37\nbin_width_mm,1,1,1\n,00,5,1\n";
  assert_int_equal(load_csv(high, strlen(high), &e), RP_EPARSE);
  assert_non_null(strstr(e.msg, "mem.csv:2: column 2 (bin 1): every bin lies above 10 mm"));
  const char csv[] = "bin_center_mm,0.5,1.5\nbin_width_mm,1,1\nt1,10,1e307\n";
  assert_int_equal(load_csv(csv, strlen(csv), &e), RP_EPARSE);
  assert_non_null(strstr(e.msg, "mem.csv:3"));
  assert_non_null(strstr(e.msg, "above"));
}

int main(void) {
  rp_test_init();
  const struct CMUnitTest tests[] = {
      cmocka_unit_test(test_every_reader_accepts_the_plain_files),
      cmocka_unit_test(test_nul_byte_refused_with_line_and_column),
      cmocka_unit_test(test_byte_order_marks),
      cmocka_unit_test(test_line_length_limit),
      cmocka_unit_test(test_multi_document_yaml_refused),
      cmocka_unit_test(test_fifo_refused_by_file_readers),
      cmocka_unit_test(test_files_with_absurd_values_refused),
  };
  return cmocka_run_group_tests_name("text_rules", tests, NULL, NULL);
}
