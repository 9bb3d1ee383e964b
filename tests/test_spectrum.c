/* test_spectrum.c — the drop-spectrum CSV reader: good files, every error, and the DSD
 * of a row. Fixtures in tests/data/spectra/. */
#include "rp_test.h"

#include <string.h>

#include "rainprint/spectrum.h"

static const char *fixture(const char *name, char *buf, size_t n) {
  char rel[256];
  snprintf(rel, sizeof rel, "tests/data/spectra/%s", name);
  return rp_test_source_path(rel, buf, n);
}

static void test_spectrum_good_file_loads_bins_rows_and_labels(void **state) {
  (void)state;
  char path[1024];
  rp_spectrum_set *s = NULL;
  rp_error e = {0};
  assert_int_equal(rp_spectrum_load(fixture("good.csv", path, sizeof path), &s, &e), RP_OK);
  assert_non_null(s);
  assert_int_equal(s->n_bins, 12);
  assert_int_equal(s->n_rows, 4);
  /* values as written in the file: decimal parsing is exact to the last ulp */
  assert_close(s->center_mm[0], 0.125, 0.0, 0.0);
  assert_close(s->center_mm[11], 3.75, 0.0, 0.0);
  assert_close(s->width_mm[8], 0.5, 0.0, 0.0);
  assert_close(s->conc[0 * 12 + 2], 2210.0, 0.0, 0.0);
  assert_close(s->conc[1 * 12 + 2], 1805.5, 0.0, 0.0);
  assert_close(s->conc[3 * 12 + 1], 3200.0, 0.0, 0.0); /* 3.2e3 */
  assert_close(s->conc[3 * 12 + 2], 2500.0, 0.0, 0.0); /* 2.5E+3 */
  assert_string_equal(s->labels[0], "2031-06-02T14:00:00Z");
  assert_string_equal(s->labels[2], ""); /* empty label kept empty */
  assert_string_equal(s->labels[3], "2031-06-02T14:03:00Z");
  rp_spectrum_free(s);
}

static void test_spectrum_crlf_file_loads(void **state) {
  (void)state;
  char path[1024];
  rp_spectrum_set *s = NULL;
  assert_int_equal(rp_spectrum_load(fixture("good_crlf.csv", path, sizeof path), &s, NULL),
                   RP_OK);
  assert_int_equal(s->n_bins, 3);
  assert_int_equal(s->n_rows, 1);
  assert_string_equal(s->labels[0], "row-a");
  assert_close(s->conc[2], 1.0, 0.0, 0.0);
  /* the row is the hand spectrum of test_dsd: D0 = 1.5 + 28.5/40 mm (worked there) */
  rp_dsd d;
  assert_int_equal(rp_spectrum_row_dsd(s, 0, &d, NULL), RP_OK);
  rp_dsd_moments m;
  assert_int_equal(rp_dsd_moments_eval(&d, RP_FALL_ATLAS, 1.0, &m, NULL), RP_OK);
  assert_close(m.d0_mm, 2.2125, 1e-14, 0.0);
  rp_spectrum_free(s);
}

static void test_spectrum_row_dsd_borrows_the_row(void **state) {
  (void)state;
  char path[1024];
  rp_spectrum_set *s = NULL;
  rp_error e = {0};
  assert_int_equal(rp_spectrum_load(fixture("good.csv", path, sizeof path), &s, &e), RP_OK);
  rp_dsd d;
  assert_int_equal(rp_spectrum_row_dsd(s, 1, &d, &e), RP_OK);
  assert_int_equal(d.model, RP_DSD_SPECTRUM);
  assert_ptr_equal(d.bin_conc_m3_mm, s->conc + 12);
  assert_close(d.dmin_mm, 0.0, 0.0, 0.0);
  assert_close(d.dmax_mm, 4.0, 0.0, 0.0);
  /* M0 by hand from the file's second row: sum N_i w_i
   * = 0.25 (0+1100+1805.5+1400+900+505+270+131) + 0.5 (48+10+2+0.25) */
  double m0 = 0.0;
  assert_int_equal(rp_dsd_moment(&d, 0.0, &m0, &e), RP_OK);
  assert_close(m0, 0.25 * 6111.5 + 0.5 * 60.25, 1e-14, 0.0);
  /* a row of zeros is a valid DSD without water */
  assert_int_equal(rp_spectrum_row_dsd(s, 2, &d, &e), RP_OK);
  rp_dsd_moments m;
  assert_int_equal(rp_dsd_moments_eval(&d, RP_FALL_ATLAS, 1.0, &m, &e), RP_EDOM);
  /* out of range and NULL */
  assert_int_equal(rp_spectrum_row_dsd(s, 4, &d, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "row 4 out of range"));
  assert_int_equal(rp_spectrum_row_dsd(NULL, 0, &d, &e), RP_EINVAL);
  assert_int_equal(rp_spectrum_row_dsd(s, 0, NULL, &e), RP_EINVAL);
  rp_spectrum_free(s);
  rp_spectrum_free(NULL); /* no-op */
}

static void test_spectrum_missing_file_is_io_error(void **state) {
  (void)state;
  char path[1024];
  rp_spectrum_set *s = (rp_spectrum_set *)&s; /* must be reset to NULL */
  rp_error e = {0};
  assert_int_equal(rp_spectrum_load(fixture("no_such_file.csv", path, sizeof path), &s, &e),
                   RP_EIO);
  assert_null(s);
  assert_non_null(strstr(e.msg, "no_such_file.csv: cannot open"));
  assert_int_equal(rp_spectrum_load(NULL, &s, &e), RP_EINVAL);
  assert_int_equal(rp_spectrum_load(path, NULL, &e), RP_EINVAL);
}

/* Every malformed fixture: status RP_EPARSE and a message with file:line and the
 * column or field at fault. */
static void test_spectrum_bad_files_name_file_line_and_column(void **state) {
  (void)state;
  static const struct {
    const char *file, *where, *what;
  } cases[] = {
      {"bad_column_count.csv", "bad_column_count.csv:4:", "3 fields, expected 4"},
      {"bad_text_in_number.csv", "bad_text_in_number.csv:4:",
       "column 3 (bin 2, centre 1.5 mm): '5/m3' is not a number"},
      {"bad_negative_conc.csv", "bad_negative_conc.csv:3:",
       "column 3 (bin 2, centre 1.5 mm): concentration -5 m^-3 mm^-1 must be >= 0"},
      {"bad_nan_conc.csv", "bad_nan_conc.csv:3:",
       "column 4 (bin 3, centre 2.5 mm): 'nan' is not a number"},
      {"bad_hex.csv", "bad_hex.csv:3:", "column 2 (bin 1, centre 0.5 mm): '0x10' is not"},
      {"bad_empty_conc.csv", "bad_empty_conc.csv:3:", "column 3 (bin 2, centre 1.5 mm): empty"},
      {"bad_nonmonotonic.csv", "bad_nonmonotonic.csv:2:",
       "column 4 (bin 3): bin centres not increasing"},
      {"bad_overlap.csv", "bad_overlap.csv:2:", "column 3 (bin 2): bin [0.75, 2.25] mm overlaps"},
      {"bad_zero_width.csv", "bad_zero_width.csv:2:",
       "column 3 (bin_width_mm of bin 2): 0 mm must be > 0"},
      {"bad_negative_width.csv", "bad_negative_width.csv:2:",
       "column 3 (bin_width_mm of bin 2): -1 mm must be > 0"},
      {"bad_below_zero.csv", "bad_below_zero.csv:2:", "column 2 (bin 1): centre 0.05 mm"},
      {"bad_width_count.csv", "bad_width_count.csv:2:",
       "bin_width_mm has 2 bins but bin_center_mm has 3"},
      {"bad_header_key.csv", "bad_header_key.csv:1:",
       "column 1: expected 'bin_center_mm', found 'time'"},
      {"bad_missing_width.csv", "bad_missing_width.csv:1:", "'bin_width_mm' line"},
      {"bad_no_rows.csv", "bad_no_rows.csv:4:", "no data rows"},
      {"bad_empty.csv", "bad_empty.csv:", "empty or only comments"},
      {"bad_only_comments.csv", "bad_only_comments.csv:", "empty or only comments"},
  };
  for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
    char path[1024];
    rp_spectrum_set *s = NULL;
    rp_error e = {0};
    rp_status st = rp_spectrum_load(fixture(cases[i].file, path, sizeof path), &s, &e);
    if (st != RP_EPARSE || !strstr(e.msg, cases[i].where) || !strstr(e.msg, cases[i].what))
      fail_msg("%s: status %s, message '%s'", cases[i].file, rp_status_name(st), e.msg);
    assert_null(s);
  }
}

int main(void) {
  rp_test_init();
  const struct CMUnitTest tests[] = {
      cmocka_unit_test(test_spectrum_good_file_loads_bins_rows_and_labels),
      cmocka_unit_test(test_spectrum_crlf_file_loads),
      cmocka_unit_test(test_spectrum_row_dsd_borrows_the_row),
      cmocka_unit_test(test_spectrum_missing_file_is_io_error),
      cmocka_unit_test(test_spectrum_bad_files_name_file_line_and_column),
  };
  return cmocka_run_group_tests_name("spectrum", tests, NULL, NULL);
}
