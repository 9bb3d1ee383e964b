/* test_relate_run.c — the relation pipeline as one library call (rp_relate_run): the same
 * numbers as its steps done by hand, identical for 1 and 2 threads, statuses for too few
 * samples and for spectra without valid rows. */
#include "rp_test.h"

#include <string.h>

#include "rainprint/relate.h"
#include "rainprint/spectrum.h"

#ifdef _OPENMP
#include <omp.h>
#endif

static rp_radar_model *c_band_model(void) {
  rp_radar_config c;
  rp_radar_config_default(&c); /* C band, 10 C, tables computed */
  rp_radar_model *m = NULL;
  rp_error e = {0};
  if (rp_radar_model_alloc(&c, &m, &e) != RP_OK) fail_msg("%s", e.msg);
  return m;
}

static void set_threads(int n) {
#ifdef _OPENMP
  omp_set_num_threads(n);
#else
  (void)n;
#endif
}

static void test_relate_run_equals_steps_by_hand(void **state) {
  (void)state;
  rp_radar_model *m = c_band_model();
  rp_climate cl;
  assert_int_equal(rp_climate_from_name("mixed", &cl, NULL), RP_OK);
  rp_relate_request req;
  rp_relate_request_default(&req);
  req.climate = &cl;
  req.n_members = 2000;
  req.seed = 7;
  rp_relate_result *r = NULL;
  rp_error e = {0};
  assert_int_equal(rp_relate_run(m, 0, &req, &r, &e), RP_OK);
  assert_int_equal(r->n_samples, 2000);
  assert_int_equal(r->n_fits, RP_REL_COUNT);
  rp_radar_entry en;
  assert_int_equal(rp_radar_model_entry(m, 0, 10.0, 0.0, &en, NULL), RP_OK);
  rp_ensemble_member *mem = calloc(2000, sizeof *mem);
  rp_relate_sample *s = calloc(2000, sizeof *s);
  assert_int_equal(rp_ensemble_draw(&cl, 2000, 7, mem, NULL), RP_OK);
  assert_int_equal(rp_relate_ensemble_eval(en.plan, en.fast, mem, 2000, s, NULL, NULL), RP_OK);
  rp_relate_fit f[RP_REL_COUNT];
  size_t nf = 0;
  assert_int_equal(rp_relate_fit_eval(s, 2000, &req.options, f, &nf, NULL), RP_OK);
  for (size_t k = 0; k < nf; k++) {
    assert_close(r->fits[k].fit.a, f[k].fit.a, 0.0, 0.0);
    assert_close(r->fits[k].fit.b, f[k].fit.b, 0.0, 0.0);
    assert_close(r->fits[k].skill.rmse, f[k].skill.rmse, 0.0, 0.0);
  }
  free(mem);
  free(s);
  rp_relate_result_free(r);
  rp_radar_model_free(m);
}

/* The check: the same seed gives the same ensemble (and samples) with 1 and 2
 * threads. */
static void test_relate_run_same_seed_same_result_for_1_and_2_threads(void **state) {
  (void)state;
  rp_radar_model *m = c_band_model();
  rp_climate cl;
  assert_int_equal(rp_climate_from_name("maritime", &cl, NULL), RP_OK);
  rp_relate_request req;
  rp_relate_request_default(&req);
  req.climate = &cl;
  req.n_members = 3000;
  req.seed = 12345;
  rp_relate_result *one = NULL, *two = NULL;
  set_threads(1);
  assert_int_equal(rp_relate_run(m, 0, &req, &one, NULL), RP_OK);
  set_threads(2);
  assert_int_equal(rp_relate_run(m, 0, &req, &two, NULL), RP_OK);
  assert_memory_equal(one->members, two->members, 3000 * sizeof *one->members);
  assert_memory_equal(one->samples, two->samples, 3000 * sizeof *one->samples);
  assert_close(one->fits[0].fit.a, two->fits[0].fit.a, 0.0, 0.0);
  /* and another seed differs */
  rp_relate_result *other = NULL;
  req.seed = 12346;
  assert_int_equal(rp_relate_run(m, 0, &req, &other, NULL), RP_OK);
  assert_true(other->members[0].d0_mm != one->members[0].d0_mm);
  rp_relate_result_free(one);
  rp_relate_result_free(two);
  rp_relate_result_free(other);
  rp_radar_model_free(m);
}

static void test_relate_run_statuses(void **state) {
  (void)state;
  rp_radar_model *m = c_band_model();
  rp_climate cl;
  assert_int_equal(rp_climate_from_name("mixed", &cl, NULL), RP_OK);
  rp_relate_request req;
  rp_relate_request_default(&req);
  req.climate = &cl;
  req.n_members = 500;
  req.options.kdp_min_deg_km = 1000.0;
  rp_relate_result *r = NULL;
  rp_error e = {0};
  assert_int_equal(rp_relate_run(m, 0, &req, &r, &e), RP_ESAMPLES);
  assert_true(rp_status_is_input_error(RP_ESAMPLES));
  assert_null(r);
  rp_relate_request_default(&req);
  assert_int_equal(rp_relate_run(m, 0, &req, &r, &e), RP_EINVAL); /* no climate */
  req.climate = &cl;
  req.n_members = 10;
  assert_int_equal(rp_relate_run(m, 0, &req, &r, &e), RP_EINVAL); /* too small */
  assert_int_equal(rp_relate_run(m, 3, &req, &r, &e), RP_EINVAL); /* no such band */
  /* spectra without a valid row */
  char path[4096];
  rp_spectrum_set *set = NULL;
  assert_int_equal(rp_spectrum_load(rp_test_source_path("tests/data/relate/spectra_no_valid_rows.csv",
                                                        path, sizeof path), &set, &e), RP_OK);
  rp_dsd *rows = calloc(set->n_rows, sizeof *rows);
  assert_int_equal(rp_spectrum_rows_dsd(set, rows, NULL), RP_OK);
  rp_relate_request_default(&req);
  req.source = RP_RELATE_FROM_SPECTRA;
  req.rows = rows;
  req.n_rows = set->n_rows;
  assert_int_equal(rp_relate_run(m, 0, &req, &r, &e), RP_EINVAL);
  assert_non_null(strstr(e.msg, "no valid rows"));
  free(rows);
  rp_spectrum_free(set);
  rp_radar_model_free(m);
}

int main(void) {
  rp_test_init();
  const struct CMUnitTest tests[] = {
      cmocka_unit_test(test_relate_run_equals_steps_by_hand),
      cmocka_unit_test(test_relate_run_same_seed_same_result_for_1_and_2_threads),
      cmocka_unit_test(test_relate_run_statuses),
  };
  return cmocka_run_group_tests_name("relate_run", tests, NULL, NULL);
}
