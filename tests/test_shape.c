/* test_shape.c — raindrop axis-ratio models.
 *
 * The coefficients in src/physics/shape.c were checked against published compilations
 * (Andsager et al. 1999 excepted: from memory); the hand-computed points below test
 * that the code evaluates the formulas as written. The physically anchored checks use
 * properties common to all published fits. */
#include "rp_test.h"

#include <string.h>

#include "rainprint/shape.h"

/* NaN and infinity as double (the libc macros are float). */
#define D_NAN ((double)NAN)
#define D_INF ((double)INFINITY)

static double ratio(rp_shape_model m, double d_mm) {
  double r = -1.0;
  rp_error err = {0};
  assert_int_equal(rp_shape_axis_ratio(m, d_mm, &r, &err), RP_OK);
  return r;
}

static void test_shape_names_round_trip(void **state) {
  (void)state;
  const char *expect[RP_SHAPE_COUNT] = {
      "sphere",       "pruppacher-beard-1970", "beard-chuang-1987",          "andsager-1999",
      "brandes-2002", "thurai-2007",           "pruppacher-beard-1970-linear"};
  size_t n = 0;
  const char *const *names = rp_shape_names(&n);
  assert_int_equal(n, RP_SHAPE_COUNT);
  assert_ptr_equal(rp_shape_names(NULL), names);
  for (int i = 0; i < RP_SHAPE_COUNT; i++) {
    assert_string_equal(rp_shape_name((rp_shape_model)i), expect[i]);
    assert_string_equal(names[i], expect[i]);
    rp_shape_model m = RP_SHAPE_COUNT;
    assert_int_equal(rp_shape_from_name(expect[i], &m, NULL), RP_OK);
    assert_int_equal(m, i);
    assert_true(strlen(rp_shape_reference((rp_shape_model)i)) > 5);
  }
  assert_string_equal(rp_shape_name(RP_SHAPE_COUNT), "unknown");
  assert_string_equal(rp_shape_reference((rp_shape_model)-1), "unknown");
  assert_non_null(strstr(rp_shape_reference(RP_SHAPE_THURAI), "2007"));
  assert_non_null(strstr(rp_shape_reference(RP_SHAPE_BRANDES), "2002"));
}

/* The names used before the year was added (files written earlier carry them in their
 * shape_model attribute) still load, as the same models. */
static void test_shape_old_names_are_aliases(void **state) {
  (void)state;
  const char *old[5] = {"pruppacher-beard", "beard-chuang", "andsager", "brandes", "thurai"};
  const rp_shape_model want[5] = {RP_SHAPE_PRUPPACHER_BEARD, RP_SHAPE_BEARD_CHUANG,
                                  RP_SHAPE_ANDSAGER, RP_SHAPE_BRANDES, RP_SHAPE_THURAI};
  for (int i = 0; i < 5; i++) {
    rp_shape_model m = RP_SHAPE_COUNT;
    assert_int_equal(rp_shape_from_name(old[i], &m, NULL), RP_OK);
    assert_int_equal(m, want[i]);
  }
  /* near misses get a suggestion */
  rp_shape_model m = RP_SHAPE_SPHERE;
  rp_error err = {0};
  assert_int_equal(rp_shape_from_name("THURAI-2007", &m, &err), RP_EINVAL);
  assert_non_null(strstr(err.msg, "did you mean \"thurai-2007\""));
  assert_int_equal(rp_shape_from_name("Brandes", &m, &err), RP_EINVAL);
  assert_non_null(strstr(err.msg, "did you mean \"brandes-2002\""));
  assert_int_equal(rp_shape_from_name("beard-ch", &m, &err), RP_EINVAL);
  assert_non_null(strstr(err.msg, "did you mean \"beard-chuang-1987\""));
  assert_int_equal(rp_shape_from_name("oblong", &m, &err), RP_EINVAL);
  assert_null(strstr(err.msg, "did you mean"));
  assert_int_equal(m, RP_SHAPE_SPHERE);
}

/* Pruppacher & Beard (1970) continuous form: min(1, 1.03 - 0.062 D). It equals the
 * stepped form from 1 mm up and differs below (0.998 at 0.5 mm instead of 1); it
 * reaches 1 at 0.03 / 0.062 = 0.48387 mm. Hand arithmetic: 1e-12. */
static void test_shape_pruppacher_beard_linear_is_continuous(void **state) {
  (void)state;
  assert_close(ratio(RP_SHAPE_PRUPPACHER_BEARD_LINEAR, 0.5), 0.999, 1e-12, 0.0);
  assert_close(ratio(RP_SHAPE_PRUPPACHER_BEARD_LINEAR, 0.8), 0.9804, 1e-12, 0.0);
  assert_close(ratio(RP_SHAPE_PRUPPACHER_BEARD_LINEAR, 0.4), 1.0, 0.0, 0.0);
  for (double d = 1.0; d <= 10.0; d += 0.25)
    assert_close(ratio(RP_SHAPE_PRUPPACHER_BEARD_LINEAR, d), ratio(RP_SHAPE_PRUPPACHER_BEARD, d),
                 0.0, 0.0);
  /* no step: neighbours 1e-7 mm apart differ by 0.062e-7 at most */
  for (double d = 0.2; d <= 2.0; d += 0.01)
    assert_close(ratio(RP_SHAPE_PRUPPACHER_BEARD_LINEAR, d + 1e-7),
                 ratio(RP_SHAPE_PRUPPACHER_BEARD_LINEAR, d), 0.0, 6.3e-9);
}

/* Breakpoints: where each model jumps or has a kink, and the side each belongs to.
 * Jumps (hand arithmetic from the coefficients; 1e-7 for a point 1e-7 mm inside a piece): Thurai 0.7 mm
 * 1 -> 0.99443805 (the small-drop polynomial at 0.7), 1.5 mm 0.96778125 -> 0.96465044;
 * Pruppacher-Beard 1 mm 1 -> 0.968; Andsager 1.1 and 4.4 mm. Kinks (clamp at r = 1):
 * Beard-Chuang (and Andsager below 1.1 mm) where the polynomial falls through 1,
 * the linear Pruppacher-Beard at 0.03/0.062 mm. */
static void test_shape_breakpoints_and_sides(void **state) {
  (void)state;
  double bp[RP_SHAPE_BREAKPOINTS_MAX];
  assert_int_equal(rp_shape_breakpoints(RP_SHAPE_SPHERE, bp, RP_SHAPE_BREAKPOINTS_MAX), 0);
  assert_int_equal(rp_shape_breakpoints(RP_SHAPE_BRANDES, bp, RP_SHAPE_BREAKPOINTS_MAX), 0);
  assert_int_equal(rp_shape_breakpoints(RP_SHAPE_COUNT, bp, RP_SHAPE_BREAKPOINTS_MAX), 0);
  assert_int_equal(rp_shape_breakpoints(RP_SHAPE_ANDSAGER, NULL, 0), 3); /* count only */
  assert_int_equal(rp_shape_breakpoints(RP_SHAPE_THURAI, bp, RP_SHAPE_BREAKPOINTS_MAX), 2);
  assert_close(bp[0], 0.7, 0.0, 0.0);
  assert_close(bp[1], 1.5, 0.0, 0.0);
  assert_int_equal(rp_shape_piece(RP_SHAPE_THURAI, 0.7), 0);  /* D <= 0.7: sphere */
  assert_int_equal(rp_shape_piece(RP_SHAPE_THURAI, 0.7000001), 1);
  assert_int_equal(rp_shape_piece(RP_SHAPE_THURAI, 1.4999999), 1);
  assert_int_equal(rp_shape_piece(RP_SHAPE_THURAI, 1.5), 2);  /* D >= 1.5: large fit */
  assert_close(ratio(RP_SHAPE_THURAI, 0.7000001), 0.99443805, 0.0, 1e-7);
  assert_close(ratio(RP_SHAPE_THURAI, 1.4999999), 0.96778125, 0.0, 1e-7);
  assert_close(ratio(RP_SHAPE_THURAI, 1.5), 0.96465044, 0.0, 1e-7);
  assert_int_equal(rp_shape_breakpoints(RP_SHAPE_PRUPPACHER_BEARD, bp, 1), 1);
  assert_close(bp[0], 1.0, 0.0, 0.0);
  assert_int_equal(rp_shape_piece(RP_SHAPE_PRUPPACHER_BEARD, 0.9999999), 0);
  assert_int_equal(rp_shape_piece(RP_SHAPE_PRUPPACHER_BEARD, 1.0), 1);
  assert_int_equal(rp_shape_breakpoints(RP_SHAPE_PRUPPACHER_BEARD_LINEAR, bp, 1), 1);
  assert_close(bp[0], 0.03 / 0.062, 1e-14, 0.0);
  /* a clamp kink: r = 1 up to it, below 1 just past it */
  const rp_shape_model kinked[2] = {RP_SHAPE_BEARD_CHUANG, RP_SHAPE_ANDSAGER};
  for (int i = 0; i < 2; i++) {
    const size_t n = rp_shape_breakpoints(kinked[i], bp, RP_SHAPE_BREAKPOINTS_MAX);
    assert_true(n >= 1);
    assert_true(bp[0] > 0.3 && bp[0] < 0.7);
    assert_close(ratio(kinked[i], bp[0]), 1.0, 0.0, 0.0);
    assert_true(ratio(kinked[i], bp[0] + 1e-9) < 1.0);
    assert_int_equal(rp_shape_piece(kinked[i], bp[0]), 0);
    assert_int_equal(rp_shape_piece(kinked[i], bp[0] + 1e-9), 1);
  }
  assert_int_equal(rp_shape_breakpoints(RP_SHAPE_ANDSAGER, bp, RP_SHAPE_BREAKPOINTS_MAX), 3);
  assert_close(bp[1], 1.1, 0.0, 0.0);
  assert_close(bp[2], 4.4, 0.0, 0.0);
  assert_int_equal(rp_shape_piece(RP_SHAPE_ANDSAGER, 1.1), 2);
  assert_int_equal(rp_shape_piece(RP_SHAPE_ANDSAGER, 4.4), 2);
  assert_int_equal(rp_shape_piece(RP_SHAPE_ANDSAGER, 4.4000001), 3);
  /* between breakpoints every model is smooth: no jump larger than the local slope
   * allows (|dr/dD| < 0.2 mm^-1 for all fits on (0, 10] mm) between points 1e-6 mm apart
   * in the same piece */
  for (int m = 0; m < RP_SHAPE_COUNT; m++)
    for (double d = 0.05; d < 9.9; d += 0.01) {
      const double d2 = d + 1e-6;
      if (rp_shape_piece((rp_shape_model)m, d) != rp_shape_piece((rp_shape_model)m, d2))
        continue;
      assert_close(ratio((rp_shape_model)m, d2), ratio((rp_shape_model)m, d), 0.0, 2e-7);
    }
}

static void test_shape_unknown_name_is_einval_listing_valid_names(void **state) {
  (void)state;
  rp_shape_model m = RP_SHAPE_BRANDES;
  rp_error err = {0};
  assert_int_equal(rp_shape_from_name("Thurai", &m, &err), RP_EINVAL);
  assert_int_equal(err.status, RP_EINVAL);
  assert_non_null(strstr(err.msg, "\"Thurai\""));
  assert_non_null(strstr(err.msg, "pruppacher-beard"));
  assert_non_null(strstr(err.msg, "thurai"));
  assert_int_equal(m, RP_SHAPE_BRANDES);
  assert_int_equal(rp_shape_from_name(NULL, &m, &err), RP_EINVAL);
  assert_int_equal(rp_shape_from_name("sphere", NULL, &err), RP_EINVAL);
}

static void test_shape_default_is_thurai(void **state) {
  (void)state;
  assert_int_equal(RP_SHAPE_DEFAULT, RP_SHAPE_THURAI);
}

/* Formulas at points computed by hand from the coefficients (this tests the code, not
 * the coefficients). Tolerance 1e-12: exact arithmetic on short decimals.
 *   Pruppacher-Beard D = 3: 1.03 - 0.062*3 = 0.844
 *   Beard-Chuang D = 2: 1.0048 + 0.00114 - 0.10512 + 0.029456 - 0.0026832 = 0.9275928
 *   Andsager D = 3: 1.012 - 0.04335 - 0.09252 = 0.87613
 *   Andsager D = 5 (outside 1.1-4.4: Beard-Chuang):
 *     1.0048 + 0.00285 - 0.657 + 0.46025 - 0.1048125 = 0.7060875
 *   Brandes D = 3: 0.9951 + 0.0753 - 0.32796 + 0.143181 - 0.0201852 = 0.8654358
 *   Thurai D = 3: 1.065 - 0.1875 - 0.03591 + 0.020682 - 0.00331695 = 0.85895505
 *   Thurai D = 1 (0.7-1.5 branch): 1.173 - 0.5165 + 0.4698 - 0.1317 - 0.0085 = 0.9861 */
static void test_shape_formulas_at_hand_computed_points(void **state) {
  (void)state;
  assert_close(ratio(RP_SHAPE_PRUPPACHER_BEARD, 3.0), 0.844, 1e-12, 0.0);
  assert_close(ratio(RP_SHAPE_BEARD_CHUANG, 2.0), 0.9275928, 1e-12, 0.0);
  assert_close(ratio(RP_SHAPE_ANDSAGER, 3.0), 0.87613, 1e-12, 0.0);
  assert_close(ratio(RP_SHAPE_ANDSAGER, 5.0), 0.7060875, 1e-12, 0.0);
  assert_close(ratio(RP_SHAPE_BRANDES, 3.0), 0.8654358, 1e-12, 0.0);
  assert_close(ratio(RP_SHAPE_THURAI, 3.0), 0.85895505, 1e-12, 0.0);
  assert_close(ratio(RP_SHAPE_THURAI, 1.0), 0.9861, 1e-12, 0.0);
  assert_close(ratio(RP_SHAPE_SPHERE, 7.0), 1.0, 0.0, 0.0);
}

/* Branch edges as documented: Andsager's own formula on [1.1, 4.4] mm
 * (1.1: 1.012 - 0.015895 - 0.0124388 = 0.9836662), Beard-Chuang just outside;
 * Pruppacher-Beard is 1 below 1 mm and 1.03 - 0.062 = 0.968 at 1 mm; Thurai is 1 at
 * 0.7 mm. Tolerance 1e-12 (hand arithmetic on short decimals). */
static void test_shape_branch_edges(void **state) {
  (void)state;
  assert_close(ratio(RP_SHAPE_ANDSAGER, 1.1), 0.9836662, 1e-12, 0.0);
  assert_close(ratio(RP_SHAPE_ANDSAGER, 1.09), ratio(RP_SHAPE_BEARD_CHUANG, 1.09), 0.0, 0.0);
  assert_close(ratio(RP_SHAPE_ANDSAGER, 4.41), ratio(RP_SHAPE_BEARD_CHUANG, 4.41), 0.0, 0.0);
  assert_true(ratio(RP_SHAPE_ANDSAGER, 2.0) != ratio(RP_SHAPE_BEARD_CHUANG, 2.0));
  assert_close(ratio(RP_SHAPE_PRUPPACHER_BEARD, 0.999), 1.0, 0.0, 0.0);
  assert_close(ratio(RP_SHAPE_PRUPPACHER_BEARD, 1.0), 0.968, 1e-12, 0.0);
  assert_close(ratio(RP_SHAPE_THURAI, 0.7), 1.0, 0.0, 0.0);
}

/* Beard-Chuang's constant 1.0048 exceeds 1: small drops are clamped to a sphere. */
static void test_shape_formula_above_one_is_clamped(void **state) {
  (void)state;
  assert_close(ratio(RP_SHAPE_BEARD_CHUANG, 0.1), 1.0, 0.0, 0.0);
  assert_close(ratio(RP_SHAPE_ANDSAGER, 0.1), 1.0, 0.0, 0.0);
}

/* All models give (0, 1] over (0, 10] mm, and stay above the documented lower bound
 * 0.38 at 10 mm. */
static void test_shape_ratio_within_documented_bounds(void **state) {
  (void)state;
  for (int m = 0; m < RP_SHAPE_COUNT; m++) {
    for (double d = 0.01; d <= 10.0; d += 0.01) {
      const double r = ratio((rp_shape_model)m, d);
      assert_true(r <= 1.0);
      assert_true(r >= 0.38);
    }
  }
}

/* Drops of 0.5 mm are nearly spherical in every model: within 0.02 of 1 (common
 * practice: surface tension dominates below ~1 mm). */
static void test_shape_all_models_near_sphere_at_half_mm(void **state) {
  (void)state;
  for (int m = 0; m < RP_SHAPE_COUNT; m++) assert_close(ratio((rp_shape_model)m, 0.5), 1.0, 0.0, 0.02);
}

/* Above 1.5 mm drops flatten monotonically with size (every published fit). */
static void test_shape_ratio_decreases_with_diameter_above_1_5_mm(void **state) {
  (void)state;
  for (int m = 1; m < RP_SHAPE_COUNT; m++) {
    double prev = ratio((rp_shape_model)m, 1.5);
    for (double d = 1.55; d <= 10.0; d += 0.05) {
      const double r = ratio((rp_shape_model)m, d);
      assert_true(r < prev);
      prev = r;
    }
  }
}

/* The non-spherical fits agree within 0.05 of each other from 2 to 5 mm (common
 * practice: the published equilibrium and measured fits agree closely there). */
static void test_shape_models_agree_within_0_05_from_2_to_5_mm(void **state) {
  (void)state;
  for (double d = 2.0; d <= 5.0; d += 0.05) {
    double lo = 2.0, hi = -1.0;
    for (int m = 1; m < RP_SHAPE_COUNT; m++) {
      const double r = ratio((rp_shape_model)m, d);
      lo = fmin(lo, r);
      hi = fmax(hi, r);
    }
    assert_true(hi - lo <= 0.05);
  }
}

/* A 5 mm drop has b/a of about 0.7 (common practice): accept 0.65-0.75. */
static void test_shape_five_mm_drop_ratio_about_0_7(void **state) {
  (void)state;
  for (int m = 1; m < RP_SHAPE_COUNT; m++) {
    const double r = ratio((rp_shape_model)m, 5.0);
    assert_true(r >= 0.65 && r <= 0.75);
  }
}

static void test_shape_out_of_domain_is_edom(void **state) {
  (void)state;
  double r = -5.0;
  rp_error err = {0};
  assert_int_equal(rp_shape_axis_ratio(RP_SHAPE_THURAI, 0.0, &r, &err), RP_EDOM);
  assert_int_equal(rp_shape_axis_ratio(RP_SHAPE_THURAI, -1.0, &r, &err), RP_EDOM);
  assert_int_equal(rp_shape_axis_ratio(RP_SHAPE_THURAI, 12.0, &r, &err), RP_EDOM);
  assert_non_null(strstr(err.msg, "diameter 12 mm outside (0, 10] mm"));
  assert_int_equal(rp_shape_axis_ratio(RP_SHAPE_SPHERE, 10.0001, &r, &err), RP_EDOM);
  assert_close(r, -5.0, 0.0, 0.0);
  assert_close(ratio(RP_SHAPE_THURAI, 10.0), 0.3975, 1e-12, 0.0); /* edge accepted:
      1.065 - 0.625 - 0.399 + 0.766 - 0.4095 = 0.3975 */
}

static void test_shape_nan_inf_bad_model_null_is_einval(void **state) {
  (void)state;
  double r = -5.0;
  rp_error err = {0};
  assert_int_equal(rp_shape_axis_ratio(RP_SHAPE_THURAI, D_NAN, &r, &err), RP_EINVAL);
  assert_int_equal(rp_shape_axis_ratio(RP_SHAPE_THURAI, D_INF, &r, &err), RP_EINVAL);
  assert_int_equal(rp_shape_axis_ratio(RP_SHAPE_COUNT, 2.0, &r, &err), RP_EINVAL);
  assert_int_equal(rp_shape_axis_ratio((rp_shape_model)-3, 2.0, &r, &err), RP_EINVAL);
  assert_int_equal(rp_shape_axis_ratio(RP_SHAPE_THURAI, 2.0, NULL, &err), RP_EINVAL);
  assert_close(r, -5.0, 0.0, 0.0);
}

int main(void) {
  rp_test_init();
  const struct CMUnitTest tests[] = {
      cmocka_unit_test(test_shape_names_round_trip),
      cmocka_unit_test(test_shape_old_names_are_aliases),
      cmocka_unit_test(test_shape_pruppacher_beard_linear_is_continuous),
      cmocka_unit_test(test_shape_breakpoints_and_sides),
      cmocka_unit_test(test_shape_unknown_name_is_einval_listing_valid_names),
      cmocka_unit_test(test_shape_default_is_thurai),
      cmocka_unit_test(test_shape_formulas_at_hand_computed_points),
      cmocka_unit_test(test_shape_branch_edges),
      cmocka_unit_test(test_shape_formula_above_one_is_clamped),
      cmocka_unit_test(test_shape_ratio_within_documented_bounds),
      cmocka_unit_test(test_shape_all_models_near_sphere_at_half_mm),
      cmocka_unit_test(test_shape_ratio_decreases_with_diameter_above_1_5_mm),
      cmocka_unit_test(test_shape_models_agree_within_0_05_from_2_to_5_mm),
      cmocka_unit_test(test_shape_five_mm_drop_ratio_about_0_7),
      cmocka_unit_test(test_shape_out_of_domain_is_edom),
      cmocka_unit_test(test_shape_nan_inf_bad_model_null_is_einval),
  };
  return cmocka_run_group_tests_name("shape", tests, NULL, NULL);
}
