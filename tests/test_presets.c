/* test_presets.c — the shipped DSD presets, the YAML loader and every error it reports.
 * Fixtures in tests/data/presets/. */
#include "rp_test.h"

#include <string.h>

#include "rainprint/presets.h"

static const char *fixture(const char *rel, char *buf, size_t n) {
  char full[512];
  snprintf(full, sizeof full, "tests/data/presets/%s", rel);
  return rp_test_source_path(full, buf, n);
}

static const rp_preset *by_name(const rp_preset *list, size_t n, const char *name) {
  for (size_t i = 0; i < n; i++)
    if (strcmp(list[i].name, name) == 0) return &list[i];
  fail_msg("preset %s not shipped", name);
  return NULL;
}

static void test_presets_shipped_dir_loads_sorted_with_sources(void **state) {
  (void)state;
  char dir[1024];
  rp_preset *list = NULL;
  size_t n = 0;
  rp_error e = {0};
  rp_test_source_path("dsd-presets", dir, sizeof dir);
  assert_int_equal(rp_preset_load_dir(dir, &list, &n, &e), RP_OK);
  assert_true(n >= 6);
  for (size_t i = 0; i < n; i++) {
    if (i > 0) assert_true(strcmp(list[i - 1].name, list[i].name) < 0);
    assert_true(strlen(list[i].description) > 0);
    assert_true(strlen(list[i].source) > 0);
    rp_dsd_moments m;
    assert_int_equal(rp_dsd_moments_eval(&list[i].dsd, RP_FALL_ATLAS, 1.0, &m, &e), RP_OK);
  }
  rp_preset_list_free(list);
  rp_preset_list_free(NULL); /* no-op */
}

/* The presets span the kinds of rain they claim, and their stated numbers hold. */
static void test_presets_span_drizzle_to_sparse_giants(void **state) {
  (void)state;
  char dir[1024];
  rp_preset *list = NULL;
  size_t n = 0;
  rp_test_source_path("dsd-presets", dir, sizeof dir);
  assert_int_equal(rp_preset_load_dir(dir, &list, &n, NULL), RP_OK);
  static const struct {
    const char *name;
    double r_mm_h, dbz; /* as stated in the preset's description/comment */
  } stated[] = {{"fine-drizzle", 0.4, 12.8},          {"gentle-stratiform", 3.0, 29.2},
                {"drenching-stratiform", 15.0, 41.8}, {"maritime-downpour", 73.0, 46.8},
                {"continental-cloudburst", 26.0, 47.0}, {"scattered-giants", 5.0, 43.2}};
  rp_dsd_moments m[6];
  for (int i = 0; i < 6; i++) {
    const rp_preset *p = by_name(list, n, stated[i].name);
    assert_int_equal(rp_dsd_moments_eval(&p->dsd, RP_FALL_ATLAS, 1.0, &m[i], NULL), RP_OK);
    /* the texts round to 2 figures ("about 73 mm/h"): 10 % and 0.5 dB */
    assert_close(m[i].rain_rate_mm_h, stated[i].r_mm_h, 0.1, 0.0);
    assert_close(m[i].z_rayleigh_dbz, stated[i].dbz, 0.0, 0.5);
  }
  /* drizzle: smallest drops; sparse giants: largest drops and fewest of them */
  for (int i = 1; i < 6; i++) assert_true(m[0].dm_mm < m[i].dm_mm);
  for (int i = 0; i < 5; i++) {
    assert_true(m[5].dm_mm > m[i].dm_mm);
    assert_true(m[5].nt_m3 < m[i].nt_m3);
  }
  /* Bringi et al. (2003) convective clusters (from memory): maritime-like
   * log10 Nw 4-4.5 with D0 1.5-1.75 mm; continental-like log10 Nw 3-3.5 with D0
   * 2-2.75 mm. The preset parameters (the D0-form Nw) sit inside them. */
  const rp_preset *mar = by_name(list, n, "maritime-downpour");
  const rp_preset *con = by_name(list, n, "continental-cloudburst");
  assert_true(log10(mar->dsd.nw_m3_mm) >= 4.0 && log10(mar->dsd.nw_m3_mm) <= 4.5 + 1e-3);
  assert_true(mar->dsd.d0_mm >= 1.5 && mar->dsd.d0_mm <= 1.75);
  assert_true(log10(con->dsd.nw_m3_mm) >= 3.0 && log10(con->dsd.nw_m3_mm) <= 3.5);
  assert_true(con->dsd.d0_mm >= 2.0 && con->dsd.d0_mm <= 2.75);
  /* Marshall & Palmer (1948) at 5 mm/h: N0 = 8000, Lambda = 4.1 * 5^-0.21; same
   * arithmetic, so 1e-15 */
  const rp_preset *mp = by_name(list, n, "classic-exponential");
  assert_int_equal(mp->dsd.model, RP_DSD_MARSHALL_PALMER);
  assert_close(mp->dsd.n0, 8000.0, 0.0, 0.0);
  assert_close(mp->dsd.lambda_per_mm, 4.1 * pow(5.0, -0.21), 1e-15, 0.0);
  rp_preset_list_free(list);
}

static void test_presets_file_with_all_fields(void **state) {
  (void)state;
  char path[1024];
  rp_preset p;
  rp_error e = {0};
  assert_int_equal(rp_preset_load_file(fixture("good_all_fields.yaml", path, sizeof path), &p,
                                       &e), RP_OK);
  assert_string_equal(p.name, "gamma-9");
  assert_string_equal(p.description, "A gamma fixture");
  assert_string_equal(p.source, "Invented for the tests.");
  assert_int_equal(p.dsd.model, RP_DSD_GAMMA);
  /* decimal values as written ("2.5" quoted is still a number): exact */
  assert_close(p.dsd.n0, 2.0e4, 0.0, 0.0);
  assert_close(p.dsd.mu, 2.5, 0.0, 0.0);
  assert_close(p.dsd.lambda_per_mm, 4.5, 0.0, 0.0);
  assert_close(p.dsd.dmin_mm, 0.2, 0.0, 0.0);
  assert_close(p.dsd.dmax_mm, 7.5, 0.0, 0.0);
  assert_int_equal(rp_preset_load_file(fixture("good.yaml", path, sizeof path), &p, &e), RP_OK);
  assert_int_equal(p.dsd.model, RP_DSD_NORMALIZED_GAMMA_D0);
  assert_close(p.dsd.dmin_mm, RP_DSD_DMIN_DEFAULT_MM, 0.0, 0.0);
  assert_close(p.dsd.dmax_mm, RP_DSD_DMAX_DEFAULT_MM, 0.0, 0.0);
}

static void test_presets_missing_file_and_null_arguments(void **state) {
  (void)state;
  char path[1024];
  rp_preset p;
  rp_error e = {0};
  assert_int_equal(rp_preset_load_file(fixture("nope.yaml", path, sizeof path), &p, &e), RP_EIO);
  assert_non_null(strstr(e.msg, "nope.yaml: cannot open"));
  assert_int_equal(rp_preset_load_file(NULL, &p, &e), RP_EINVAL);
  assert_int_equal(rp_preset_load_file(path, NULL, &e), RP_EINVAL);
}

/* Every malformed fixture gives RP_EPARSE with the file, the position where one is
 * known, and the field. */
static void test_presets_bad_files_name_file_line_and_field(void **state) {
  (void)state;
  static const struct {
    const char *file, *where, *what;
  } cases[] = {
      {"syntax_indent.yaml", "syntax_indent.yaml:6:2:", "YAML syntax: did not find expected key"},
      {"syntax_quote.yaml", "syntax_quote.yaml:4:1:", "YAML syntax: found unexpected end"},
      {"missing_field.yaml", "missing_field.yaml:5:3:", "Missing required mapping field: source"},
      {"text_number.yaml", "text_number.yaml:7:7:", "parameters.mu: 'fast' is not a plain"},
      {"wrong_type.yaml", "wrong_type.yaml:4:13:",
       "Expecting MAPPING, got event: SCALAR; in mapping field 'parameters'"},
      {"unknown_key.yaml", "unknown_key.yaml:", "Unexpected key: colour"},
      {"bad_enum.yaml", "bad_enum.yaml:3:8:", "Invalid ENUM value: lognormal"},
      {"nan.yaml", "nan.yaml:7:7:", "parameters.mu: 'nan' is not a plain decimal"},
      {"inf.yaml", "inf.yaml:6:10:", "parameters.d0_mm: 'inf'"},
      {"trailing_junk.yaml", "trailing_junk.yaml:6:10:", "parameters.d0_mm: '1.5mm'"},
      {"hex.yaml", "hex.yaml:5:13:", "parameters.nw_m3_mm: '0x10'"},
      {"overflow.yaml", "overflow.yaml:5:13:", "'1e999' is out of the range of a double"},
      {"negative.yaml", "negative.yaml: parameters:", "D0 = -1.5 mm must be finite and > 0"},
      {"mu_range.yaml", "mu_range.yaml: parameters:", "mu = 20 outside [-2, 15]"},
      {"unused_param.yaml", "unused_param.yaml:", "parameters.d0_mm is not used by model 'gamma'"},
      {"missing_param.yaml", "missing_param.yaml:", "parameters.lambda_per_mm missing"},
      {"both_d0_dm.yaml", "both_d0_dm.yaml:", "exactly one of parameters.d0_mm and"},
      {"neither_d0_dm.yaml", "neither_d0_dm.yaml:", "exactly one of parameters.d0_mm and"},
      {"bad_name.yaml", "bad_name.yaml:", "name 'Big Drops' must be lowercase"},
      {"long_name.yaml", "long_name.yaml:1:7:", "STRING length > 63"},
      {"duplicate_key.yaml", "duplicate_key.yaml:7:7:", "Mapping field already seen: d0_mm"},
      {"dmax_range.yaml", "dmax_range.yaml:", "dmax = 12 mm outside (0, 10] mm"},
      {"dmin_zero.yaml", "dmin_zero.yaml:", "dmin_mm = 0 must be > 0"},
      {"dmin_ge_dmax.yaml", "dmin_ge_dmax.yaml:", "dmax = 4 mm must be > dmin = 5 mm"},
      {"empty.yaml", "empty.yaml:", "empty file"},
      {"not_mapping.yaml", "not_mapping.yaml:", "Expecting MAPPING, got event: SEQUENCE_START"},
  };
  for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
    char rel[256], path[1024];
    snprintf(rel, sizeof rel, "bad/%s", cases[i].file);
    rp_preset p;
    memset(&p, 0x5a, sizeof p);
    rp_error e = {0};
    rp_status st = rp_preset_load_file(fixture(rel, path, sizeof path), &p, &e);
    if (st != RP_EPARSE || !strstr(e.msg, cases[i].where) || !strstr(e.msg, cases[i].what))
      fail_msg("%s: status %s, message '%s'", cases[i].file, rp_status_name(st), e.msg);
    assert_int_equal(e.status, RP_EPARSE);
    /* the output is untouched on error */
    assert_int_equal((unsigned char)p.name[0], 0x5a);
  }
}

static void test_presets_dir_sorted_by_name_not_file(void **state) {
  (void)state;
  char dir[1024];
  rp_preset *list = NULL;
  size_t n = 0;
  rp_error e = {0};
  /* a-file.yaml holds zeta-rain, b-file.yaml alpha-rain; README.txt is ignored */
  assert_int_equal(rp_preset_load_dir(fixture("dir-good", dir, sizeof dir), &list, &n, &e),
                   RP_OK);
  assert_int_equal(n, 2);
  assert_string_equal(list[0].name, "alpha-rain");
  assert_string_equal(list[1].name, "zeta-rain");
  rp_preset_list_free(list);
}

static void test_presets_dir_errors(void **state) {
  (void)state;
  char dir[1024];
  rp_preset *list = (rp_preset *)&list; /* must be reset to NULL */
  size_t n = 99;
  rp_error e = {0};
  assert_int_equal(rp_preset_load_dir(fixture("dir-duplicate", dir, sizeof dir), &list, &n, &e),
                   RP_EPARSE);
  assert_non_null(strstr(e.msg, "'same-rain' is defined twice (one.yaml and two.yaml)"));
  assert_null(list);
  assert_int_equal(n, 0);
  assert_int_equal(rp_preset_load_dir(fixture("dir-empty", dir, sizeof dir), &list, &n, &e),
                   RP_EIO);
  assert_non_null(strstr(e.msg, "no *.yaml preset files"));
  assert_int_equal(rp_preset_load_dir(fixture("dir-bad", dir, sizeof dir), &list, &n, &e),
                   RP_EPARSE);
  assert_non_null(strstr(e.msg, "dir-bad/b.yaml: parameters:"));
  assert_non_null(strstr(e.msg, "mu = 99"));
  assert_int_equal(rp_preset_load_dir(fixture("no-such-dir", dir, sizeof dir), &list, &n, &e),
                   RP_EIO);
  assert_non_null(strstr(e.msg, "no-such-dir: cannot read"));
  assert_int_equal(rp_preset_load_dir(NULL, &list, &n, &e), RP_EINVAL);
  assert_int_equal(rp_preset_load_dir(dir, NULL, &n, &e), RP_EINVAL);
  assert_int_equal(rp_preset_load_dir(dir, &list, NULL, &e), RP_EINVAL);
}

static void test_presets_find_by_name_or_list_the_known(void **state) {
  (void)state;
  char dir[1024];
  rp_preset p;
  rp_error e = {0};
  fixture("dir-good", dir, sizeof dir);
  assert_int_equal(rp_preset_find(dir, "zeta-rain", &p, &e), RP_OK);
  assert_string_equal(p.name, "zeta-rain");
  assert_close(p.dsd.d0_mm, 1.5, 0.0, 0.0);
  assert_int_equal(rp_preset_find(dir, "omega-rain", &p, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "no preset named 'omega-rain'"));
  assert_non_null(strstr(e.msg, "known: alpha-rain, zeta-rain"));
  assert_int_equal(rp_preset_find(fixture("dir-bad", dir, sizeof dir), "ok-rain", &p, &e),
                   RP_EPARSE);
  assert_int_equal(rp_preset_find(NULL, "x", &p, &e), RP_EINVAL);
  assert_int_equal(rp_preset_find(dir, NULL, &p, &e), RP_EINVAL);
  assert_int_equal(rp_preset_find(dir, "x", NULL, &e), RP_EINVAL);
}

int main(void) {
  rp_test_init();
  const struct CMUnitTest tests[] = {
      cmocka_unit_test(test_presets_shipped_dir_loads_sorted_with_sources),
      cmocka_unit_test(test_presets_span_drizzle_to_sparse_giants),
      cmocka_unit_test(test_presets_file_with_all_fields),
      cmocka_unit_test(test_presets_missing_file_and_null_arguments),
      cmocka_unit_test(test_presets_bad_files_name_file_line_and_field),
      cmocka_unit_test(test_presets_dir_sorted_by_name_not_file),
      cmocka_unit_test(test_presets_dir_errors),
      cmocka_unit_test(test_presets_find_by_name_or_list_the_known),
  };
  return cmocka_run_group_tests_name("presets", tests, NULL, NULL);
}
