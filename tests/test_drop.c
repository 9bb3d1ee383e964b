/* test_drop.c — radar geometry, h/v amplitudes and canting averages of one drop. */
#include "rp_test.h"

#include <complex.h>
#include <string.h>

#include <gsl/gsl_integration.h>

#include "rainprint/drop.h"
#include "rainprint/permittivity.h"
#include "rainprint/rayleigh.h"

static double dot3(const double a[3], const double b[3]) {
  return a[0] * b[0] + a[1] * b[1] + a[2] * b[2];
}

static double abs2(double complex z) { return creal(z) * creal(z) + cimag(z) * cimag(z); }

static rp_drop_result eval_or_fail(const rp_drop_config *cfg, double d_mm) {
  rp_error err = {0};
  rp_drop_ws *ws = rp_drop_ws_alloc(cfg);
  assert_non_null(ws);
  rp_drop_result r;
  const rp_status s = rp_drop_eval(ws, d_mm, &r, &err);
  if (s != RP_OK) fail_msg("rp_drop_eval: %s", err.msg);
  rp_drop_ws_free(ws);
  return r;
}

static rp_drop_config config(double freq_ghz, double sd_deg, double elev_deg, rp_method m) {
  rp_drop_config c;
  rp_drop_config_default(&c);
  c.freq_ghz = freq_ghz;
  c.canting_sd_deg = sd_deg;
  c.elevation_deg = elev_deg;
  c.method = m;
  return c;
}

static void test_radar_vectors_are_right_handed_and_orthonormal(void **state) {
  (void)state;
  const double elevations[] = {0.0, 12.5, 45.0, 90.0};
  for (size_t i = 0; i < 4; i++) {
    double k[3], h[3], v[3];
    rp_drop_radar_vectors(elevations[i], k, h, v);
    /* closed-form geometry: tolerance is rounding only */
    assert_close(dot3(k, k), 1.0, 1e-15, 0.0);
    assert_close(dot3(h, h), 1.0, 1e-15, 0.0);
    assert_close(dot3(v, v), 1.0, 1e-15, 0.0);
    assert_close(dot3(k, h), 0.0, 0.0, 1e-15);
    assert_close(dot3(k, v), 0.0, 0.0, 1e-15);
    assert_close(dot3(h, v), 0.0, 0.0, 1e-15);
    /* h x v = k */
    assert_close(h[1] * v[2] - h[2] * v[1], k[0], 0.0, 1e-15);
    assert_close(h[2] * v[0] - h[0] * v[2], k[1], 0.0, 1e-15);
    assert_close(h[0] * v[1] - h[1] * v[0], k[2], 0.0, 1e-15);
    assert_close(h[2], 0.0, 0.0, 0.0); /* h stays horizontal */
  }
}

static void test_sphere_backscatter_hh_equals_vv_and_no_cross_polar(void **state) {
  (void)state;
  /* Backscatter alignment (scatter.h): a sphere gives f_hh(pi) = f_vv(pi), f_hv = 0, at
   * any elevation and canting. T-matrix converged to 1e-7 -> 1e-6 relative. */
  const rp_method methods[] = {RP_METHOD_TMATRIX, RP_METHOD_RAYLEIGH, RP_METHOD_MIE};
  for (size_t m = 0; m < 3; m++) {
    for (double elev = 0.0; elev <= 90.0; elev += 30.0) {
      rp_drop_config c = config(9.4, 10.0, elev, methods[m]);
      c.shape = RP_SHAPE_SPHERE;
      const rp_drop_result r = eval_or_fail(&c, 3.0);
      assert_close(creal(r.back_hh_mm), creal(r.back_vv_mm), 1e-6, 1e-12);
      assert_close(cimag(r.back_hh_mm), cimag(r.back_vv_mm), 1e-6, 1e-12);
      assert_close(cabs(r.back_hv_mm), 0.0, 0.0, 1e-9 * cabs(r.back_hh_mm));
      assert_close(r.avg.back_hh2_mm2, r.avg.back_vv2_mm2, 1e-6, 0.0);
      assert_close(r.avg.back_hv2_mm2, 0.0, 0.0, 1e-12 * r.avg.back_hh2_mm2);
      /* rhoHV = 1 for spheres */
      assert_close(cabs(r.avg.back_hhvv_mm2), r.avg.back_hh2_mm2, 1e-6, 0.0);
    }
  }
}

static void test_mie_and_tmatrix_agree_for_a_sphere(void **state) {
  (void)state;
  /* Sphere limit of the T-matrix (issue check: 1e-6 relative). */
  rp_drop_config cm = config(5.6, 0.0, 0.0, RP_METHOD_MIE);
  rp_drop_config ct = config(5.6, 0.0, 0.0, RP_METHOD_TMATRIX);
  cm.shape = ct.shape = RP_SHAPE_SPHERE;
  for (double d = 0.5; d <= 8.0; d += 2.5) {
    const rp_drop_result a = eval_or_fail(&cm, d), b = eval_or_fail(&ct, d);
    assert_close(creal(b.back_hh_mm), creal(a.back_hh_mm), 1e-6, 1e-6 * cabs(a.back_hh_mm));
    assert_close(cimag(b.back_hh_mm), cimag(a.back_hh_mm), 1e-6, 1e-6 * cabs(a.back_hh_mm));
    assert_close(creal(b.fwd_vv_mm), creal(a.fwd_vv_mm), 1e-6, 1e-6 * cabs(a.fwd_vv_mm));
    assert_close(cimag(b.fwd_vv_mm), cimag(a.fwd_vv_mm), 1e-6, 1e-6 * cabs(a.fwd_vv_mm));
  }
}

static void test_zero_canting_reproduces_fixed_orientation(void **state) {
  (void)state;
  /* With SD = 0 the averages are the moments of the single orientation (exact). */
  const rp_drop_config c = config(5.6, 0.0, 10.0, RP_METHOD_TMATRIX);
  const rp_drop_result r = eval_or_fail(&c, 4.0);
  assert_close(r.avg.back_hh2_mm2, abs2(r.back_hh_mm), 1e-14, 0.0);
  assert_close(r.avg.back_vv2_mm2, abs2(r.back_vv_mm), 1e-14, 0.0);
  assert_close(r.avg.back_hv2_mm2, abs2(r.back_hv_mm), 1e-14, 1e-30);
  assert_close(creal(r.avg.back_hhvv_mm2), creal(r.back_hh_mm * conj(r.back_vv_mm)), 1e-14, 0.0);
  assert_close(cimag(r.avg.fwd_hh_mm), cimag(r.fwd_hh_mm), 1e-14, 0.0);
}

static void test_oblate_drop_signs_zdr_kdp_positive(void **state) {
  (void)state;
  /* Convention (docs/method.md): oblate drops give ZDR > 0 and KDP > 0 (Re f_hh(0) >
   * Re f_vv(0)); extinction Im f(0) > 0. */
  const double freqs[] = {2.8, 5.6, 9.4};
  for (size_t i = 0; i < 3; i++) {
    const rp_drop_config c = config(freqs[i], 7.0, 0.0, RP_METHOD_TMATRIX);
    const rp_drop_result r = eval_or_fail(&c, 3.0);
    assert_true(r.axis_ratio < 0.9);
    assert_true(r.avg.back_hh2_mm2 > r.avg.back_vv2_mm2);
    assert_true(creal(r.avg.fwd_hh_mm) > creal(r.avg.fwd_vv_mm));
    assert_true(cimag(r.avg.fwd_hh_mm) > 0.0 && cimag(r.avg.fwd_vv_mm) > 0.0);
  }
}

static void test_canting_lowers_zdr_and_creates_cross_polar(void **state) {
  (void)state;
  const rp_drop_config c0 = config(5.6, 0.0, 0.0, RP_METHOD_TMATRIX);
  const rp_drop_config c1 = config(5.6, 15.0, 0.0, RP_METHOD_TMATRIX);
  const rp_drop_result a = eval_or_fail(&c0, 4.0), b = eval_or_fail(&c1, 4.0);
  assert_true(b.avg.back_hh2_mm2 / b.avg.back_vv2_mm2 < a.avg.back_hh2_mm2 / a.avg.back_vv2_mm2);
  assert_close(a.avg.back_hv2_mm2, 0.0, 0.0, 1e-14 * a.avg.back_hh2_mm2);
  assert_true(b.avg.back_hv2_mm2 > 1e-4 * b.avg.back_hh2_mm2);
}

/* The angular-moment rotation is exact for planar canting at zero elevation (the beam is
 * always broadside to the axis); quadrature must reproduce it. The quadrature truncates
 * the (wrapped) Gaussian at 6 sigma, which changes <beta^2>-weighted moments by ~1e-7;
 * 16 Gauss–Legendre nodes add less. Hence 1e-5. */
static void test_angular_moments_equal_quadrature_for_planar_canting(void **state) {
  (void)state;
  const double sds[] = {5.0, 10.0, 20.0};
  for (size_t i = 0; i < 3; i++) {
    rp_drop_config exact = config(2.8, sds[i], 0.0, RP_METHOD_TMATRIX);
    rp_drop_config approx = exact;
    approx.canting_approx = 1;
    const rp_drop_result a = eval_or_fail(&exact, 5.0), b = eval_or_fail(&approx, 5.0);
    assert_close(b.avg.back_hh2_mm2, a.avg.back_hh2_mm2, 1e-5, 0.0);
    assert_close(b.avg.back_vv2_mm2, a.avg.back_vv2_mm2, 1e-5, 0.0);
    assert_close(b.avg.back_hv2_mm2, a.avg.back_hv2_mm2, 1e-5, 0.0);
    assert_close(creal(b.avg.back_hhvv_mm2), creal(a.avg.back_hhvv_mm2), 1e-5, 0.0);
    assert_close(cimag(b.avg.back_hhvv_mm2), cimag(a.avg.back_hhvv_mm2), 1e-5,
                 1e-5 * cabs(a.avg.back_hhvv_mm2));
    assert_close(creal(b.avg.fwd_hh_mm - b.avg.fwd_vv_mm), creal(a.avg.fwd_hh_mm - a.avg.fwd_vv_mm),
                 1e-5, 0.0);
  }
}

/* Away from zero elevation the rotation is an approximation: the axis' projection on v
 * shrinks by cos(elevation). At S band, SD 10 deg and 20 deg elevation the error in the
 * single-drop Zh, Zv and ZDR stays below 0.02 dB (the stated tolerance of the option). */
static void test_angular_moments_approximate_quadrature_at_elevation(void **state) {
  (void)state;
  rp_drop_config exact = config(2.8, 10.0, 20.0, RP_METHOD_TMATRIX);
  rp_drop_config approx = exact;
  approx.canting_approx = 1;
  for (double d = 1.0; d <= 7.0; d += 2.0) {
    const rp_drop_result a = eval_or_fail(&exact, d), b = eval_or_fail(&approx, d);
    const double dzh = 10.0 * log10(b.avg.back_hh2_mm2 / a.avg.back_hh2_mm2);
    const double dzv = 10.0 * log10(b.avg.back_vv2_mm2 / a.avg.back_vv2_mm2);
    assert_close(dzh, 0.0, 0.0, 0.02);
    assert_close(dzv, 0.0, 0.0, 0.02);
    assert_close(dzh - dzv, 0.0, 0.0, 0.02);
  }
}

/* Independent reference for the 3-D canting quadrature: the Rayleigh dipole averaged
 * over the same orientation density by adaptive 2-D GSL quadrature (a slow, obviously
 * correct integral). f_hh = alpha_a + (alpha_b - alpha_a) n_y^2 at zero elevation. */
typedef struct {
  double sigma;
  double complex aa, ab;
  int which; /* 0 |f_hh|^2, 1 |f_vv|^2, 2 |f_hv|^2, 3 weight */
  double beta;
} ray3d;

static double ray3d_phi(double phi, void *p) {
  const ray3d *r = p;
  const double n[3] = {sin(r->beta) * cos(phi), sin(r->beta) * sin(phi), cos(r->beta)};
  const double complex dl = r->ab - r->aa;
  const double complex hh = r->aa + dl * n[1] * n[1], vv = r->aa + dl * n[2] * n[2];
  const double complex hv = dl * n[1] * n[2];
  /* density on the sphere exp(-beta^2/(2 sigma^2)), beta in [0, pi], folded onto
   * [0, 90 deg] by n == -n: the axis at beta and its opposite at pi - beta */
  const double s2 = 2.0 * r->sigma * r->sigma, bo = M_PI - r->beta;
  const double w = (exp(-r->beta * r->beta / s2) + exp(-bo * bo / s2)) * sin(r->beta);
  switch (r->which) {
    case 0: return w * abs2(hh);
    case 1: return w * abs2(vv);
    case 2: return w * abs2(hv);
    default: return w;
  }
}

static double ray3d_beta(double beta, void *p) {
  ray3d *r = p;
  r->beta = beta;
  gsl_integration_workspace *ws = gsl_integration_workspace_alloc(200);
  gsl_function f = {ray3d_phi, r};
  double res, abserr;
  gsl_integration_qag(&f, 0.0, 2.0 * M_PI, 0.0, 1e-11, 200, GSL_INTEG_GAUSS41, ws, &res, &abserr);
  gsl_integration_workspace_free(ws);
  return res;
}

static double ray3d_avg(ray3d *r, int which) {
  gsl_integration_workspace *ws = gsl_integration_workspace_alloc(200);
  gsl_function f = {ray3d_beta, r};
  double num, den, abserr;
  r->which = which;
  gsl_integration_qag(&f, 0.0, M_PI / 2.0, 0.0, 1e-10, 200, GSL_INTEG_GAUSS41, ws, &num, &abserr);
  r->which = 3;
  gsl_integration_qag(&f, 0.0, M_PI / 2.0, 0.0, 1e-10, 200, GSL_INTEG_GAUSS41, ws, &den, &abserr);
  gsl_integration_workspace_free(ws);
  return num / den;
}

static void test_3d_canting_quadrature_matches_adaptive_reference(void **state) {
  (void)state;
  rp_drop_config c = config(2.8, 10.0, 0.0, RP_METHOD_RAYLEIGH);
  c.canting_model = RP_CANTING_3D;
  const double d = 4.0;
  const rp_drop_result r = eval_or_fail(&c, d);
  rp_rayleigh_spheroid sph;
  rp_error err = {0};
  assert_int_equal(rp_rayleigh_spheroid_init(&sph, d, r.axis_ratio, r.wavelength_mm, r.eps, &err),
                   RP_OK);
  const double pref = sph.k_per_mm * sph.k_per_mm / (4.0 * M_PI);
  ray3d ref = {.sigma = 10.0 * M_PI / 180.0, .aa = pref * sph.alpha_a_mm3, .ab = pref * sph.alpha_b_mm3};
  /* 16 x 6 nodes vs adaptive 1e-10 over the untruncated density on [0, 90 deg]: the
   * truncation at 6 sigma dominates; 1e-5 relative (1e-4 for the small cross-polar
   * term). The opposite-axis image is below e^-72 (1e-31) on [0, 6 sigma] at
   * sigma = 10 deg and does not matter. */
  assert_close(r.avg.back_hh2_mm2, ray3d_avg(&ref, 0), 1e-5, 0.0);
  assert_close(r.avg.back_vv2_mm2, ray3d_avg(&ref, 1), 1e-5, 0.0);
  assert_close(r.avg.back_hv2_mm2, ray3d_avg(&ref, 2), 1e-4, 0.0);
}

/* Broad 3-D canting (sigma = 45 deg): here the opposite-axis image exp(-(pi - beta)^2 /
 * (2 sigma^2)) carries real weight near 90 deg, while tilts past 180 deg do not exist on
 * the sphere (an image at beta + 180 deg would add up to e^-8 = 3e-4 of the weight near
 * beta = 0); at sigma = 30 deg that image alone moves <|f_hh|^2> by 2e-6. Same reference
 * as above; with beta_max = 90 deg nothing is truncated and the 16 x 6 rule integrates
 * the smooth integrand to ~1e-12 (measured), so 1e-6 relative (1e-5 for the small
 * cross-polar term) separates a wrong density from quadrature error. */
static void test_3d_canting_density_folds_onto_the_opposite_axis_only(void **state) {
  (void)state;
  const double sds[] = {30.0, 45.0};
  for (size_t i = 0; i < 2; i++) {
    rp_drop_config c = config(2.8, sds[i], 0.0, RP_METHOD_RAYLEIGH);
    c.canting_model = RP_CANTING_3D;
    const double d = 4.0;
    const rp_drop_result r = eval_or_fail(&c, d);
    rp_rayleigh_spheroid sph;
    rp_error err = {0};
    assert_int_equal(
        rp_rayleigh_spheroid_init(&sph, d, r.axis_ratio, r.wavelength_mm, r.eps, &err), RP_OK);
    const double pref = sph.k_per_mm * sph.k_per_mm / (4.0 * M_PI);
    ray3d ref = {.sigma = sds[i] * M_PI / 180.0,
                 .aa = pref * sph.alpha_a_mm3,
                 .ab = pref * sph.alpha_b_mm3};
    assert_close(r.avg.back_hh2_mm2, ray3d_avg(&ref, 0), 1e-6, 0.0);
    assert_close(r.avg.back_vv2_mm2, ray3d_avg(&ref, 1), 1e-6, 0.0);
    assert_close(r.avg.back_hv2_mm2, ray3d_avg(&ref, 2), 1e-5, 0.0);
  }
}

static void test_band_names_and_frequencies(void **state) {
  (void)state;
  double f = 0.0;
  rp_error err = {0};
  assert_int_equal(rp_band_frequency_ghz("S", &f, &err), RP_OK);
  assert_close(f, 2.8, 0.0, 0.0);
  assert_int_equal(rp_band_frequency_ghz("x", &f, &err), RP_OK);
  assert_close(f, 9.4, 0.0, 0.0);
  assert_int_equal(rp_band_frequency_ghz("W", &f, &err), RP_EINVAL);
  assert_non_null(strstr(err.msg, "unknown band"));
  assert_string_equal(rp_band_of_frequency(5.6), "C");
  assert_null(rp_band_of_frequency(5.5));
  rp_method m;
  assert_int_equal(rp_method_from_name("mie", &m, &err), RP_OK);
  assert_int_equal(m, RP_METHOD_MIE);
  assert_int_equal(rp_method_from_name("dda", &m, &err), RP_EINVAL);
  rp_canting_model cm;
  assert_int_equal(rp_canting_model_from_name("3d", &cm, &err), RP_OK);
  assert_int_equal(rp_canting_model_from_name("cone", &cm, &err), RP_EINVAL);
}

static void test_bad_config_and_diameter_are_refused(void **state) {
  (void)state;
  rp_error err = {0};
  rp_drop_config c;
  rp_drop_config_default(&c);
  assert_int_equal(rp_drop_config_check(&c, &err), RP_OK);
  c.freq_ghz = NAN;
  assert_int_equal(rp_drop_config_check(&c, &err), RP_EDOM);
  rp_drop_config_default(&c);
  c.temp_c = 80.0;
  assert_int_not_equal(rp_drop_config_check(&c, &err), RP_OK);
  rp_drop_config_default(&c);
  c.canting_sd_deg = -1.0;
  assert_int_equal(rp_drop_config_check(&c, &err), RP_EDOM);
  rp_drop_config_default(&c);
  c.elevation_deg = 91.0;
  assert_int_equal(rp_drop_config_check(&c, &err), RP_EDOM);
  rp_drop_config_default(&c);
  c.axis_ratio_fixed = 0.1;
  assert_int_equal(rp_drop_config_check(&c, &err), RP_EDOM);
  rp_drop_config_default(&c);
  c.canting_model = RP_CANTING_3D;
  c.canting_approx = 1;
  assert_int_equal(rp_drop_config_check(&c, &err), RP_EINVAL);

  rp_drop_config_default(&c);
  rp_drop_ws *ws = rp_drop_ws_alloc(&c);
  rp_drop_result r;
  assert_int_equal(rp_drop_eval(ws, 0.0, &r, &err), RP_EDOM);
  assert_int_equal(rp_drop_eval(ws, -1.0, &r, &err), RP_EDOM);
  assert_int_equal(rp_drop_eval(ws, 10.5, &r, &err), RP_EDOM);
  assert_int_equal(rp_drop_eval(ws, NAN, &r, &err), RP_EDOM);
  assert_non_null(strstr(err.msg, "diameter"));
  rp_drop_ws_free(ws);

  /* a config that fails the check gets no workspace (it would average with NaN
   * weights) */
  rp_drop_config_default(&c);
  c.canting_sd_deg = NAN;
  assert_null(rp_drop_ws_alloc(&c));
  rp_drop_config_default(&c);
  c.elevation_deg = NAN;
  assert_null(rp_drop_ws_alloc(&c));
  assert_null(rp_drop_ws_alloc(NULL));

  rp_drop_config_default(&c);
  c.method = RP_METHOD_MIE; /* default shape is not a sphere */
  ws = rp_drop_ws_alloc(&c);
  assert_int_equal(rp_drop_eval(ws, 3.0, &r, &err), RP_EINVAL);
  assert_non_null(strstr(err.msg, "spheres only"));
  rp_drop_ws_free(ws);
  rp_drop_ws_free(NULL);
}

int main(void) {
  rp_test_init();
  const struct CMUnitTest tests[] = {
      cmocka_unit_test(test_radar_vectors_are_right_handed_and_orthonormal),
      cmocka_unit_test(test_sphere_backscatter_hh_equals_vv_and_no_cross_polar),
      cmocka_unit_test(test_mie_and_tmatrix_agree_for_a_sphere),
      cmocka_unit_test(test_zero_canting_reproduces_fixed_orientation),
      cmocka_unit_test(test_oblate_drop_signs_zdr_kdp_positive),
      cmocka_unit_test(test_canting_lowers_zdr_and_creates_cross_polar),
      cmocka_unit_test(test_angular_moments_equal_quadrature_for_planar_canting),
      cmocka_unit_test(test_angular_moments_approximate_quadrature_at_elevation),
      cmocka_unit_test(test_3d_canting_quadrature_matches_adaptive_reference),
      cmocka_unit_test(test_3d_canting_density_folds_onto_the_opposite_axis_only),
      cmocka_unit_test(test_band_names_and_frequencies),
      cmocka_unit_test(test_bad_config_and_diameter_are_refused),
  };
  return cmocka_run_group_tests_name("drop", tests, NULL, NULL);
}
