/* test_volume_file.c — volumes from the radar model written as CF/Radial 1.4 files and
 * read back; the model binding against a direct gate evaluation.
 *
 * Also a helper for tests/ref_volume_cfradial.py:
 *   test_volume_file --write SCENARIO.yaml OUT.nc
 * writes the volume of a scenario (tables from the shipped folder and RAINPRINT_CACHE). */
#include "rp_test.h"

#include <string.h>
#include <sys/resource.h>
#include <unistd.h>

#include <netcdf.h>

#include "rainprint/beam.h"
#include "rainprint/radar_model.h"
#include "rainprint/scenario_file.h"
#include "rainprint/table_file.h"
#include "rainprint/volume.h"
#include "rainprint/volume_file.h"
#include "rainprint/volume_model.h"

typedef struct {
  rp_table_store *store;
  rp_radar_model *model;
  rp_volume_model *vm;
} model_fixture;

static rp_status model_open(const rp_scenario *s, model_fixture *f, rp_error *err) {
  memset(f, 0, sizeof *f);
  const char *cache = getenv("RAINPRINT_CACHE");
  f->store = rp_table_store_alloc(RP_SOURCE_DIR "/scattering", cache);
  if (f->store == NULL) return rp_error_set(err, RP_ENOMEM, "store");
  rp_radar_config c;
  RP_TRY(rp_volume_radar_config(s, &c, err));
  c.source = rp_table_store_source(f->store);
  RP_TRY(rp_radar_model_alloc(&c, &f->model, err));
  return rp_volume_model_alloc(f->model, s, &f->vm, err);
}

static void model_close(model_fixture *f) {
  rp_volume_model_free(f->vm);
  rp_radar_model_free(f->model);
  rp_table_store_free(f->store);
}

static void small_scene(rp_scenario *s) {
  rp_scenario_default(s);
  snprintf(s->radar.name, sizeof s->radar.name, "%s", "Test Fen C");
  s->radar.gates = 120;
  s->radar.gate_spacing_m = 250;
  s->radar.azimuth_step_deg = 5.0;
  s->radar.n_elevations = 2;
  s->radar.elevations_deg[0] = 0.0;
  s->radar.elevations_deg[1] = 2.0;
  s->surface_temperature_c = 10.0;
  s->has_background = true;
  s->bg_nw_m3_mm = 8000;
  s->bg_d0_mm = 1.5;
  s->bg_mu = 3;
}

/* truth_zh_dbz / truth_zdr_db of uniform rain at a gate equal the radar model's direct
 * integration at that gate's temperature (rp_radar_model_gate, exact temperature):
 * 0.05 dB covers the fast path's bicubic interpolation and the 5 C temperature nodes
 * (radar_model.h: 0.2 % in Z, i.e. 0.01 dB). */
static void test_model_binding_matches_direct_gate(void **state) {
  (void)state;
  rp_scenario s;
  small_scene(&s);
  s.noise = false;
  model_fixture f;
  rp_error e = {0};
  rp_status st = model_open(&s, &f, &e);
  if (st != RP_OK) print_error("%s\n", e.msg);
  assert_int_equal(st, RP_OK);
  rp_volume_options o;
  rp_volume_options_from_scenario(&s, &o);
  rp_volume *v = NULL;
  assert_int_equal(rp_volume_synthesize(&s, rp_volume_model_physics(f.vm), &o, &v, &e), RP_OK);
  rp_dsd d;
  assert_int_equal(rp_dsd_normalized_gamma_d0(&d, 8000, 1.5, 3, NULL), RP_OK);
  const size_t gates[3] = {10, 60, 110};
  for (int i = 0; i < 3; i++) {
    const double tc = rp_volume_get(v, RP_VF_TRUTH_TEMP, 0, gates[i]);
    rp_gate_result r;
    assert_int_equal(rp_radar_model_gate(f.model, 0, tc, 0.0, &d, &r, NULL, &e), RP_OK);
    assert_close(rp_volume_get(v, RP_VF_TRUTH_ZH, 0, gates[i]), r.zh_dbz, 0, 0.05);
    assert_close(rp_volume_get(v, RP_VF_TRUTH_ZDR, 0, gates[i]), r.zdr_db, 0, 0.02);
    assert_close(rp_volume_get(v, RP_VF_TRUTH_KDP, 0, gates[i]), r.kdp_deg_km, 0.01, 1e-4);
  }
  rp_volume_free(v);
  model_close(&f);
}

/* Write, reopen, read back: dimensions, sweeps partition the rays, fill -> NaN, values
 * equal the float fields, an RHI cut takes one ray per sweep. */
static void test_written_file_reads_back(void **state) {
  (void)state;
  rp_scenario s;
  small_scene(&s);
  s.surface_temperature_c = 5.0; /* freezing level 770 m: the 2 deg sweep leaves the rain */
  model_fixture f;
  rp_error e = {0};
  assert_int_equal(model_open(&s, &f, &e), RP_OK);
  rp_volume_options o;
  rp_volume_options_from_scenario(&s, &o);
  rp_volume *v = NULL;
  assert_int_equal(rp_volume_synthesize(&s, rp_volume_model_physics(f.vm), &o, &v, &e), RP_OK);
  char path[256];
  snprintf(path, sizeof path, "/tmp/rp_test_volume_%d.nc", (int)getpid());
  rp_status st = rp_volume_file_write(v, path, "radar: {band: C}\n", &e);
  if (st != RP_OK) print_error("%s\n", e.msg);
  assert_int_equal(st, RP_OK);
  rp_volume_reader *r = NULL;
  assert_int_equal(rp_volume_file_open(path, &r, &e), RP_OK);
  assert_int_equal(rp_volume_file_rays(r), v->n_rays);
  assert_int_equal(rp_volume_file_gates(r), v->n_gates);
  assert_int_equal(rp_volume_file_sweeps(r), 2);
  int have_dbz = 0, have_truth = 0;
  for (size_t i = 0; i < rp_volume_file_n_fields(r); i++) {
    have_dbz |= strcmp(rp_volume_file_field_name(r, i), "DBZ") == 0;
    have_truth |= strcmp(rp_volume_file_field_name(r, i), "truth_zh_dbz") == 0;
  }
  assert_true(have_dbz && have_truth);
  double *buf = malloc(v->n_rays * v->n_gates * sizeof *buf);
  char units[32];
  assert_int_equal(rp_volume_file_read_field(r, "DBZ", buf, units, sizeof units, &e), RP_OK);
  assert_string_equal(units, "dBZ");
  size_t nan_both = 0;
  for (size_t i = 0; i < v->n_rays * v->n_gates; i++) {
    const double want = (double)v->field[RP_VF_DBZ][i];
    if (isnan(want)) {
      assert_true(isnan(buf[i]));
      nan_both++;
    } else {
      assert_close(buf[i], want, 0, 0); /* float round trip is exact */
    }
  }
  assert_true(nan_both > 0); /* the fill -> NaN check is not empty */
  rp_volume_cut c;
  assert_int_equal(rp_volume_file_read_sweep(r, "truth_zh_dbz", 1, &c, &e), RP_OK);
  assert_int_equal(c.n_rays, v->n_rays / 2);
  assert_close(c.fixed_angle_deg, 2.0, 0, 1e-6);
  assert_close(c.height_m[5], rp_beam_height_m(c.range_m[5], 2.0), 0, 1e-6);
  rp_volume_cut_free(&c);
  assert_int_equal(rp_volume_file_read_rhi(r, "DBZ", 93.0, &c, &e), RP_OK);
  assert_int_equal(c.n_rays, 2);
  assert_close(c.azimuth_deg[0], 92.5, 0, 1e-4);
  rp_volume_cut_free(&c);
  assert_int_equal(rp_volume_file_read_field(r, "NOPE", buf, NULL, 0, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "DBZ"));
  assert_int_equal(rp_volume_file_read_sweep(r, "DBZ", 5, &c, &e), RP_EINVAL);
  assert_int_equal(rp_volume_file_read_rhi(r, "DBZ", NAN, &c, &e), RP_EINVAL);
  /* accessors and the same-grid check */
  assert_close(rp_volume_file_range_m(r)[3], v->range_m[3], 0, 1e-3);
  assert_close(rp_volume_file_azimuth_deg(r)[1], v->azimuth_deg[1], 0, 1e-4);
  assert_close(rp_volume_file_elevation_deg(r)[v->n_rays - 1], 2.0, 0, 1e-6);
  size_t first, last;
  double fa;
  assert_int_equal(rp_volume_file_sweep_rays(r, 1, &first, &last, &fa, &e), RP_OK);
  assert_int_equal(first, v->n_rays / 2);
  assert_int_equal(last, v->n_rays - 1);
  assert_int_equal(rp_volume_file_sweep_rays(r, 2, &first, &last, &fa, &e), RP_EINVAL);
  assert_int_equal(rp_volume_file_same_grid(r, r, &e), RP_OK);
  rp_volume_file_close(r);
  free(buf);
  remove(path);
  /* errors: unwritable folder leaves nothing, missing file, not a volume */
  assert_int_equal(rp_volume_file_write(v, "/nonexistent-dir/v.nc", NULL, &e), RP_EIO);
  assert_int_equal(rp_volume_file_write(NULL, path, NULL, &e), RP_EINVAL);
  assert_int_equal(rp_volume_file_write_level(v, path, NULL, 10, &e), RP_EINVAL);
  assert_int_equal(access(path, F_OK), -1); /* nothing left behind */
  /* uncompressed files read back the same */
  assert_int_equal(rp_volume_file_write_level(v, path, NULL, 0, &e), RP_OK);
  assert_int_equal(rp_volume_file_open(path, &r, &e), RP_OK);
  {
    /* a volume of another grid is refused for scoring */
    rp_scenario s2 = s;
    s2.radar.gates = 60;
    rp_volume *v2 = NULL;
    char path2[300];
    snprintf(path2, sizeof path2, "%s.small.nc", path);
    assert_int_equal(rp_volume_synthesize(&s2, rp_volume_model_physics(f.vm), &o, &v2, &e), RP_OK);
    assert_int_equal(rp_volume_file_write(v2, path2, NULL, &e), RP_OK);
    rp_volume_reader *r2 = NULL;
    assert_int_equal(rp_volume_file_open(path2, &r2, &e), RP_OK);
    assert_int_equal(rp_volume_file_same_grid(r, r2, &e), RP_EINVAL);
    assert_non_null(strstr(e.msg, "gates"));
    rp_volume_file_close(r2);
    rp_volume_free(v2);
    remove(path2);
  }
  double *b2 = malloc(v->n_rays * v->n_gates * sizeof *b2);
  assert_int_equal(rp_volume_file_read_field(r, "truth_gate_flag", b2, NULL, 0, &e), RP_OK);
  for (size_t i = 0; i < v->n_rays * v->n_gates; i++)
    assert_close(b2[i], (double)v->field[RP_VF_TRUTH_FLAG][i], 0, 0);
  free(b2);
  rp_volume_file_close(r);
  remove(path);
  assert_int_equal(rp_volume_file_open("/nonexistent-dir/v.nc", &r, &e), RP_EIO);
  char tab[512];
  assert_int_equal(rp_volume_file_open(rp_test_source_path("scattering/rainprint_C_10C.nc", tab, sizeof tab), &r, &e), RP_EPARSE);
  rp_volume_free(v);
  model_close(&f);
}

static double peak_rss_mb(void) {
  struct rusage u;
  getrusage(RUSAGE_SELF, &u);
  return (double)u.ru_maxrss / 1024.0; /* Linux: kilobytes */
}

/* Writing a volume must not hold a second copy of its fields: the netCDF library's
 * default per-variable chunk cache kept every chunk dirty until nc_close, so the
 * process's peak memory grew by about the fields' size during the write (the issue's
 * 2 GB budget would have been broken at about half the documented gate limit). The
 * peak resident size (getrusage, a high-water mark) may grow by the write buffers (one
 * chunk) and the netCDF/HDF5 working memory, not by a copy of the fields. Measured on
 * this 1.15 M-gate volume (132 MB of fields): +134 MB before the fix, +67 MB after (part
 * of it a fixed cost of the library; on the 3.6 M-gate volume +433 MB before, +104 MB
 * after). Three quarters of the fields separates the two with room for the allocator. */
static void test_writing_does_not_hold_a_second_copy_of_the_fields(void **state) {
  (void)state;
  rp_scenario s;
  small_scene(&s);
  s.radar.gates = 4000;
  s.radar.gate_spacing_m = 100;
  s.radar.n_elevations = 4;
  for (size_t k = 0; k < 4; k++) s.radar.elevations_deg[k] = 0.5 + (double)k;
  s.noise = false; /* the write is measured, not the noise */
  model_fixture f;
  rp_error e = {0};
  assert_int_equal(model_open(&s, &f, &e), RP_OK);
  rp_volume_options o;
  rp_volume_options_from_scenario(&s, &o);
  rp_volume *v = NULL;
  assert_int_equal(rp_volume_synthesize(&s, rp_volume_model_physics(f.vm), &o, &v, &e), RP_OK);
  size_t n_fields = 0;
  for (int k = 0; k < RP_VF_COUNT; k++) n_fields += v->field[k] != NULL;
  const double fields_mb = (double)(v->n_rays * v->n_gates * n_fields * sizeof(float)) / 1048576.0;
  char path[256];
  snprintf(path, sizeof path, "/tmp/rp_test_volume_mem_%d.nc", (int)getpid());
  const double before = peak_rss_mb();
  assert_int_equal(rp_volume_file_write(v, path, NULL, &e), RP_OK);
  const double grown = peak_rss_mb() - before;
#if defined(__SANITIZE_ADDRESS__)
  /* AddressSanitizer quarantines freed memory, so the resident size says nothing about
   * the writer here: the write runs (and is checked for leaks), the bound does not */
  (void)grown;
  (void)fields_mb;
#else
  if (!(grown < 0.75 * fields_mb))
    print_error("write grew the peak memory by %.0f MB for %.0f MB of fields\n", grown, fields_mb);
  assert_true(grown < 0.75 * fields_mb);
#endif
  remove(path);
  rp_volume_free(v);
  model_close(&f);
}

/* text attribute or 1-D char variable as a NUL-terminated string ("" when absent) */
static void nc_text(int nc, int var, const char *att, char *out, size_t n) {
  out[0] = '\0';
  size_t len = 0;
  if (att != NULL) {
    if (nc_inq_attlen(nc, var, att, &len) != NC_NOERR || len >= n) return;
    if (nc_get_att_text(nc, var, att, out) != NC_NOERR) return;
  } else {
    int dim;
    if (nc_inq_vardimid(nc, var, &dim) != NC_NOERR || nc_inq_dimlen(nc, dim, &len) != NC_NOERR ||
        len >= n || nc_get_var_text(nc, var, out) != NC_NOERR)
      return;
  }
  out[len] = '\0';
}

/* CF/Radial 1.4 metadata beyond the variable list (the open convention, section on
 * sub-conventions: a file declares in `Conventions` every sub-convention whose
 * meta_group it uses; `time` counts seconds since time_coverage_start, and
 * time_coverage_end is a real calendar time at or after the last ray, here across a
 * year boundary). */
static void test_file_metadata_follows_cf_radial(void **state) {
  (void)state;
  rp_scenario s;
  small_scene(&s);
  s.radar.n_elevations = 1;
  s.radar.pulses = 1024; /* 72 rays of 1.024 s: the last ray starts 72.704 s in */
  snprintf(s.radar.start_time, sizeof s.radar.start_time, "%s", "2026-12-31T23:59:50Z");
  model_fixture f;
  rp_error e = {0};
  assert_int_equal(model_open(&s, &f, &e), RP_OK);
  rp_volume_options o;
  rp_volume_options_from_scenario(&s, &o);
  rp_volume *v = NULL;
  assert_int_equal(rp_volume_synthesize(&s, rp_volume_model_physics(f.vm), &o, &v, &e), RP_OK);
  char path[256];
  snprintf(path, sizeof path, "/tmp/rp_test_volume_meta_%d.nc", (int)getpid());
  assert_int_equal(rp_volume_file_write(v, path, NULL, &e), RP_OK);
  int nc, nvars = 0;
  assert_int_equal(nc_open(path, NC_NOWRITE, &nc), NC_NOERR);
  char conv[256], group[128], txt[128];
  nc_text(nc, NC_GLOBAL, "Conventions", conv, sizeof conv);
  assert_int_equal(strncmp(conv, "CF/Radial-1.4", 13), 0);
  assert_int_equal(nc_inq_nvars(nc, &nvars), NC_NOERR);
  int groups_seen = 0;
  for (int id = 0; id < nvars; id++) {
    nc_text(nc, id, "meta_group", group, sizeof group);
    if (group[0] == '\0') continue;
    groups_seen++;
    /* the group must appear as a whole word of Conventions */
    char padded[300], word[140];
    snprintf(padded, sizeof padded, " %s ", conv);
    snprintf(word, sizeof word, " %s ", group);
    char name[NC_MAX_NAME + 1];
    nc_inq_varname(nc, id, name);
    if (strstr(padded, word) == NULL)
      print_error("%s: meta_group '%s' not declared in Conventions '%s'\n", name, group, conv);
    assert_non_null(strstr(padded, word));
  }
  assert_true(groups_seen >= 7); /* the instrument and radar parameters were looked at */
  int id;
  assert_int_equal(nc_inq_varid(nc, "time_coverage_start", &id), NC_NOERR);
  nc_text(nc, id, NULL, txt, sizeof txt);
  assert_string_equal(txt, "2026-12-31T23:59:50Z");
  assert_int_equal(nc_inq_varid(nc, "time", &id), NC_NOERR);
  nc_text(nc, id, "units", txt, sizeof txt);
  assert_string_equal(txt, "seconds since 2026-12-31T23:59:50Z");
  /* 71 x 1.024 s = 72.704 s, rounded up to whole seconds: 23:59:50 + 73 s */
  assert_int_equal(nc_inq_varid(nc, "time_coverage_end", &id), NC_NOERR);
  nc_text(nc, id, NULL, txt, sizeof txt);
  assert_string_equal(txt, "2027-01-01T00:01:03Z");
  nc_close(nc);
  remove(path);
  rp_volume_free(v);
  model_close(&f);
}

/* A user's retrieval: only time and range dimensions, a short field with scale_factor,
 * add_offset and _FillValue, a double field with valid_max. The reader applies the
 * scaling (CF conventions), turns fill and out-of-range values into NaN, and sees one
 * sweep of all rays. */
static void test_reader_takes_a_plain_retrieval_file(void **state) {
  (void)state;
  char path[256];
  snprintf(path, sizeof path, "/tmp/rp_test_retrieval_%d.nc", (int)getpid());
  int nc, dt, dr, vs, vd;
  assert_int_equal(nc_create(path, NC_NETCDF4 | NC_CLOBBER, &nc), NC_NOERR);
  assert_int_equal(nc_def_dim(nc, "time", 3, &dt), NC_NOERR);
  assert_int_equal(nc_def_dim(nc, "range", 2, &dr), NC_NOERR);
  const int dims[2] = {dt, dr};
  assert_int_equal(nc_def_var(nc, "rain_short", NC_SHORT, 2, dims, &vs), NC_NOERR);
  const short fill = -32768;
  const double scale = 0.1, offset = 5.0, vmax = 100.0;
  assert_int_equal(nc_def_var_fill(nc, vs, 0, &fill), NC_NOERR);
  assert_int_equal(nc_put_att_double(nc, vs, "scale_factor", NC_DOUBLE, 1, &scale), NC_NOERR);
  assert_int_equal(nc_put_att_double(nc, vs, "add_offset", NC_DOUBLE, 1, &offset), NC_NOERR);
  assert_int_equal(nc_put_att_text(nc, vs, "units", 4, "mm/h"), NC_NOERR);
  assert_int_equal(nc_def_var(nc, "rain_double", NC_DOUBLE, 2, dims, &vd), NC_NOERR);
  assert_int_equal(nc_put_att_double(nc, vd, "valid_max", NC_DOUBLE, 1, &vmax), NC_NOERR);
  assert_int_equal(nc_enddef(nc), NC_NOERR);
  const short sv[6] = {0, 10, -32768, 100, 20, -50};
  const double dv[6] = {1, 2, 3, 400, 5, 6};
  assert_int_equal(nc_put_var_short(nc, vs, sv), NC_NOERR);
  assert_int_equal(nc_put_var_double(nc, vd, dv), NC_NOERR);
  assert_int_equal(nc_close(nc), NC_NOERR);
  rp_volume_reader *r = NULL;
  rp_error e = {0};
  assert_int_equal(rp_volume_file_open(path, &r, &e), RP_OK);
  assert_int_equal(rp_volume_file_sweeps(r), 1);
  assert_int_equal(rp_volume_file_n_fields(r), 2);
  double out[6];
  char units[16];
  assert_int_equal(rp_volume_file_read_field(r, "rain_short", out, units, sizeof units, &e), RP_OK);
  assert_string_equal(units, "mm/h");
  const double want[6] = {5.0, 6.0, NAN, 15.0, 7.0, 0.0};
  for (int i = 0; i < 6; i++) {
    if (isnan(want[i])) assert_true(isnan(out[i]));
    else assert_close(out[i], want[i], 1e-12, 1e-12);
  }
  assert_int_equal(rp_volume_file_read_field(r, "rain_double", out, NULL, 0, &e), RP_OK);
  assert_true(isnan(out[3]));
  assert_close(out[4], 5.0, 0, 0);
  rp_volume_file_close(r);
  remove(path);
}

static int write_helper(const char *scen, const char *out) {
  rp_test_init();
  rp_scenario s;
  rp_error e = {0};
  char *text = NULL;
  model_fixture f;
  memset(&f, 0, sizeof f);
  rp_volume *v = NULL;
  rp_status st = rp_scenario_file_load(scen, RP_SOURCE_DIR "/dsd-presets", &s, &text, &e);
  if (st == RP_OK) st = model_open(&s, &f, &e);
  rp_volume_options o;
  rp_volume_options_from_scenario(&s, &o);
  if (st == RP_OK) st = rp_volume_synthesize(&s, rp_volume_model_physics(f.vm), &o, &v, &e);
  if (st == RP_OK) st = rp_volume_file_write(v, out, text, &e);
  if (st != RP_OK) fprintf(stderr, "test_volume_file: %s\n", e.msg);
  rp_volume_free(v);
  model_close(&f);
  free(text);
  return st == RP_OK ? 0 : 1;
}

int main(int argc, char **argv) {
  if (argc == 4 && strcmp(argv[1], "--write") == 0) return write_helper(argv[2], argv[3]);
  rp_test_init();
  const struct CMUnitTest tests[] = {
      cmocka_unit_test(test_model_binding_matches_direct_gate),
      cmocka_unit_test(test_written_file_reads_back),
      cmocka_unit_test(test_file_metadata_follows_cf_radial),
      cmocka_unit_test(test_writing_does_not_hold_a_second_copy_of_the_fields),
      cmocka_unit_test(test_reader_takes_a_plain_retrieval_file),
  };
  return cmocka_run_group_tests(tests, NULL, NULL);
}
