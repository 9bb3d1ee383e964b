/* test_rayleigh.c — Rayleigh (electrostatic) spheroid: depolarisation factors,
 * polarisabilities, amplitude matrix conventions. */
#include "rp_test.h"

#include <complex.h>
#include <string.h>

#include <gsl/gsl_integration.h>
#include <gsl/gsl_sf_ellint.h>

#include "rainprint/rayleigh.h"
#include "rainprint/scatter.h"

/* NaN, infinity as double (the libc macros are float: keeps -Wdouble-promotion quiet
 * under clang); cx(re, im) builds a double complex without CMPLX (absent in clang's
 * glibc view), exact for finite parts. */
#define D_NAN ((double)NAN)
#define D_INF ((double)INFINITY)
static inline double complex cx(double re, double im) { return re + im * (double complex)I; }

/* A water-like permittivity (about 10 C, 5.6 GHz) used where only a lossy dielectric
 * is needed; the value is arbitrary, not a reference. */
#define EPS_W (71.0 + 29.0 * (double complex)I)

static void depol(double r, double *la, double *lb) {
  rp_error err = {0};
  assert_int_equal(rp_rayleigh_depolarization(r, la, lb, &err), RP_OK);
}

static rp_rayleigh_spheroid spheroid(double d_mm, double r, double lambda_mm,
                                     double complex eps) {
  rp_rayleigh_spheroid s;
  rp_error err = {0};
  assert_int_equal(rp_rayleigh_spheroid_init(&s, d_mm, r, lambda_mm, eps, &err), RP_OK);
  return s;
}

/* Semi-axes of an equal-volume sphere of radius 1: a = r^(-1/3), b = r^(2/3). */
typedef struct {
  double a2, b2, aj2;
} depol_integrand_par;

static double depol_integrand(double s, void *p) {
  const depol_integrand_par *q = p;
  return 1.0 / ((s + q->aj2) * (s + q->a2) * sqrt(s + q->b2));
}

/* Direct quadrature of the ellipsoid depolarisation integral (Bohren & Huffman 1983,
 * eq. 5.33, from memory): L_j = (a1 a2 a3 / 2) Int_0^inf ds / ((s + a_j^2)
 * sqrt((s+a1^2)(s+a2^2)(s+a3^2))), here a1 = a2 = a, a3 = b so the root becomes
 * (s + a^2) sqrt(s + b^2). Sphere check: (1/2) Int (s+1)^(-5/2) ds = 1/3. */
static double depol_quadrature(double r, int symmetry_axis) {
  const double a = pow(r, -1.0 / 3.0), b = pow(r, 2.0 / 3.0);
  depol_integrand_par par = {a * a, b * b, symmetry_axis ? b * b : a * a};
  gsl_function fn = {depol_integrand, &par};
  gsl_integration_workspace *w = gsl_integration_workspace_alloc(2000);
  double val = 0.0, abserr = 0.0;
  const int st = gsl_integration_qagiu(&fn, 0.0, 0.0, 1e-12, 2000, w, &val, &abserr);
  gsl_integration_workspace_free(w);
  assert_int_equal(st, GSL_SUCCESS);
  return 0.5 * a * a * b * val;
}

/* The same integral as Carlson's symmetric elliptic integral:
 * L_j = (a1 a2 a3 / 3) R_D(x, y, a_j^2), x, y the other two squared semi-axes
 * (R_D(x,y,z) = (3/2) Int_0^inf dt / ((t+z)^(3/2) sqrt((t+x)(t+y)))), evaluated
 * with GSL's gsl_sf_ellint_RD (general-purpose reference library). */
static double depol_carlson(double r, int symmetry_axis) {
  const double a = pow(r, -1.0 / 3.0), b = pow(r, 2.0 / 3.0);
  gsl_sf_result res;
  const int st = symmetry_axis
                     ? gsl_sf_ellint_RD_e(a * a, a * a, b * b, GSL_PREC_DOUBLE, &res)
                     : gsl_sf_ellint_RD_e(a * a, b * b, a * a, GSL_PREC_DOUBLE, &res);
  assert_int_equal(st, GSL_SUCCESS);
  return a * a * b / 3.0 * res.val;
}

static const double RATIOS[] = {1e-3, 0.01, 0.1, 0.3, 0.5, 0.56, 0.7, 0.9, 0.9486,
                                0.9488, 0.97, 0.999, 0.999999, 1.000001, 1.001, 1.03,
                                1.0540, 1.0542, 1.2, 2.0, 5.0, 30.0, 1e3};
#define N_RATIOS (sizeof RATIOS / sizeof RATIOS[0])

/* Sphere: L = 1/3 exactly, and continuously so on either side (series branch);
 * 1e-12 absolute (closed form). */
static void test_rayleigh_sphere_depolarization_is_one_third(void **state) {
  (void)state;
  double la, lb;
  depol(1.0, &la, &lb);
  assert_close(la, 1.0 / 3.0, 0.0, 1e-15);
  assert_close(lb, 1.0 / 3.0, 0.0, 1e-15);
  depol(1.0 - 1e-9, &la, &lb);
  assert_close(la, 1.0 / 3.0, 0.0, 1e-9);
  assert_close(lb, 1.0 / 3.0, 0.0, 1e-9);
  depol(1.0 + 1e-9, &la, &lb);
  assert_close(la, 1.0 / 3.0, 0.0, 1e-9);
  assert_close(lb, 1.0 / 3.0, 0.0, 1e-9);
}

/* 2 L_a + L_b = 1 (Bohren & Huffman §5.3). L_a and L_b come from separate closed
 * forms outside the series region, so this checks them against each other. 1e-12. */
static void test_rayleigh_depolarization_sum_rule(void **state) {
  (void)state;
  for (size_t i = 0; i < N_RATIOS; i++) {
    double la, lb;
    depol(RATIOS[i], &la, &lb);
    assert_close(2.0 * la + lb, 1.0, 0.0, 1e-12);
  }
}

/* Each factor against direct numerical integration (GSL qagiu, requested 1e-12
 * relative); 1e-8 leaves a margin for the semi-infinite range's slowly decaying tail
 * near the disc and needle limits (the quadrature's reported error is far smaller). */
static void test_rayleigh_depolarization_matches_quadrature(void **state) {
  (void)state;
  for (size_t i = 0; i < N_RATIOS; i++) {
    double la, lb;
    depol(RATIOS[i], &la, &lb);
    assert_close(la, depol_quadrature(RATIOS[i], 0), 1e-8, 0.0);
    assert_close(lb, depol_quadrature(RATIOS[i], 1), 1e-8, 0.0);
  }
}

/* Each factor against Carlson's R_D (GSL): closed forms/series are good to about
 * 1e-15; 1e-12 relative leaves room for R_D's own error. */
static void test_rayleigh_depolarization_matches_carlson_rd(void **state) {
  (void)state;
  for (size_t i = 0; i < N_RATIOS; i++) {
    double la, lb;
    depol(RATIOS[i], &la, &lb);
    assert_close(la, depol_carlson(RATIOS[i], 0), 1e-12, 0.0);
    assert_close(lb, depol_carlson(RATIOS[i], 1), 1e-12, 0.0);
  }
}

/* Oblate: the short symmetry axis depolarises most (L_b > 1/3 > L_a); prolate the
 * reverse. Thin disc (r -> 0): L_b -> 1 - (pi/2) r (Landau & Lifshitz, Electrodynamics
 * of Continuous Media §4, from memory); the next term, +2 r^2, worked out here from the
 * oblate closed form, sets the tolerance 2.5 r^2. Thin needle (r -> inf):
 * L_b -> (ln 2r - 1)/r^2 (same source, from memory), relative error ~ 1/r^2 * ln terms;
 * tolerance 1e-5 relative at r = 1000. */
static void test_rayleigh_disc_and_needle_limits(void **state) {
  (void)state;
  double la, lb;
  depol(0.5, &la, &lb);
  assert_true(lb > 1.0 / 3.0 && la < 1.0 / 3.0);
  depol(2.0, &la, &lb);
  assert_true(lb < 1.0 / 3.0 && la > 1.0 / 3.0);
  const double rd = 1e-3;
  depol(rd, &la, &lb);
  assert_close(lb, 1.0 - M_PI / 2.0 * rd, 0.0, 2.5 * rd * rd);
  assert_close(la, M_PI / 4.0 * rd, 0.0, 1.25 * rd * rd);
  const double rn = 1e3;
  depol(rn, &la, &lb);
  assert_close(lb, (log(2.0 * rn) - 1.0) / (rn * rn), 1e-5, 0.0);
  assert_close(la, 0.5, 0.0, 1e-5);
}

/* Sphere limit of the amplitude: f = k^2 (D/2)^3 K (physics notes §3; Bohren & Huffman
 * §5.2), K = (eps-1)/(eps+2), for forward and backward scattering. In the theta/phi
 * bases of scatter.h (beam along +x: theta-hat = -z, phi-hat = +y; back along -x:
 * theta-hat = -z, phi-hat = -y): forward s = diag(f, f), back s = diag(f, -f).
 * Converted to the radar's fixed h = y, v = z (backscatter alignment): f_hh = f_vv = f.
 * 1e-12 relative: closed form. */
static void test_rayleigh_sphere_amplitude_equals_k2_a3_K(void **state) {
  (void)state;
  const double d = 2.0, lambda = 53.5;
  const rp_rayleigh_spheroid s = spheroid(d, 1.0, lambda, EPS_W);
  const double k = 2.0 * M_PI / lambda;
  const double complex f = k * k * pow(d / 2.0, 3) * (EPS_W - 1.0) / (EPS_W + 2.0);
  const double kx[3] = {1.0, 0.0, 0.0}, kmx[3] = {-1.0, 0.0, 0.0};
  double complex sf[2][2], sb[2][2];
  rp_rayleigh_amplitude(&s, kx, kx, sf);
  rp_rayleigh_amplitude(&s, kx, kmx, sb);
  assert_close(creal(sf[0][0]), creal(f), 1e-12, 0.0);
  assert_close(cimag(sf[0][0]), cimag(f), 1e-12, 0.0);
  assert_close(creal(sf[1][1]), creal(f), 1e-12, 0.0);
  assert_close(cimag(sf[1][1]), cimag(f), 1e-12, 0.0);
  assert_close(cabs(sf[0][1]) + cabs(sf[1][0]), 0.0, 0.0, 1e-15 * cabs(f));
  assert_close(creal(sb[0][0]), creal(f), 1e-12, 0.0);
  assert_close(creal(sb[1][1]), -creal(f), 1e-12, 0.0);
  assert_close(cimag(sb[1][1]), -cimag(f), 1e-12, 0.0);
  /* Backscatter alignment: f_pq = sum_ab (p . e_a(k_sca)) s_ab (e_b(k_inc) . q). */
  const double h[3] = {0.0, 1.0, 0.0}, v[3] = {0.0, 0.0, 1.0};
  double ti[3], pi_[3], ts[3], ps[3];
  rp_scatter_basis(kx, ti, pi_);
  rp_scatter_basis(kmx, ts, ps);
  const double *ei[2] = {ti, pi_}, *es[2] = {ts, ps};
  double complex fhh = 0.0, fvv = 0.0;
  for (int a = 0; a < 2; a++)
    for (int b = 0; b < 2; b++) {
      double hs = 0.0, hi = 0.0, vs = 0.0, vi = 0.0;
      for (int c = 0; c < 3; c++) {
        hs += h[c] * es[a][c];
        hi += ei[b][c] * h[c];
        vs += v[c] * es[a][c];
        vi += ei[b][c] * v[c];
      }
      fhh += hs * sb[a][b] * hi;
      fvv += vs * sb[a][b] * vi;
    }
  assert_close(creal(fhh), creal(f), 1e-12, 0.0);
  assert_close(cimag(fhh), cimag(f), 1e-12, 0.0);
  assert_close(creal(fvv), creal(f), 1e-12, 0.0);
  assert_close(cimag(fvv), cimag(f), 1e-12, 0.0);
}

/* Polarisabilities equal V (eps-1)/(1 + L (eps-1)) with L from the independent Carlson
 * evaluation (1e-12 relative). */
static void test_rayleigh_polarisability_formula(void **state) {
  (void)state;
  const double d = 4.0, r = 0.75;
  const rp_rayleigh_spheroid s = spheroid(d, r, 32.0, EPS_W);
  const double v = M_PI * d * d * d / 6.0;
  const double complex aa = v * (EPS_W - 1.0) / (1.0 + depol_carlson(r, 0) * (EPS_W - 1.0));
  const double complex ab = v * (EPS_W - 1.0) / (1.0 + depol_carlson(r, 1) * (EPS_W - 1.0));
  assert_close(creal(s.alpha_a_mm3), creal(aa), 1e-12, 0.0);
  assert_close(cimag(s.alpha_a_mm3), cimag(aa), 1e-12, 0.0);
  assert_close(creal(s.alpha_b_mm3), creal(ab), 1e-12, 0.0);
  assert_close(cimag(s.alpha_b_mm3), cimag(ab), 1e-12, 0.0);
  assert_close(s.k_per_mm, 2.0 * M_PI / 32.0, 1e-15, 0.0);
}

/* An oblate drop viewed broadside backscatters more in h than in v: |f_hh| > |f_vv|
 * (positive ZDR, the basis of polarimetric rain measurement); a prolate one the
 * reverse. |f_hh/f_vv| = |alpha_a/alpha_b| (1e-12). */
static void test_rayleigh_oblate_broadside_hh_exceeds_vv(void **state) {
  (void)state;
  const double kx[3] = {1.0, 0.0, 0.0}, kmx[3] = {-1.0, 0.0, 0.0};
  double complex sb[2][2];
  const rp_rayleigh_spheroid ob = spheroid(4.0, 0.75, 107.0, EPS_W);
  rp_rayleigh_amplitude(&ob, kx, kmx, sb);
  const double fhh = cabs(sb[1][1]), fvv = cabs(sb[0][0]);
  assert_true(fhh > fvv);
  assert_close(fhh / fvv, cabs(ob.alpha_a_mm3 / ob.alpha_b_mm3), 1e-12, 0.0);
  const rp_rayleigh_spheroid pr = spheroid(4.0, 1.3, 107.0, EPS_W);
  rp_rayleigh_amplitude(&pr, kx, kmx, sb);
  assert_true(cabs(sb[1][1]) < cabs(sb[0][0]));
}

/* Reciprocity of the amplitude matrix (Mishchenko, Travis & Lacis 2002, ch. 5, from
 * memory; here it follows from the symmetric dyadic and theta-hat(-n) = theta-hat(n),
 * phi-hat(-n) = -phi-hat(n)): S(k_i' = -k_s, k_s' = -k_i) = [[S00, -S10], [-S01, S11]].
 * Generic, non-axial directions; 1e-12 relative to max |S|. */
static void test_rayleigh_amplitude_is_reciprocal(void **state) {
  (void)state;
  const rp_rayleigh_spheroid s = spheroid(3.0, 0.6, 32.0, EPS_W);
  const double dirs[4][3] = {{0.48, 0.6, 0.64}, {-0.36, 0.48, -0.8},
                             {0.0, -0.6, 0.8}, {0.8, -0.36, -0.48}};
  for (int i = 0; i < 4; i++) {
    for (int j = 0; j < 4; j++) {
      const double *ki = dirs[i], *ks = dirs[j];
      const double mki[3] = {-ki[0], -ki[1], -ki[2]}, mks[3] = {-ks[0], -ks[1], -ks[2]};
      double complex sa[2][2], sr[2][2];
      rp_rayleigh_amplitude(&s, ki, ks, sa);
      rp_rayleigh_amplitude(&s, mks, mki, sr);
      double big = 0.0;
      for (int p = 0; p < 2; p++)
        for (int q = 0; q < 2; q++) big = fmax(big, cabs(sa[p][q]));
      assert_close(cabs(sr[0][0] - sa[0][0]), 0.0, 0.0, 1e-12 * big);
      assert_close(cabs(sr[1][1] - sa[1][1]), 0.0, 0.0, 1e-12 * big);
      assert_close(cabs(sr[0][1] + sa[1][0]), 0.0, 0.0, 1e-12 * big);
      assert_close(cabs(sr[1][0] + sa[0][1]), 0.0, 0.0, 1e-12 * big);
    }
  }
}

/* Axial symmetry: rotating both directions about the symmetry axis z leaves the
 * amplitude matrix unchanged (the theta/phi bases rotate with them). 1e-12. */
static void test_rayleigh_amplitude_invariant_under_rotation_about_axis(void **state) {
  (void)state;
  const rp_rayleigh_spheroid s = spheroid(3.0, 0.6, 32.0, EPS_W);
  const double ki[3] = {0.48, 0.6, 0.64}, ks[3] = {-0.36, 0.48, -0.8};
  double complex s0[2][2], s1[2][2];
  rp_rayleigh_amplitude(&s, ki, ks, s0);
  const double c = cos(1.1), sn = sin(1.1);
  const double kir[3] = {c * ki[0] - sn * ki[1], sn * ki[0] + c * ki[1], ki[2]};
  const double ksr[3] = {c * ks[0] - sn * ks[1], sn * ks[0] + c * ks[1], ks[2]};
  rp_rayleigh_amplitude(&s, kir, ksr, s1);
  for (int p = 0; p < 2; p++)
    for (int q = 0; q < 2; q++) assert_close(cabs(s1[p][q] - s0[p][q]), 0.0, 0.0, 1e-12 * cabs(s0[0][0]));
}

static void test_rayleigh_depolarization_errors(void **state) {
  (void)state;
  double la = -1.0, lb = -1.0;
  rp_error err = {0};
  assert_int_equal(rp_rayleigh_depolarization(D_NAN, &la, &lb, &err), RP_EINVAL);
  assert_int_equal(rp_rayleigh_depolarization(D_INF, &la, &lb, &err), RP_EINVAL);
  assert_int_equal(rp_rayleigh_depolarization(0.0, &la, &lb, &err), RP_EDOM);
  assert_non_null(strstr(err.msg, "axis ratio 0 outside"));
  assert_int_equal(rp_rayleigh_depolarization(-0.5, &la, &lb, &err), RP_EDOM);
  assert_int_equal(rp_rayleigh_depolarization(2e3, &la, &lb, &err), RP_EDOM);
  assert_int_equal(rp_rayleigh_depolarization(0.5, NULL, &lb, &err), RP_EINVAL);
  assert_int_equal(rp_rayleigh_depolarization(0.5, &la, NULL, &err), RP_EINVAL);
  assert_close(la, -1.0, 0.0, 0.0);
  assert_close(lb, -1.0, 0.0, 0.0);
}

static void test_rayleigh_init_errors(void **state) {
  (void)state;
  rp_rayleigh_spheroid s = {-1.0, 0.0, 0.0};
  rp_error err = {0};
  assert_int_equal(rp_rayleigh_spheroid_init(NULL, 2.0, 0.9, 32.0, EPS_W, &err), RP_EINVAL);
  assert_int_equal(rp_rayleigh_spheroid_init(&s, D_NAN, 0.9, 32.0, EPS_W, &err), RP_EINVAL);
  assert_int_equal(rp_rayleigh_spheroid_init(&s, 2.0, D_NAN, 32.0, EPS_W, &err), RP_EINVAL);
  assert_int_equal(rp_rayleigh_spheroid_init(&s, 2.0, 0.9, D_INF, EPS_W, &err), RP_EINVAL);
  assert_int_equal(rp_rayleigh_spheroid_init(&s, 2.0, 0.9, 32.0, cx(D_NAN, 1.0), &err),
                   RP_EINVAL);
  assert_int_equal(rp_rayleigh_spheroid_init(&s, 2.0, 0.9, 32.0, cx(71.0, -29.0), &err),
                   RP_EINVAL);
  assert_non_null(strstr(err.msg, "Im < 0"));
  assert_int_equal(rp_rayleigh_spheroid_init(&s, 0.0, 0.9, 32.0, EPS_W, &err), RP_EDOM);
  assert_int_equal(rp_rayleigh_spheroid_init(&s, 12.0, 0.9, 32.0, EPS_W, &err), RP_EDOM);
  assert_non_null(strstr(err.msg, "diameter 12 mm outside (0, 10] mm"));
  assert_int_equal(rp_rayleigh_spheroid_init(&s, 2.0, 0.9, -32.0, EPS_W, &err), RP_EDOM);
  assert_int_equal(rp_rayleigh_spheroid_init(&s, 2.0, 0.0, 32.0, EPS_W, &err), RP_EDOM);
  /* eps = -2 is the sphere's resonance: 1 + (1/3)(-3) = 0. */
  assert_int_equal(rp_rayleigh_spheroid_init(&s, 2.0, 1.0, 32.0, -2.0, &err), RP_EDOM);
  assert_non_null(strstr(err.msg, "resonance"));
  assert_close(s.k_per_mm, -1.0, 0.0, 0.0);
}

int main(void) {
  rp_test_init();
  const struct CMUnitTest tests[] = {
      cmocka_unit_test(test_rayleigh_sphere_depolarization_is_one_third),
      cmocka_unit_test(test_rayleigh_depolarization_sum_rule),
      cmocka_unit_test(test_rayleigh_depolarization_matches_quadrature),
      cmocka_unit_test(test_rayleigh_depolarization_matches_carlson_rd),
      cmocka_unit_test(test_rayleigh_disc_and_needle_limits),
      cmocka_unit_test(test_rayleigh_sphere_amplitude_equals_k2_a3_K),
      cmocka_unit_test(test_rayleigh_polarisability_formula),
      cmocka_unit_test(test_rayleigh_oblate_broadside_hh_exceeds_vv),
      cmocka_unit_test(test_rayleigh_amplitude_is_reciprocal),
      cmocka_unit_test(test_rayleigh_amplitude_invariant_under_rotation_about_axis),
      cmocka_unit_test(test_rayleigh_depolarization_errors),
      cmocka_unit_test(test_rayleigh_init_errors),
  };
  return cmocka_run_group_tests_name("rayleigh", tests, NULL, NULL);
}
