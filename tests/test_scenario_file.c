/* test_scenario_file.c — scenario YAML: the examples load, presets resolve, and bad
 * files are refused with file, line and key. */
#include "rp_test.h"

#include <string.h>
#include <unistd.h>

#include "rainprint/scenario_file.h"

static char tmpdir[256];

static const char *write_tmp(const char *name, const char *text) {
  static char path[512];
  snprintf(path, sizeof path, "%s/%s", tmpdir, name);
  FILE *f = fopen(path, "w");
  assert_non_null(f);
  fputs(text, f);
  fclose(f);
  return path;
}

static const char GOOD[] =
    "radar:\n"
    "  name: Test Fen C\n"
    "  band: C\n"
    "  gate_spacing_m: 250\n"
    "  gates: 100\n"
    "  elevations_deg: [0.5, 1.5]\n"
    "rain:\n"
    "  background:\n"
    "    nw: 3000\n"
    "    d0_mm: 1.2\n"
    "    mu: 3\n"
    "  cells:\n"
    "    - kind: gaussian\n"
    "      x_km: 10\n"
    "      y_km: 5\n"
    "      radius_km: 3\n"
    "      nw: 10000\n"
    "      d0_mm: 2.0\n"
    "      mu: 2\n"
    "wind:\n"
    "  u_ms: 3\n"
    "  vortex: {x_km: 10, y_km: 5, radius_km: 2, peak_ms: 15}\n";

static void test_examples_load(void **state) {
  (void)state;
  const char *ex[3] = {"examples/valley-squall-line/scene.yaml", "examples/shadow-cell-x/scene.yaml",
                       "examples/drizzle-s/scene.yaml"};
  for (int i = 0; i < 3; i++) {
    char p[512];
    rp_scenario s;
    rp_error e = {0};
    char *text = NULL;
    const rp_status st = rp_scenario_file_load(rp_test_source_path(ex[i], p, sizeof p), NULL, &s, &text, &e);
    if (st != RP_OK) print_error("%s\n", e.msg);
    assert_int_equal(st, RP_OK);
    assert_non_null(text);
    assert_non_null(strstr(text, "radar:"));
    free(text);
  }
}

static void test_keys_reach_the_scenario(void **state) {
  (void)state;
  rp_scenario s;
  rp_error e = {0};
  const rp_status st = rp_scenario_file_load(write_tmp("good.yaml", GOOD), NULL, &s, NULL, &e);
  if (st != RP_OK) print_error("%s\n", e.msg);
  assert_int_equal(st, RP_OK);
  assert_string_equal(s.radar.name, "Test Fen C");
  assert_close(s.radar.frequency_ghz, 5.6, 0, 1e-12);
  assert_int_equal(s.radar.gates, 100);
  assert_int_equal(s.radar.n_elevations, 2);
  assert_close(s.radar.elevations_deg[1], 1.5, 0, 0);
  assert_true(s.has_background);
  assert_int_equal(s.n_cells, 1);
  assert_close(s.cells[0].radius_km, 3.0, 0, 0);
  assert_true(s.wind.has_vortex);
  assert_close(s.wind.vortex_peak_ms, 15.0, 0, 0);
  /* defaults of absent keys */
  assert_close(s.surface_temperature_c, 20.0, 0, 0);
  assert_int_equal(s.kdp_window_gates, 9);
  /* nyquist_ms gives the PRF through v_a = lambda PRF / 4 */
  const char *ny = write_tmp("ny.yaml", "radar:\n  band: X\n  nyquist_ms: 16\n");
  assert_int_equal(rp_scenario_file_load(ny, NULL, &s, NULL, &e), RP_OK);
  assert_close(rp_scenario_nyquist_ms(&s), 16.0, 1e-12, 0);
}

static void test_preset_background_resolves(void **state) {
  (void)state;
  char dir[512];
  rp_test_source_path("dsd-presets", dir, sizeof dir);
  rp_scenario s;
  rp_error e = {0};
  const char *p = write_tmp("preset.yaml", "radar:\n  band: S\nrain:\n  background: {preset: gentle-stratiform}\n");
  const rp_status st = rp_scenario_file_load(p, dir, &s, NULL, &e);
  if (st != RP_OK) print_error("%s\n", e.msg);
  assert_int_equal(st, RP_OK);
  assert_true(s.bg_nw_m3_mm > 0 && s.bg_d0_mm > 0);
  /* a preset that is not a normalised gamma is refused by name */
  p = write_tmp("preset2.yaml", "radar:\n  band: S\nrain:\n  background: {preset: classic-exponential}\n");
  assert_int_equal(rp_scenario_file_load(p, dir, &s, NULL, &e), RP_EPARSE);
  assert_non_null(strstr(e.msg, "normalized-gamma"));
  p = write_tmp("preset3.yaml", "radar:\n  band: S\nrain:\n  background: {preset: no-such-rain}\n");
  assert_int_equal(rp_scenario_file_load(p, dir, &s, NULL, &e), RP_EPARSE);
}

typedef struct {
  const char *name, *text, *want1, *want2;
} bad_case;

static void test_bad_files_name_file_line_and_key(void **state) {
  (void)state;
  const bad_case cases[] = {
      {"unknown.yaml", "radar:\n  band: C\n  colour: blue\n", "colour", "unknown.yaml:2:"},
      {"noradar.yaml", "atmosphere:\n  surface_temperature_c: 10\n", "radar", "noradar.yaml"},
      {"empty.yaml", "", "empty", "empty.yaml"},
      {"spacing.yaml", "radar:\n  band: C\n  gate_spacing_m: -250\n", "radar.gate_spacing_m", ":3:"},
      {"elev.yaml", "radar:\n  band: C\n  elevations_deg: [0.5, 95]\n", "radar.elevations_deg[1]", ":3:"},
      {"nan.yaml", "radar:\n  band: C\nrain:\n  cells:\n    - kind: gaussian\n      x_km: 1\n      y_km: 1\n      radius_km: 2\n      nw: 1000\n      d0_mm: .nan\n      mu: 1\n", "d0_mm", ":10:"},
      {"memory.yaml", "radar:\n  band: C\n  gates: 4000\n  gate_spacing_m: 100\n  azimuth_step_deg: 0.1\n  elevations_deg: [0.5, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14]\n", "2 GB", ":3:"},
      /* 360 x 3600 x 10 = 12.96 M gates: over the 12 M that keep the scene under 2 GB
       * (16 M were allowed, which needed about 2.5 GB) */
      {"memory2.yaml", "radar:\n  band: C\n  gates: 3600\n  gate_spacing_m: 100\n  elevations_deg: [0.5, 1, 2, 3, 4, 5, 6, 7, 8, 9]\n", "2 GB", ":3:"},
      {"elevtext.yaml", "radar:\n  band: C\n  elevations_deg: [0.5, 1.5deg]\n", "radar.elevations_deg[1]", ":3:"},
      {"elevhex.yaml", "radar:\n  band: C\n  elevations_deg:\n    - 0.5\n    - 0x10\n", "'0x10'", ":5:"},
      {"band.yaml", "radar:\n  band: W\n", "radar.band", ":2:"},
      /* integer keys take whole numbers only (2.5 gave 2 gates, 1e3 one gate, -3 a
       * wrapped seed, 0100 an octal 64, all silently) */
      {"gatesfrac.yaml", "radar:\n  band: C\n  gates: 2.5\n", "radar.gates", ":3:"},
      {"gatesexp.yaml", "radar:\n  band: C\n  gates: 1e3\n", "'1e3'", ":3:"},
      {"gatesoct.yaml", "radar:\n  band: C\n  gates: 0100\n", "'0100'", ":3:"},
      {"seedneg.yaml", "seed: -3\nradar:\n  band: C\n", "seed: '-3'", ":1:"},
      {"pulsesfrac.yaml", "radar:\n  band: C\n  pulses: 64.0\n", "radar.pulses", ":3:"},
      {"kdpwin.yaml", "radar:\n  band: C\nkdp_window_gates: 9.5\n", "kdp_window_gates", ":3:"},
      /* a ray longer than 600 km is reported at the line of gates */
      {"reach.yaml", "radar:\n  band: C\n  gates: 4000\n  gate_spacing_m: 500\n", "radar.gates", ":3:"},
      /* a Nyquist velocity whose PRF is out of range is reported under its own key */
      {"nyq.yaml", "radar:\n  band: C\n  nyquist_ms: 200\n", "radar.nyquist_ms", ":3:"},
      /* calendar values, not only the digit pattern (the writer's timegm would roll
       * 2026-02-30 into March, and hour 24 into the next day) */
      {"date.yaml", "radar:\n  band: C\n  start_time: \"2026-02-30T00:00:00Z\"\n", "radar.start_time", ":3:"},
      {"month.yaml", "radar:\n  band: C\n  start_time: \"2026-13-01T00:00:00Z\"\n", "radar.start_time", ":3:"},
      {"hour.yaml", "radar:\n  band: C\n  start_time: \"2026-06-14T24:00:00Z\"\n", "radar.start_time", ":3:"},
      {"leap.yaml", "radar:\n  band: C\n  start_time: \"2100-02-29T12:00:00Z\"\n", "radar.start_time", ":3:"},
      {"both.yaml", "radar:\n  band: C\n  frequency_ghz: 5.5\n", "not both", ":3:"},
      {"cellkey.yaml", "radar:\n  band: C\nrain:\n  cells:\n    - kind: gaussian\n      x_km: 1\n      y_km: 1\n      nw: 1000\n      d0_mm: 1\n      mu: 1\n", "radius_km", ":5:"},
      {"kind.yaml", "radar:\n  band: C\nrain:\n  cells:\n    - kind: blob\n", "blob", "kind.yaml"},
      {"syntax.yaml", "radar:\n  band: [C\n", "YAML", "syntax.yaml"},
      {"twodocs.yaml", "radar:\n  band: C\n---\nradar:\n  band: X\n", "document", "twodocs.yaml"},
  };
  for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
    rp_scenario s;
    rp_error e = {0};
    const rp_status st = rp_scenario_file_load(write_tmp(cases[i].name, cases[i].text), NULL, &s, NULL, &e);
    if (st != RP_EPARSE || !strstr(e.msg, cases[i].want1) || !strstr(e.msg, cases[i].want2))
      print_error("case %s: status %d, message '%s'\n", cases[i].name, (int)st, e.msg);
    assert_int_equal(st, RP_EPARSE);
    assert_non_null(strstr(e.msg, cases[i].want1));
    assert_non_null(strstr(e.msg, cases[i].want2));
  }
  rp_scenario s;
  rp_error e = {0};
  assert_int_equal(rp_scenario_file_load("/nonexistent/x.yaml", NULL, &s, NULL, &e), RP_EIO);
  assert_int_equal(rp_scenario_file_load(NULL, NULL, &s, NULL, &e), RP_EINVAL);
  /* the largest seed is a whole number and loads */
  assert_int_equal(rp_scenario_file_load(write_tmp("seedmax.yaml", "seed: 18446744073709551615\nradar:\n  band: C\n"), NULL, &s, NULL, &e), RP_OK);
  assert_true(s.seed == 18446744073709551615ULL);
  /* the last second of a leap day is a valid start */
  assert_int_equal(rp_scenario_file_load(write_tmp("leapok.yaml", "radar:\n  band: C\n  start_time: \"2028-02-29T23:59:59Z\"\n"), NULL, &s, NULL, &e), RP_OK);
  assert_string_equal(s.radar.start_time, "2028-02-29T23:59:59Z");
  /* a UTF-8 byte-order mark is accepted and not kept in the text */
  char bom[600];
  snprintf(bom, sizeof bom, "\xEF\xBB\xBF%s", GOOD);
  char *text = NULL;
  assert_int_equal(rp_scenario_file_load(write_tmp("bom.yaml", bom), NULL, &s, &text, &e), RP_OK);
  assert_int_equal(strncmp(text, "radar:", 6), 0);
  free(text);
}

int main(void) {
  rp_test_init();
  snprintf(tmpdir, sizeof tmpdir, "/tmp/rp_test_scenario_XXXXXX");
  if (mkdtemp(tmpdir) == NULL) return 1;
  const struct CMUnitTest tests[] = {
      cmocka_unit_test(test_examples_load),
      cmocka_unit_test(test_keys_reach_the_scenario),
      cmocka_unit_test(test_preset_background_resolves),
      cmocka_unit_test(test_bad_files_name_file_line_and_key),
  };
  const int rc = cmocka_run_group_tests(tests, NULL, NULL);
  char cmd[300];
  snprintf(cmd, sizeof cmd, "rm -rf '%s'", tmpdir);
  if (system(cmd) != 0) return 1;
  return rc;
}
