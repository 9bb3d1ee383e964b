/* test_table.c — build, save, load and check scattering tables. */
#include "rp_test.h"

#include <netcdf.h>
#include <string.h>
#include <unistd.h>

#include "rainprint/shape.h"
#include "rainprint/table.h"
#include "rainprint/table_file.h"

static char tmpdir[256];

static int setup(void **state) {
  (void)state;
  snprintf(tmpdir, sizeof tmpdir, "%s/test_table_tmp", getenv("RP_BINARY_DIR") ? getenv("RP_BINARY_DIR") : ".");
  char cmd[1024];
  snprintf(cmd, sizeof cmd, "rm -rf '%s' && mkdir -p '%s'", tmpdir, tmpdir);
  return system(cmd);
}

static const char *tmp_path(const char *name, char *buf, size_t n) {
  snprintf(buf, n, "%s/%s", tmpdir, name);
  return buf;
}

static rp_table *small_table(void) {
  rp_drop_config c;
  rp_drop_config_default(&c);
  rp_table *t = NULL;
  rp_error err = {0};
  if (rp_table_build(&c, 0.5, 6.0, 0.5, &t, &err) != RP_OK) fail_msg("build: %s", err.msg);
  return t;
}

static void test_table_build_grid_and_values(void **state) {
  (void)state;
  rp_table *t = small_table();
  /* 0.5..6 by 0.5 (12 points) plus knots beside the default (Thurai) shape's
   * breakpoints: 0.7 mm (sphere side, D <= 0.7) and 0.700001 (small-drop side), and
   * 1.499999 mm below 1.5 (a grid point, on the large-drop side) */
  assert_int_equal(t->n, 15);
  assert_close(t->d_mm[0], 0.5, 0.0, 1e-15);
  assert_close(t->d_mm[t->n - 1], 6.0, 1e-15, 0.0);
  const double want[15] = {0.5, 0.7, 0.700001, 1.0, 1.499999, 1.5, 2.0, 2.5,
                           3.0, 3.5, 4.0, 4.5, 5.0, 5.5, 6.0};
  for (size_t i = 0; i < t->n; i++) assert_close(t->d_mm[i], want[i], 1e-12, 0.0);
  for (size_t i = 1; i < t->n; i++) {
    /* backscatter grows with size, oblate drops: hh > vv, positive extinction */
    assert_true(t->back_hh2_mm2[i] > t->back_hh2_mm2[i - 1]);
    assert_true(t->back_hh2_mm2[i] > t->back_vv2_mm2[i]);
    assert_true(t->fwd_hh_im_mm[i] > 0.0);
    assert_true(t->fall_speed_m_s[i] > t->fall_speed_m_s[i - 1]);
  }
  /* the knots on either side carry either branch's axis ratio */
  assert_close(t->axis_ratio[1], 1.0, 0.0, 0.0);
  assert_true(t->axis_ratio[2] < 0.995);
  assert_true(t->axis_ratio[4] - t->axis_ratio[5] > 0.003);
  rp_table_free(t);
}

/* The default grid gains the breakpoint knots of its shape model and is otherwise the
 * uniform 0.1..8 by 0.1 mm grid; a fixed axis ratio or a smooth model (Brandes) adds
 * none; a grid point that round-off puts 1 ulp past a breakpoint (0.1 + 6 * 0.1 =
 * 0.7000000000000001) is the breakpoint itself, so diameters stay at least 1e-6 mm
 * apart. Rayleigh keeps it cheap. */
static void test_table_grid_gains_breakpoint_knots_only(void **state) {
  (void)state;
  rp_drop_config c;
  rp_drop_config_default(&c);
  c.method = RP_METHOD_RAYLEIGH;
  rp_table *t = NULL;
  rp_error err = {0};
  const rp_shape_model shapes[4] = {RP_SHAPE_THURAI, RP_SHAPE_PRUPPACHER_BEARD,
                                    RP_SHAPE_BRANDES, RP_SHAPE_ANDSAGER};
  const size_t extra[4] = {2, 1, 0, 4}; /* Andsager: the kink and 1.1, 4.4 (grid points) */
  for (int k = 0; k < 4; k++) {
    c.shape = shapes[k];
    if (rp_table_build(&c, RP_TABLE_DMIN_DEFAULT_MM, RP_TABLE_DMAX_DEFAULT_MM,
                       RP_TABLE_DSTEP_DEFAULT_MM, &t, &err) != RP_OK)
      fail_msg("build: %s", err.msg);
    if (t->n != 80 + extra[k]) fail_msg("%s: %zu diameters", rp_shape_name(shapes[k]), t->n);
    size_t on_grid = 0;
    for (size_t i = 0; i < t->n; i++) {
      if (i > 0) assert_true(t->d_mm[i] - t->d_mm[i - 1] >= 1e-6 * (1.0 - 1e-9));
      const double g = 0.1 * round(t->d_mm[i] / 0.1);
      if (fabs(t->d_mm[i] - g) <= 1e-9) on_grid++;
    }
    assert_int_equal(on_grid, 80);
    /* both sides of every breakpoint have a knot within 1e-6 mm */
    double bp[RP_SHAPE_BREAKPOINTS_MAX];
    const size_t nb = rp_shape_breakpoints(shapes[k], bp, RP_SHAPE_BREAKPOINTS_MAX);
    for (size_t b = 0; b < nb; b++) {
      int below = 0, above = 0;
      for (size_t i = 0; i < t->n; i++) {
        if (fabs(t->d_mm[i] - bp[b]) > 1e-6 * (1.0 + 1e-9)) continue;
        if (rp_shape_piece(shapes[k], t->d_mm[i]) == b) below = 1;
        if (rp_shape_piece(shapes[k], t->d_mm[i]) == b + 1) above = 1;
      }
      assert_true(below && above);
    }
    rp_table_free(t);
  }
  c.shape = RP_SHAPE_THURAI;
  c.axis_ratio_fixed = 0.8;
  assert_int_equal(rp_table_build(&c, 0.1, 8.0, 0.1, &t, &err), RP_OK);
  assert_int_equal(t->n, 80);
  rp_table_free(t);
}

static void test_table_save_load_round_trip_is_exact(void **state) {
  (void)state;
  char path[512];
  rp_table *t = small_table();
  rp_error err = {0};
  assert_int_equal(rp_table_save(t, tmp_path("rt.nc", path, sizeof path), &err), RP_OK);
  rp_table *u = NULL;
  if (rp_table_load(path, &u, &err) != RP_OK) fail_msg("load: %s", err.msg);
  assert_int_equal(u->n, t->n);
  for (size_t i = 0; i < t->n; i++) {
    assert_true(u->d_mm[i] == t->d_mm[i]);
    assert_true(u->back_hh2_mm2[i] == t->back_hh2_mm2[i]);
    assert_true(u->back_hhvv_im_mm2[i] == t->back_hhvv_im_mm2[i]);
    assert_true(u->fwd_vv_re_mm[i] == t->fwd_vv_re_mm[i]);
  }
  assert_int_equal(rp_table_check_match(u, &t->cfg, &err), RP_OK);
  rp_drop_config other = t->cfg;
  other.temp_c = 20.0;
  assert_int_equal(rp_table_check_match(u, &other, &err), RP_ETABLE);
  assert_non_null(strstr(err.msg, "20"));
  other = t->cfg;
  other.shape = RP_SHAPE_SPHERE;
  assert_int_equal(rp_table_check_match(u, &other, &err), RP_ETABLE);
  assert_non_null(strstr(err.msg, "shape"));
  rp_table_free(t);
  rp_table_free(u);
}

/* Corrupt a saved table with the netCDF API and expect a clear refusal. */
static void corrupt_and_expect(const char *what, const char *expect_in_msg) {
  char path[512];
  snprintf(path, sizeof path, "%s/bad_%s.nc", tmpdir, what);
  rp_table *t = small_table();
  rp_error err = {0};
  assert_int_equal(rp_table_save(t, path, &err), RP_OK);
  rp_table_free(t);
  int ncid, varid;
  assert_int_equal(nc_open(path, NC_WRITE, &ncid), NC_NOERR);
  if (strcmp(what, "missing_var") == 0) {
    assert_int_equal(nc_redef(ncid), NC_NOERR);
    assert_int_equal(nc_inq_varid(ncid, "back_vv2", &varid), NC_NOERR);
    assert_int_equal(nc_rename_var(ncid, varid, "something_else"), NC_NOERR);
  } else if (strcmp(what, "units") == 0) {
    assert_int_equal(nc_redef(ncid), NC_NOERR);
    assert_int_equal(nc_inq_varid(ncid, "diameter", &varid), NC_NOERR);
    assert_int_equal(nc_put_att_text(ncid, varid, "units", 2, "cm"), NC_NOERR);
  } else if (strcmp(what, "nan") == 0) {
    assert_int_equal(nc_inq_varid(ncid, "back_hh2", &varid), NC_NOERR);
    const size_t idx = 3;
    const double x = NAN;
    assert_int_equal(nc_put_var1_double(ncid, varid, &idx, &x), NC_NOERR);
  } else if (strcmp(what, "order") == 0) {
    assert_int_equal(nc_inq_varid(ncid, "diameter", &varid), NC_NOERR);
    const size_t idx = 5;
    const double x = 0.1;
    assert_int_equal(nc_put_var1_double(ncid, varid, &idx, &x), NC_NOERR);
  } else if (strcmp(what, "attr") == 0) {
    assert_int_equal(nc_redef(ncid), NC_NOERR);
    assert_int_equal(nc_del_att(ncid, NC_GLOBAL, "temperature_c"), NC_NOERR);
  }
  assert_int_equal(nc_close(ncid), NC_NOERR);
  rp_table *u = NULL;
  assert_int_equal(rp_table_load(path, &u, &err), RP_ETABLE);
  assert_null(u);
  if (strstr(err.msg, expect_in_msg) == NULL) fail_msg("message '%s' lacks '%s'", err.msg, expect_in_msg);
}

static void test_table_load_refuses_malformed_files(void **state) {
  (void)state;
  corrupt_and_expect("missing_var", "back_vv2");
  corrupt_and_expect("units", "units");
  corrupt_and_expect("nan", "back_hh2");
  corrupt_and_expect("order", "increase");
  corrupt_and_expect("attr", "temperature_c");

  rp_error err = {0};
  rp_table *u = NULL;
  char path[512];
  assert_int_equal(rp_table_load(tmp_path("does-not-exist.nc", path, sizeof path), &u, &err), RP_EIO);
  FILE *f = fopen(tmp_path("text.nc", path, sizeof path), "w");
  fputs("this is not netCDF\n", f);
  fclose(f);
  assert_int_equal(rp_table_load(path, &u, &err), RP_ETABLE);
  assert_non_null(strstr(err.msg, "netCDF"));
}

static void test_table_save_failure_leaves_no_file(void **state) {
  (void)state;
  rp_table *t = small_table();
  rp_error err = {0};
  char path[512];
  tmp_path("no-such-dir/t.nc", path, sizeof path);
  assert_int_equal(rp_table_save(t, path, &err), RP_EIO);
  assert_int_not_equal(access(path, F_OK), 0);
  rp_table_free(t);
}

static void test_table_build_refuses_bad_grid(void **state) {
  (void)state;
  rp_drop_config c;
  rp_drop_config_default(&c);
  rp_table *t = NULL;
  rp_error err = {0};
  assert_int_equal(rp_table_build(&c, 0.0, 8.0, 0.1, &t, &err), RP_EDOM);
  assert_int_equal(rp_table_build(&c, 1.0, 0.5, 0.1, &t, &err), RP_EDOM);
  assert_int_equal(rp_table_build(&c, 0.1, 12.0, 0.1, &t, &err), RP_EDOM);
  assert_int_equal(rp_table_build(&c, 0.1, 8.0, 0.0, &t, &err), RP_EDOM);
  assert_int_equal(rp_table_build(&c, 0.1, 8.0, NAN, &t, &err), RP_EINVAL);
  c.elevation_deg = -5.0;
  assert_int_equal(rp_table_build(&c, 0.1, 8.0, 0.1, &t, &err), RP_EDOM);
  assert_null(t);
}

/* A grid ending at the 10 mm limit: 0.05 + 199 * 0.05 rounds to 10.000000000000002,
 * which rp_drop_eval refuses as outside (0, 10] mm; the last diameter must be 10 mm
 * exactly (the grid's own end point) and every diameter inside the domain. Rayleigh
 * keeps the 200 drops cheap. Diameters are exact grid values: 1e-12 relative. */
static void test_table_build_grid_ending_at_10_mm_stays_in_domain(void **state) {
  (void)state;
  rp_drop_config c;
  rp_drop_config_default(&c);
  c.method = RP_METHOD_RAYLEIGH;
  rp_table *t = NULL;
  rp_error err = {0};
  if (rp_table_build(&c, 0.05, 10.0, 0.05, &t, &err) != RP_OK) fail_msg("build: %s", err.msg);
  /* 200 grid points and the 2 knots beside the default (Thurai) breakpoints */
  assert_int_equal(t->n, 202);
  assert_true(t->d_mm[t->n - 1] == 10.0);
  size_t g = 0;
  for (size_t i = 0; i < t->n; i++) {
    assert_true(t->d_mm[i] <= 10.0);
    if (fabs(t->d_mm[i] - 0.700001) < 1e-12 || fabs(t->d_mm[i] - 1.499999) < 1e-12) continue;
    assert_close(t->d_mm[i], 0.05 * (double)(g + 1), 1e-12, 0.0);
    g++;
  }
  assert_int_equal(g, 200);
  rp_table_free(t);
  /* a grid whose last point falls short of dmax keeps its uniform step (no dmax point):
   * 0.3..9.9 (33 points), plus 0.7 and 0.700001, and 1.499999 below the grid's 1.5 */
  if (rp_table_build(&c, 0.3, 10.0, 0.3, &t, &err) != RP_OK) fail_msg("build: %s", err.msg);
  assert_int_equal(t->n, 36);
  assert_close(t->d_mm[t->n - 1], 9.9, 1e-12, 0.0);
  rp_table_free(t);
}

/* The shipped C-band 10 C table, regenerated with today's code, must agree with the
 * file (scattering/README.md gives the command). 1e-9 relative: same code and inputs,
 * only summation order across threads may differ. */
/* Shipped tables written before checksums are refused (on purpose); until
 * scripts/make-tables.sh regenerates them, the tests that need one are skipped. */
static int shipped_tables_have_checksums(void) {
  char path[512];
  rp_test_source_path("scattering/rainprint_C_10C.nc", path, sizeof path);
  int ncid = -1, ok = 0;
  if (nc_open(path, NC_NOWRITE, &ncid) != NC_NOERR) return 0;
  ok = nc_inq_att(ncid, NC_GLOBAL, "data_checksum", NULL, NULL) == NC_NOERR;
  nc_close(ncid);
  if (!ok) fprintf(stderr, "shipped tables predate checksums: regenerate them with scripts/make-tables.sh\n");
  return ok;
}

static void test_shipped_table_regenerates(void **state) {
  (void)state;
  char path[512];
  rp_test_source_path("scattering/rainprint_C_10C.nc", path, sizeof path);
  rp_table *shipped = NULL;
  rp_error err = {0};
  if (!shipped_tables_have_checksums()) {
    /* refused with the message that says how to fix it */
    assert_int_equal(rp_table_load(path, &shipped, &err), RP_ETABLE);
    assert_non_null(strstr(err.msg, "make-tables.sh"));
    skip();
  }
  if (rp_table_load(path, &shipped, &err) != RP_OK) fail_msg("load shipped: %s", err.msg);
  rp_table *fresh = NULL;
  if (rp_table_build(&shipped->cfg, RP_TABLE_DMIN_DEFAULT_MM, RP_TABLE_DMAX_DEFAULT_MM,
                     RP_TABLE_DSTEP_DEFAULT_MM, &fresh, &err) != RP_OK)
    fail_msg("build: %s", err.msg);
  assert_int_equal(fresh->n, shipped->n);
  for (size_t i = 0; i < fresh->n; i++) {
    assert_close(fresh->d_mm[i], shipped->d_mm[i], 1e-12, 0.0);
    assert_close(fresh->back_hh2_mm2[i], shipped->back_hh2_mm2[i], 1e-9, 0.0);
    assert_close(fresh->back_vv2_mm2[i], shipped->back_vv2_mm2[i], 1e-9, 0.0);
    assert_close(fresh->back_hv2_mm2[i], shipped->back_hv2_mm2[i], 1e-9, 1e-30);
    assert_close(fresh->fwd_hh_re_mm[i], shipped->fwd_hh_re_mm[i], 1e-9, 0.0);
    assert_close(fresh->fwd_vv_im_mm[i], shipped->fwd_vv_im_mm[i], 1e-9, 0.0);
  }
  rp_table_free(fresh);
  rp_table_free(shipped);
}

static void test_table_obtain_prefers_shipped_then_cache(void **state) {
  (void)state;
  char shipped[512], cache[512];
  rp_test_source_path("scattering", shipped, sizeof shipped);
  tmp_path("cache/nested", cache, sizeof cache);
  rp_drop_config c;
  rp_drop_config_default(&c); /* C band, 10 C: a shipped table */
  rp_table *t = NULL;
  rp_table_origin o;
  rp_error err = {0};
  if (!shipped_tables_have_checksums()) skip();
  assert_int_equal(rp_table_obtain(&c, shipped, cache, &t, &o, &err), RP_OK);
  assert_int_equal(o, RP_TABLE_SHIPPED);
  assert_int_equal(rp_table_check_match(t, &c, &err), RP_OK);
  rp_table_free(t);
  c.canting_sd_deg = 3.0; /* not shipped: computed, then found in the cache */
  assert_int_equal(rp_table_obtain(&c, shipped, cache, &t, &o, &err), RP_OK);
  assert_int_equal(o, RP_TABLE_COMPUTED);
  rp_table_free(t);
  assert_int_equal(rp_table_obtain(&c, shipped, cache, &t, &o, &err), RP_OK);
  assert_int_equal(o, RP_TABLE_CACHED);
  assert_int_equal(rp_table_check_match(t, &c, &err), RP_OK);
  rp_table_free(t);
  /* no folders at all: computed */
  assert_int_equal(rp_table_obtain(&c, NULL, NULL, &t, &o, &err), RP_OK);
  assert_int_equal(o, RP_TABLE_COMPUTED);
  rp_table_free(t);
  c.temp_c = 99.0;
  assert_int_not_equal(rp_table_obtain(&c, shipped, cache, &t, &o, &err), RP_OK);
  assert_null(t);
  assert_string_equal(rp_table_origin_name(RP_TABLE_CACHED), "cache");
}

int main(void) {
  rp_test_init();
  const struct CMUnitTest tests[] = {
      cmocka_unit_test(test_table_build_grid_and_values),
      cmocka_unit_test(test_table_save_load_round_trip_is_exact),
      cmocka_unit_test(test_table_load_refuses_malformed_files),
      cmocka_unit_test(test_table_save_failure_leaves_no_file),
      cmocka_unit_test(test_table_build_refuses_bad_grid),
      cmocka_unit_test(test_table_grid_gains_breakpoint_knots_only),
      cmocka_unit_test(test_table_build_grid_ending_at_10_mm_stays_in_domain),
      cmocka_unit_test(test_shipped_table_regenerates),
      cmocka_unit_test(test_table_obtain_prefers_shipped_then_cache),
  };
  return cmocka_run_group_tests_name("table", tests, setup, NULL);
}
