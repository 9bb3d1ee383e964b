/* test_tmatrix.c — T-matrix (EBCM) for spheroids (src/scatter/tmatrix.c).
 *
 * Oracles: sphere = Mie (our Mie module, itself checked against a published example
 * and SciPy), the Rayleigh-Gans closed form for small spheroids (Bohren & Huffman
 * 1983 §5.3), the optical theorem for a lossless spheroid, reciprocity, symmetry and
 * the sign of the polarimetric differences for oblate drops.
 *
 * `test_tmatrix --dump-special` prints values of the internal special functions and
 * of the Mie sums for tests/ref_special_functions.py (SciPy) and exits.
 *
 * Permittivities below are illustrative literals of the size of liquid water's at S,
 * C and X band (not reference values); the checks do not depend on them. */
#include "rp_test.h"

#include <complex.h>
#include <string.h>

#include "rainprint/mie.h"
#include "rainprint/scatter.h"
#include "rainprint/tmatrix.h"
#include "scatter/special.h"

#include <gsl/gsl_integration.h>

#define F_S_GHZ 2.8
#define F_C_GHZ 5.6
#define F_X_GHZ 9.4

/* the imaginary unit as a double complex (I is float complex) */
static const double complex IU = CMPLX(0.0, 1.0);

static const double K_X[3] = {1.0, 0.0, 0.0}, K_MX[3] = {-1.0, 0.0, 0.0};

static int setup_ws(void **state) {
  rp_tmatrix_ws *ws = rp_tmatrix_ws_alloc(60);
  if (ws == NULL) return -1;
  *state = ws;
  return 0;
}

static int teardown_ws(void **state) {
  rp_tmatrix_ws_free(*state);
  return 0;
}

static double crel(double complex a, double complex b) { return cabs(a - b) / cabs(b); }

/* 3x3 dyadic F with E_s = F E_i (e^{ikr}/r), from the theta/phi amplitude matrix. */
static void dyadic(const rp_tmatrix_ws *ws, const double ki[3], const double ks[3],
                   double complex f[3][3]) {
  double complex s[2][2];
  double ti[3], pi_[3], ts[3], ps[3];
  rp_tmatrix_amplitude(ws, ki, ks, s);
  rp_scatter_basis(ki, ti, pi_);
  rp_scatter_basis(ks, ts, ps);
  for (int a = 0; a < 3; a++)
    for (int b = 0; b < 3; b++)
      f[a][b] = ts[a] * s[0][0] * ti[b] + ts[a] * s[0][1] * pi_[b] +
                ps[a] * s[1][0] * ti[b] + ps[a] * s[1][1] * pi_[b];
}

/* e_a . F . e_b */
static double complex project(const double complex f[3][3], const double ea[3],
                              const double eb[3]) {
  double complex v = 0.0;
  for (int a = 0; a < 3; a++)
    for (int b = 0; b < 3; b++) v += ea[a] * f[a][b] * eb[b];
  return v;
}

static void cross(const double a[3], const double b[3], double c[3]) {
  c[0] = a[1] * b[2] - a[2] * b[1];
  c[1] = a[2] * b[0] - a[0] * b[2];
  c[2] = a[0] * b[1] - a[1] * b[0];
}

static void normalise(double v[3]) {
  const double n = sqrt(v[0] * v[0] + v[1] * v[1] + v[2] * v[2]);
  for (int i = 0; i < 3; i++) v[i] /= n;
}

static void unit(double theta_deg, double phi_deg, double v[3]) {
  const double t = theta_deg * M_PI / 180.0, p = phi_deg * M_PI / 180.0;
  v[0] = sin(t) * cos(p);
  v[1] = sin(t) * sin(p);
  v[2] = cos(t);
}

/* Deterministic pseudo-random unit vectors (64-bit LCG, Knuth's constants). */
static double lcg_uniform(unsigned long long *s) {
  *s = *s * 6364136223846793005ULL + 1442695040888963407ULL;
  return (double)(*s >> 11) / 9007199254740992.0;
}

static void random_unit(unsigned long long *s, double v[3]) {
  const double z = 2.0 * lcg_uniform(s) - 1.0, p = 2.0 * M_PI * lcg_uniform(s);
  const double r = sqrt(1.0 - z * z);
  v[0] = r * cos(p);
  v[1] = r * sin(p);
  v[2] = z;
}

/* ---- sphere = Mie ---------------------------------------------------------------- */

static void test_tmatrix_sphere_t_equals_minus_mie_coefficients(void **state) {
  rp_tmatrix_ws *ws = *state;
  rp_error err = {0};
  const struct {
    double f_ghz, d_mm;
    double complex eps;
  } cases[] = {{F_C_GHZ, 2.0, CMPLX(72.0, 22.0)},
               {F_C_GHZ, 6.0, CMPLX(72.0, 22.0)},
               {F_X_GHZ, 8.0, CMPLX(62.0, 30.0)}};
  for (size_t c = 0; c < sizeof cases / sizeof cases[0]; c++) {
    const double lam = rp_wavelength_mm(cases[c].f_ghz);
    const double complex m = csqrt(cases[c].eps);
    assert_int_equal(rp_tmatrix_solve(ws, cases[c].d_mm, 1.0, lam, m, NULL, &err), RP_OK);
    const int nmax = rp_tmatrix_nmax(ws);
    double complex a[64], b[64];
    assert_int_equal(rp_mie_coefficients(M_PI * cases[c].d_mm / lam, m, (size_t)nmax, a, b,
                                         &err), RP_OK);
    /* Mishchenko et al. (2002) ch. 5: a sphere has T11 = -b_n, T22 = -a_n and no
     * coupling. Gauss quadrature integrates the sphere's Legendre products exactly,
     * so only round-off separates the two (observed ~1e-15): 1e-10 relative, plus
     * 1e-15 |b_1| absolute for the tiny high-order coefficients. */
    for (int mm = 0; mm <= 1; mm++) {
      for (int n = 1; n <= nmax; n++) {
        const double abs_b = 1e-15 * cabs(b[0]), abs_a = 1e-15 * cabs(a[0]);
        assert_close(cabs(rp_tmatrix_element(ws, mm, n, n, 11) + b[n - 1]), 0.0, 0.0,
                     1e-10 * cabs(b[n - 1]) + abs_b);
        assert_close(cabs(rp_tmatrix_element(ws, mm, n, n, 22) + a[n - 1]), 0.0, 0.0,
                     1e-10 * cabs(a[n - 1]) + abs_a);
        for (int n2 = (mm > 1 ? mm : 1); n2 <= nmax; n2++) {
          if (n2 != n) {
            assert_close(cabs(rp_tmatrix_element(ws, mm, n, n2, 11)), 0.0, 0.0, abs_b);
            assert_close(cabs(rp_tmatrix_element(ws, mm, n, n2, 22)), 0.0, 0.0, abs_a);
          }
          if (mm > 0) {
            assert_close(cabs(rp_tmatrix_element(ws, mm, n, n2, 12)), 0.0, 0.0, abs_b);
            assert_close(cabs(rp_tmatrix_element(ws, mm, n, n2, 21)), 0.0, 0.0, abs_b);
          }
        }
      }
    }
  }
}

static void test_tmatrix_sphere_amplitudes_equal_mie(void **state) {
  rp_tmatrix_ws *ws = *state;
  rp_error err = {0};
  const double freqs[] = {F_S_GHZ, F_C_GHZ, F_X_GHZ};
  const double complex eps[] = {CMPLX(78.0, 10.0), CMPLX(72.0, 22.0), CMPLX(62.0, 30.0)};
  const double ds[] = {0.1, 0.5, 1.0, 2.0, 4.0, 6.0, 8.0};
  for (size_t f = 0; f < 3; f++) {
    const double lam = rp_wavelength_mm(freqs[f]);
    const double complex m = csqrt(eps[f]);
    for (size_t i = 0; i < sizeof ds / sizeof ds[0]; i++) {
      rp_mie_result mie;
      assert_int_equal(rp_mie_sphere_eval(ds[i], lam, m, &mie, &err), RP_OK);
      assert_int_equal(rp_tmatrix_solve(ws, ds[i], 1.0, lam, m, NULL, &err), RP_OK);
      double complex fw[2][2], bk[2][2];
      rp_tmatrix_amplitude(ws, K_X, K_X, fw);
      rp_tmatrix_amplitude(ws, K_X, K_MX, bk);
      /* Complex equality, phase included, to 1e-6 relative (the task's requirement;
       * the T-matrix stops at 1e-7 changes, Mie is converged far beyond). In the
       * theta/phi basis at broadside: S_tt = S_pp = f_fwd forward; S_tt = f_back and
       * S_pp = -f_back backward (mie.h: f = i S1 / k, backscatter alignment). */
      assert_close(crel(fw[0][0], mie.f_fwd_mm), 0.0, 0.0, 1e-6);
      assert_close(crel(fw[1][1], mie.f_fwd_mm), 0.0, 0.0, 1e-6);
      assert_close(crel(bk[0][0], mie.f_back_mm), 0.0, 0.0, 1e-6);
      assert_close(crel(bk[1][1], -mie.f_back_mm), 0.0, 0.0, 1e-6);
      /* no depolarisation by a sphere at broadside (exact zeros up to round-off) */
      assert_close(cabs(fw[0][1]) + cabs(fw[1][0]) + cabs(bk[0][1]) + cabs(bk[1][0]), 0.0,
                   0.0, 1e-12 * cabs(mie.f_back_mm));
    }
  }
}

static void test_tmatrix_sphere_equals_mie_at_general_angles(void **state) {
  rp_tmatrix_ws *ws = *state;
  rp_error err = {0};
  /* Off-axis incidence and arbitrary scattering directions exercise every m of the
   * expansion. Bohren & Huffman (1983) eq. 3.12/4.74: in the scattering-plane basis
   * (e_perp = k_i x k_s normalised, e_par = e_perp x k) f_perp,perp = i S1 / k and
   * f_par,par = i S2 / k, cross terms zero. Tolerance 1e-6 of max(|S1|, |S2|) / k as
   * in the broadside test. */
  const double lam = rp_wavelength_mm(F_X_GHZ), k = 2.0 * M_PI / lam;
  const double complex m = csqrt(CMPLX(62.0, 30.0));
  const double d = 6.0, x = M_PI * d / lam;
  assert_int_equal(rp_tmatrix_solve(ws, d, 1.0, lam, m, NULL, &err), RP_OK);
  const size_t nmax = rp_mie_nmax(x);
  double complex a[64], b[64];
  assert_int_equal(rp_mie_coefficients(x, m, nmax, a, b, &err), RP_OK);
  double ki[3];
  unit(30.0, 40.0, ki);
  const double dirs[][2] = {{10.0, 0.0}, {75.0, 120.0}, {120.0, -60.0}, {170.0, 200.0},
                            {90.0, 90.0}};
  for (size_t i = 0; i < sizeof dirs / sizeof dirs[0]; i++) {
    double ks[3], ep[3], epi[3], eps_[3];
    unit(dirs[i][0], dirs[i][1], ks);
    cross(ki, ks, ep);
    normalise(ep);
    cross(ep, ki, epi);
    cross(ep, ks, eps_);
    const double cosang = ki[0] * ks[0] + ki[1] * ks[1] + ki[2] * ks[2];
    double complex s1, s2, f[3][3];
    rp_mie_s12(a, b, nmax, cosang, &s1, &s2);
    dyadic(ws, ki, ks, f);
    const double scale = 1e-6 * fmax(cabs(s1), cabs(s2)) / k;
    assert_close(cabs(project(f, ep, ep) - IU * s1 / k), 0.0, 0.0, scale);
    assert_close(cabs(project(f, eps_, epi) - IU * s2 / k), 0.0, 0.0, scale);
    assert_close(cabs(project(f, ep, epi)), 0.0, 0.0, scale);
    assert_close(cabs(project(f, eps_, ep)), 0.0, 0.0, scale);
  }
}

static void test_tmatrix_sphere_backscatter_hh_equals_vv(void **state) {
  rp_tmatrix_ws *ws = *state;
  rp_error err = {0};
  /* docs/method.md §1 (backscatter alignment): a sphere has f_hh(pi) = f_vv(pi) and
   * f_hv = f_vh = 0 for any incidence. The T-matrix of a sphere is diagonal, so the
   * identity holds to round-off: 1e-12 relative. Incidence at broadside, 30 deg
   * elevation, 30 deg from the symmetry axis (elevation 60 deg) and along the axis;
   * h horizontal, v = k x h. */
  assert_int_equal(rp_tmatrix_solve(ws, 6.0, 1.0, rp_wavelength_mm(F_C_GHZ),
                                    csqrt(CMPLX(72.0, 22.0)), NULL, &err), RP_OK);
  const double elev_deg[] = {0.0, 30.0, 60.0, 90.0};
  for (size_t i = 0; i < sizeof elev_deg / sizeof elev_deg[0]; i++) {
    const double e = elev_deg[i] * M_PI / 180.0;
    const double ki[3] = {cos(e), 0.0, sin(e)}, kb[3] = {-ki[0], -ki[1], -ki[2]};
    const double h[3] = {0.0, 1.0, 0.0};
    double v[3];
    cross(ki, h, v);
    double complex f[3][3];
    dyadic(ws, ki, kb, f);
    const double complex hh = project(f, h, h), vv = project(f, v, v);
    assert_close(crel(vv, hh), 0.0, 0.0, 1e-12);
    assert_close(cabs(project(f, h, v)) + cabs(project(f, v, h)), 0.0, 0.0,
                 1e-12 * cabs(hh));
  }
}

/* ---- non-spherical particles ------------------------------------------------------ */

/* Depolarisation factor along the symmetry axis, Bohren & Huffman (1983) §5.3 (also
 * docs/method.md §5): oblate (r < 1) e^2 = 1 - r^2, g = sqrt((1-e^2)/e^2),
 * L_a = g/(2e^2) (pi/2 - atan g) - g^2/2, L_b = 1 - 2 L_a; prolate (r > 1)
 * e^2 = 1 - 1/r^2, L_b = (1-e^2)/e^2 (-1 + ln((1+e)/(1-e)) / (2e)). */
static double depol_b(double r) {
  if (r < 1.0) {
    const double e2 = 1.0 - r * r, g = sqrt((1.0 - e2) / e2);
    const double la = g / (2.0 * e2) * (M_PI / 2.0 - atan(g)) - 0.5 * g * g;
    return 1.0 - 2.0 * la;
  }
  const double e2 = 1.0 - 1.0 / (r * r), e = sqrt(e2);
  return (1.0 - e2) / e2 * (-1.0 + log((1.0 + e) / (1.0 - e)) / (2.0 * e));
}

static void test_tmatrix_small_spheroids_match_rayleigh_gans(void **state) {
  rp_tmatrix_ws *ws = *state;
  rp_error err = {0};
  /* Rayleigh-Gans (Bohren & Huffman 1983 §5.3; docs/method.md §5):
   * f_j = k^2 alpha_j / (4 pi), alpha_j = V (eps-1) / (1 + L_j (eps-1)), V = pi D^3/6,
   * h along a (L_a), v along b (L_b), forward and back (backscatter alignment).
   * D = 0.2 mm at S band: size corrections O((|m| k a)^2) ~ 1e-4 (observed), so the
   * task's 1e-3 relative holds with margin. */
  const double lam = rp_wavelength_mm(F_S_GHZ), k = 2.0 * M_PI / lam, d = 0.2;
  const double complex eps = CMPLX(78.0, 10.0);
  const double ratios[] = {0.7, 1.5};
  for (size_t i = 0; i < 2; i++) {
    const double r = ratios[i];
    assert_int_equal(rp_tmatrix_solve(ws, d, r, lam, csqrt(eps), NULL, &err), RP_OK);
    const double lb = depol_b(r), la = 0.5 * (1.0 - lb);
    const double v = M_PI * d * d * d / 6.0;
    const double complex fh = k * k / (4.0 * M_PI) * v * (eps - 1.0) / (1.0 + la * (eps - 1.0));
    const double complex fv = k * k / (4.0 * M_PI) * v * (eps - 1.0) / (1.0 + lb * (eps - 1.0));
    double complex fw[2][2], bk[2][2];
    rp_tmatrix_amplitude(ws, K_X, K_X, fw);
    rp_tmatrix_amplitude(ws, K_X, K_MX, bk);
    /* broadside: h = y = phi-hat (S_pp), v = z = -theta-hat (S_tt, sign squared);
     * backscatter alignment: f_hh(pi) = -S_pp(pi), f_vv(pi) = S_tt(pi) */
    assert_close(crel(fw[1][1], fh), 0.0, 0.0, 1e-3);
    assert_close(crel(fw[0][0], fv), 0.0, 0.0, 1e-3);
    assert_close(crel(-bk[1][1], fh), 0.0, 0.0, 1e-3);
    assert_close(crel(bk[0][0], fv), 0.0, 0.0, 1e-3);
  }
}

static void test_tmatrix_lossless_spheroid_obeys_optical_theorem(void **state) {
  rp_tmatrix_ws *ws = *state;
  rp_error err = {0};
  /* Optical theorem (scatter.h; Mishchenko et al. 2002 ch. 4): for real m,
   * C_ext = (4 pi / k) Im S_pp(k, k) equals C_sca = int |S_pp|^2 + |S_tp|^2 dOmega
   * (likewise for theta polarisation). The integral uses 64-point Gauss-Legendre in
   * cos(theta) and a 128-point trapezoid in phi (spectrally accurate for the smooth,
   * band-limited integrand; error << 1e-9). Tolerance 1e-6: the T-matrix is
   * truncated at 1e-7 amplitude changes (observed agreement ~1e-10). */
  const struct {
    double d_mm, r, lam_mm, m;
  } cases[] = {{3.0, 0.7, 5.0, 1.8}, {2.0, 1.6, 6.0, 3.0}};
  double u[64], w[64];
  {
    gsl_integration_glfixed_table *t = gsl_integration_glfixed_table_alloc(64);
    assert_non_null(t);
    for (size_t i = 0; i < 64; i++)
      assert_int_equal(gsl_integration_glfixed_point(-1.0, 1.0, i, &u[i], &w[i], t),
                       GSL_SUCCESS);
    gsl_integration_glfixed_table_free(t);
  }
  for (size_t c = 0; c < 2; c++) {
    assert_int_equal(rp_tmatrix_solve(ws, cases[c].d_mm, cases[c].r, cases[c].lam_mm,
                                      cases[c].m, NULL, &err), RP_OK);
    const double k = 2.0 * M_PI / cases[c].lam_mm;
    double ki[3];
    unit(50.0, 20.0, ki);
    double complex s0[2][2];
    rp_tmatrix_amplitude(ws, ki, ki, s0);
    double csca_t = 0.0, csca_p = 0.0;
    const int nphi = 128;
    for (size_t i = 0; i < 64; i++) {
      const double st = sqrt(1.0 - u[i] * u[i]);
      for (int j = 0; j < nphi; j++) {
        const double p = 2.0 * M_PI * j / nphi;
        const double ks[3] = {st * cos(p), st * sin(p), u[i]};
        double complex s[2][2];
        rp_tmatrix_amplitude(ws, ki, ks, s);
        const double wt = w[i] * 2.0 * M_PI / nphi;
        csca_t += wt * (pow(cabs(s[0][0]), 2) + pow(cabs(s[1][0]), 2));
        csca_p += wt * (pow(cabs(s[0][1]), 2) + pow(cabs(s[1][1]), 2));
      }
    }
    assert_close(4.0 * M_PI / k * cimag(s0[0][0]), csca_t, 1e-6, 0.0);
    assert_close(4.0 * M_PI / k * cimag(s0[1][1]), csca_p, 1e-6, 0.0);
  }
}

static void test_tmatrix_amplitudes_are_reciprocal(void **state) {
  rp_tmatrix_ws *ws = *state;
  rp_error err = {0};
  /* Reciprocity (Saxon 1955; Mishchenko et al. 2002 ch. 5 — equation number not
   * checked, from memory): the dyadic obeys F(-k_i, -k_s) = F(k_s, k_i)^T. In the
   * theta/phi basis of scatter.h, where theta-hat(-k) = theta-hat(k) and
   * phi-hat(-k) = -phi-hat(k) off the axis, this reads
   *   S(-k_i, -k_s) = [[S_tt, -S_pt], [-S_tp, S_pp]](k_s, k_i).
   * Both forms are checked for 20 random direction pairs on an absorbing oblate drop
   * at X band. Tolerance 1e-7 of max|F|: the truncation tolerance (observed ~3e-9). */
  assert_int_equal(rp_tmatrix_solve(ws, 5.0, 0.65, rp_wavelength_mm(F_X_GHZ),
                                    csqrt(CMPLX(62.0, 30.0)), NULL, &err), RP_OK);
  unsigned long long seed = 20240611ULL;
  for (int t = 0; t < 20; t++) {
    double ki[3], ks[3], mki[3], mks[3];
    random_unit(&seed, ki);
    random_unit(&seed, ks);
    for (int i = 0; i < 3; i++) mki[i] = -ki[i], mks[i] = -ks[i];
    double complex f1[3][3], f2[3][3], s1[2][2], s2[2][2];
    dyadic(ws, ki, ks, f1);
    dyadic(ws, mks, mki, f2);
    double fbig = 0.0;
    for (int a = 0; a < 3; a++)
      for (int b = 0; b < 3; b++) fbig = fmax(fbig, cabs(f1[a][b]));
    for (int a = 0; a < 3; a++)
      for (int b = 0; b < 3; b++)
        assert_close(cabs(f2[b][a] - f1[a][b]), 0.0, 0.0, 1e-7 * fbig);
    rp_tmatrix_amplitude(ws, ki, ks, s1);
    rp_tmatrix_amplitude(ws, mks, mki, s2);
    assert_close(cabs(s2[0][0] - s1[0][0]), 0.0, 0.0, 1e-7 * fbig);
    assert_close(cabs(s2[1][1] - s1[1][1]), 0.0, 0.0, 1e-7 * fbig);
    assert_close(cabs(s2[0][1] + s1[1][0]), 0.0, 0.0, 1e-7 * fbig);
    assert_close(cabs(s2[1][0] + s1[0][1]), 0.0, 0.0, 1e-7 * fbig);
  }
}

static void test_tmatrix_blocks_have_reciprocity_symmetry(void **state) {
  rp_tmatrix_ws *ws = *state;
  rp_error err = {0};
  /* Index form of reciprocity for a rotationally symmetric particle in this VSWF
   * normalisation (Mishchenko et al. 2002 ch. 5, from memory; it is consistent with
   * the amplitude-level test above): T11 and T22 symmetric in (n, n'),
   * T12_{n n'} = -T21_{n' n}. The EBCM T-matrix satisfies it only approximately
   * (truncation), observed ~1e-9 of max|T|; tolerance 1e-7 of max|T|. */
  assert_int_equal(rp_tmatrix_solve(ws, 5.0, 0.65, rp_wavelength_mm(F_X_GHZ),
                                    csqrt(CMPLX(62.0, 30.0)), NULL, &err), RP_OK);
  const int nmax = rp_tmatrix_nmax(ws);
  double tmax = 0.0;
  for (int m = 0; m <= nmax; m++)
    for (int n = (m > 1 ? m : 1); n <= nmax; n++)
      tmax = fmax(tmax, cabs(rp_tmatrix_element(ws, m, n, n, 22)));
  for (int m = 0; m <= nmax; m++) {
    for (int n = (m > 1 ? m : 1); n <= nmax; n++) {
      for (int n2 = (m > 1 ? m : 1); n2 <= nmax; n2++) {
        assert_close(cabs(rp_tmatrix_element(ws, m, n, n2, 11) -
                          rp_tmatrix_element(ws, m, n2, n, 11)), 0.0, 0.0, 1e-7 * tmax);
        assert_close(cabs(rp_tmatrix_element(ws, m, n, n2, 22) -
                          rp_tmatrix_element(ws, m, n2, n, 22)), 0.0, 0.0, 1e-7 * tmax);
        assert_close(cabs(rp_tmatrix_element(ws, m, n, n2, 12) +
                          rp_tmatrix_element(ws, m, n2, n, 21)), 0.0, 0.0, 1e-7 * tmax);
      }
    }
  }
  /* mirror symmetry: T11 vanishes for n + n' odd, T12 for n + n' even (exact zeros) */
  assert_true(rp_tmatrix_element(ws, 1, 1, 2, 11) == 0.0);
  assert_true(rp_tmatrix_element(ws, 1, 1, 3, 12) == 0.0);
  assert_true(cabs(rp_tmatrix_element(ws, 1, 1, 3, 11)) > 0.0);
  assert_true(cabs(rp_tmatrix_element(ws, 1, 1, 2, 12)) > 0.0);
}

static void test_tmatrix_oblate_drop_gives_positive_kdp_and_zdr(void **state) {
  rp_tmatrix_ws *ws = *state;
  rp_error err = {0};
  /* docs/method.md §1 conventions: for an oblate drop (horizontal =
   * along the long axis a) Re f_hh(0) > Re f_vv(0) (KDP > 0) and |f_hh(pi)| >
   * |f_vv(pi)| (ZDR > 0). 3 mm drop, r = 0.8, S band. The relative differences are
   * ~10 % (Rayleigh-Gans), so a strict inequality with a 1 % margin is safe. */
  assert_int_equal(rp_tmatrix_solve(ws, 3.0, 0.8, rp_wavelength_mm(F_S_GHZ),
                                    csqrt(CMPLX(78.0, 10.0)), NULL, &err), RP_OK);
  double complex fw[2][2], bk[2][2];
  rp_tmatrix_amplitude(ws, K_X, K_X, fw);
  rp_tmatrix_amplitude(ws, K_X, K_MX, bk);
  const double complex fwd_hh = fw[1][1], fwd_vv = fw[0][0];
  const double complex back_hh = -bk[1][1], back_vv = bk[0][0];
  assert_true(creal(fwd_hh) > 1.01 * creal(fwd_vv));
  assert_true(cabs(back_hh) > 1.01 * cabs(back_vv));
  /* and a prolate particle reverses both signs */
  assert_int_equal(rp_tmatrix_solve(ws, 3.0, 1.25, rp_wavelength_mm(F_S_GHZ),
                                    csqrt(CMPLX(78.0, 10.0)), NULL, &err), RP_OK);
  rp_tmatrix_amplitude(ws, K_X, K_X, fw);
  rp_tmatrix_amplitude(ws, K_X, K_MX, bk);
  assert_true(creal(fw[1][1]) < 0.99 * creal(fw[0][0]));
  assert_true(cabs(bk[1][1]) < 0.99 * cabs(bk[0][0]));
}

static void test_tmatrix_axis_directions_are_continuous_limits(void **state) {
  rp_tmatrix_ws *ws = *state;
  rp_error err = {0};
  /* The pi_mn = m d / sin(theta) limits at theta = 0, pi are exact in the recurrence,
   * so the amplitude on the axis equals the limit approached along phi = 0 (where
   * scatter.h's basis is continuous). Moving 1e-7 rad off the axis changes the
   * amplitude by O(1e-7) of its size: tolerance 1e-6 relative. */
  assert_int_equal(rp_tmatrix_solve(ws, 4.0, 0.75, rp_wavelength_mm(F_X_GHZ),
                                    csqrt(CMPLX(62.0, 30.0)), NULL, &err), RP_OK);
  const double e = 1e-7;
  const double up[3] = {0.0, 0.0, 1.0}, down[3] = {0.0, 0.0, -1.0};
  const double up_e[3] = {sin(e), 0.0, cos(e)}, down_e[3] = {sin(e), 0.0, -cos(e)};
  const double side[3] = {0.6, 0.0, 0.8};
  const double *pairs[][4] = {{up, down, up_e, down_e}, {up, up, up_e, up_e},
                              {side, up, side, up_e}, {down, side, down_e, side}};
  for (size_t p = 0; p < sizeof pairs / sizeof pairs[0]; p++) {
    double complex s[2][2], t[2][2];
    rp_tmatrix_amplitude(ws, pairs[p][0], pairs[p][1], s);
    rp_tmatrix_amplitude(ws, pairs[p][2], pairs[p][3], t);
    double smax = 0.0;
    for (int i = 0; i < 2; i++)
      for (int j = 0; j < 2; j++) smax = fmax(smax, cabs(t[i][j]));
    assert_true(smax > 0.0);
    for (int i = 0; i < 2; i++)
      for (int j = 0; j < 2; j++) assert_close(cabs(s[i][j] - t[i][j]), 0.0, 0.0, 1e-6 * smax);
  }
  /* axial incidence on a spheroid: no depolarisation in backscatter, and the
   * rotational symmetry makes S_tt(pi) = -S_pp(pi) (theta-hat flips at the pole) */
  double complex s[2][2];
  rp_tmatrix_amplitude(ws, up, down, s);
  assert_close(cabs(s[0][1]) + cabs(s[1][0]), 0.0, 0.0, 1e-12 * cabs(s[0][0]));
  assert_close(crel(s[0][0], -s[1][1]), 0.0, 0.0, 1e-12);
}

/* ---- statuses ---------------------------------------------------------------------- */

static void test_tmatrix_rejects_invalid_input(void **state) {
  rp_tmatrix_ws *ws = *state;
  rp_error err = {0};
  const double lam = rp_wavelength_mm(F_C_GHZ);
  const double complex m = csqrt(CMPLX(72.0, 22.0));
  assert_int_equal(rp_tmatrix_solve(NULL, 2.0, 0.9, lam, m, NULL, &err), RP_EINVAL);
  assert_int_equal(rp_tmatrix_solve(ws, 0.0, 0.9, lam, m, NULL, &err), RP_EINVAL);
  assert_non_null(strstr(err.msg, "diameter"));
  assert_int_equal(rp_tmatrix_solve(ws, -1.0, 0.9, lam, m, NULL, &err), RP_EINVAL);
  assert_int_equal(rp_tmatrix_solve(ws, NAN, 0.9, lam, m, NULL, &err), RP_EINVAL);
  assert_int_equal(rp_tmatrix_solve(ws, 12.0, 0.9, lam, m, NULL, &err), RP_EDOM);
  assert_non_null(strstr(err.msg, "12 mm outside (0, 10] mm"));
  assert_int_equal(rp_tmatrix_solve(ws, 2.0, NAN, lam, m, NULL, &err), RP_EINVAL);
  assert_int_equal(rp_tmatrix_solve(ws, 2.0, 0.0, lam, m, NULL, &err), RP_EINVAL);
  assert_int_equal(rp_tmatrix_solve(ws, 2.0, 0.2, lam, m, NULL, &err), RP_EDOM);
  assert_non_null(strstr(err.msg, "axis ratio"));
  assert_int_equal(rp_tmatrix_solve(ws, 2.0, 3.5, lam, m, NULL, &err), RP_EDOM);
  assert_int_equal(rp_tmatrix_solve(ws, 2.0, 0.9, 0.0, m, NULL, &err), RP_EINVAL);
  assert_non_null(strstr(err.msg, "wavelength"));
  assert_int_equal(rp_tmatrix_solve(ws, 2.0, 0.9, INFINITY, m, NULL, &err), RP_EINVAL);
  assert_int_equal(rp_tmatrix_solve(ws, 2.0, 0.9, lam, CMPLX(NAN, 0.0), NULL, &err),
                   RP_EINVAL);
  assert_int_equal(rp_tmatrix_solve(ws, 2.0, 0.9, lam, CMPLX(8.0, -1.0), NULL, &err),
                   RP_EDOM);
  assert_non_null(strstr(err.msg, "refractive index"));
  rp_tmatrix_opts o = rp_tmatrix_opts_default();
  o.rel_tol = 0.0;
  assert_int_equal(rp_tmatrix_solve(ws, 2.0, 0.9, lam, m, &o, &err), RP_EINVAL);
  o = rp_tmatrix_opts_default();
  o.nmax_limit = 61; /* above this workspace's capacity */
  assert_int_equal(rp_tmatrix_solve(ws, 2.0, 0.9, lam, m, &o, &err), RP_EINVAL);
  /* after a failed call the workspace holds no solution */
  assert_int_equal(rp_tmatrix_nmax(ws), 0);
  double complex s[2][2];
  rp_tmatrix_amplitude(ws, K_X, K_MX, s);
  assert_true(isnan(creal(s[0][0])));
  assert_true(isnan(creal(rp_tmatrix_element(ws, 0, 1, 1, 11))));
}

static void test_tmatrix_reports_enoconv_when_limit_too_small(void **state) {
  rp_tmatrix_ws *ws = *state;
  rp_error err = {0};
  const double lam = rp_wavelength_mm(F_C_GHZ);
  const double complex m = csqrt(CMPLX(72.0, 22.0));
  rp_tmatrix_opts o = rp_tmatrix_opts_default();
  o.nmax_limit = 3; /* the 8 mm drop starts at n_max = 6 */
  assert_int_equal(rp_tmatrix_solve(ws, 8.0, 0.56, lam, m, &o, &err), RP_ENOCONV);
  assert_non_null(strstr(err.msg, "D = 8 mm"));
  assert_non_null(strstr(err.msg, "axis ratio 0.56"));
  assert_non_null(strstr(err.msg, "5.6 GHz"));
  assert_non_null(strstr(err.msg, "n_max"));
  assert_int_equal(rp_tmatrix_nmax(ws), 0);
  /* one more term than the start but fewer than needed: the "still changing" path */
  o.nmax_limit = 8;
  assert_int_equal(rp_tmatrix_solve(ws, 8.0, 0.56, lam, m, &o, &err), RP_ENOCONV);
  assert_non_null(strstr(err.msg, "still changing"));
  /* the workspace is reusable after a failure */
  assert_int_equal(rp_tmatrix_solve(ws, 8.0, 0.56, lam, m, NULL, &err), RP_OK);
  assert_true(rp_tmatrix_nmax(ws) > 8);
  assert_true(rp_tmatrix_ngauss(ws) >= 4 * rp_tmatrix_nmax(ws));
}

static void test_tmatrix_hard_cases_fail_cleanly(void **state) {
  rp_tmatrix_ws *ws = *state;
  rp_error err = {0};
  /* Ka band (35 GHz) with an 8 mm drop and an extreme X-band shape (D = 10 mm,
   * r = 0.3) push EBCM towards its loss-of-precision limit (docs/method.md §6). Either
   * outcome is acceptable — a converged, reciprocal answer or RP_ENOCONV with a
   * message — but never a crash, a NaN or another status. */
  const struct {
    double f_ghz, d_mm, r;
    double complex eps;
  } cases[] = {{35.0, 8.0, 0.558, CMPLX(20.0, 30.0)}, {F_X_GHZ, 10.0, 0.3, CMPLX(62.0, 30.0)}};
  for (size_t c = 0; c < 2; c++) {
    err.msg[0] = '\0';
    const rp_status st = rp_tmatrix_solve(ws, cases[c].d_mm, cases[c].r,
                                          rp_wavelength_mm(cases[c].f_ghz),
                                          csqrt(cases[c].eps), NULL, &err);
    assert_true(st == RP_OK || st == RP_ENOCONV);
    if (st == RP_ENOCONV) {
      assert_non_null(strstr(err.msg, "did not converge"));
      assert_int_equal(rp_tmatrix_nmax(ws), 0);
    } else {
      double complex f1[3][3], f2[3][3];
      double ki[3], ks[3];
      unit(70.0, 10.0, ki);
      unit(150.0, 200.0, ks);
      const double mki[3] = {-ki[0], -ki[1], -ki[2]}, mks[3] = {-ks[0], -ks[1], -ks[2]};
      dyadic(ws, ki, ks, f1);
      dyadic(ws, mks, mki, f2);
      /* reciprocity as the sanity check of a converged answer (as above, 1e-6 here
       * because these cases are near the precision limit) */
      double fbig = 0.0;
      for (int a = 0; a < 3; a++)
        for (int b = 0; b < 3; b++) fbig = fmax(fbig, cabs(f1[a][b]));
      assert_true(isfinite(fbig) && fbig > 0.0);
      for (int a = 0; a < 3; a++)
        for (int b = 0; b < 3; b++)
          assert_close(cabs(f2[b][a] - f1[a][b]), 0.0, 0.0, 1e-6 * fbig);
    }
  }
}

static void test_tmatrix_workspace_and_accessors_validate(void **state) {
  (void)state;
  assert_null(rp_tmatrix_ws_alloc(0));
  assert_null(rp_tmatrix_ws_alloc(RP_TMATRIX_NMAX_HARD + 1));
  rp_tmatrix_ws_free(NULL);
  rp_tmatrix_ws *ws = rp_tmatrix_ws_alloc(10);
  assert_non_null(ws);
  rp_error err = {0};
  assert_int_equal(rp_tmatrix_solve(ws, 1.0, 0.95, rp_wavelength_mm(F_C_GHZ),
                                    csqrt(CMPLX(72.0, 22.0)), NULL, &err), RP_OK);
  const int nmax = rp_tmatrix_nmax(ws);
  assert_true(nmax >= 2 && nmax <= 10);
  assert_true(isnan(creal(rp_tmatrix_element(ws, nmax + 1, 1, 1, 11))));
  assert_true(isnan(creal(rp_tmatrix_element(ws, 2, 1, 2, 11)))); /* n < m */
  assert_true(isnan(creal(rp_tmatrix_element(ws, 0, 1, 1, 13))));
  assert_false(isnan(creal(rp_tmatrix_element(ws, 0, 1, 1, 11))));
  double complex s[2][2];
  const double zero[3] = {0.0, 0.0, 0.0}, bad[3] = {NAN, 0.0, 1.0};
  rp_tmatrix_amplitude(ws, zero, K_X, s);
  assert_true(isnan(creal(s[1][1])));
  rp_tmatrix_amplitude(ws, K_X, bad, s);
  assert_true(isnan(creal(s[1][1])));
  rp_tmatrix_amplitude(NULL, K_X, K_X, s);
  assert_true(isnan(creal(s[1][1])));
  /* not normalised input vectors are normalised */
  const double k2[3] = {2.0, 0.0, 0.0}, km2[3] = {-3.0, 0.0, 0.0};
  double complex t[2][2];
  rp_tmatrix_amplitude(ws, K_X, K_MX, s);
  rp_tmatrix_amplitude(ws, k2, km2, t);
  assert_close(crel(t[0][0], s[0][0]), 0.0, 0.0, 1e-14);
  rp_tmatrix_ws_free(ws);
}

static void test_special_functions_reject_bad_arguments(void **state) {
  (void)state;
  /* The internal helpers (special.h) report their two statuses and never write NaN
   * for valid input; on-axis Wigner values are the analytic limits
   * pi_1n(0) = tau_1n(0) = sqrt(n(n+1))/2 (derived here from the normalised form of
   * P_n^1(cos theta) ~ -n(n+1)/2 sin(theta) near theta = 0, i.e. P_n'(1) = n(n+1)/2;
   * the same limits are checked against SciPy in ref_special_functions.py). */
  double j[8], y[8];
  double complex jc[8];
  assert_int_equal(rp_special_sph_bessel_jy(0.0, 5, j, y), RP_EDOM);
  assert_int_equal(rp_special_sph_bessel_jy(-1.0, 5, j, y), RP_EDOM);
  assert_int_equal(rp_special_sph_bessel_jy(NAN, 5, j, y), RP_EDOM);
  assert_int_equal(rp_special_sph_bessel_jy(1.0, -1, j, y), RP_EINVAL);
  assert_int_equal(rp_special_sph_bessel_jy(1.0, RP_SPECIAL_NMAX + 1, j, y), RP_EINVAL);
  assert_int_equal(rp_special_sph_bessel_jy(1.0, 5, NULL, y), RP_OK); /* either may be NULL */
  assert_int_equal(rp_special_sph_bessel_j_complex(0.0, 5, jc), RP_EDOM);
  assert_int_equal(rp_special_sph_bessel_j_complex(CMPLX(1.0, 700.0), 5, jc), RP_EDOM);
  assert_int_equal(rp_special_sph_bessel_j_complex(CMPLX(NAN, 0.0), 5, jc), RP_EDOM);
  assert_int_equal(rp_special_sph_bessel_j_complex(1.0, 5, NULL), RP_EINVAL);
  assert_int_equal(rp_special_sph_bessel_j_complex(1.0, -2, jc), RP_EINVAL);
  assert_int_equal(rp_special_sph_bessel_j_complex(CMPLX(1.0, 0.5), 7, jc), RP_OK);
  /* closed forms, 1e-14: j_0(z) = sin z / z, j_1(z) = sin z / z^2 - cos z / z */
  const double complex z = CMPLX(1.0, 0.5);
  assert_close(cabs(jc[0] - csin(z) / z), 0.0, 0.0, 1e-14);
  assert_close(cabs(jc[1] - (csin(z) / (z * z) - ccos(z) / z)), 0.0, 0.0, 1e-14);
  double d[8], p[8], t[8];
  rp_special_wigner_d(1, 7, 1.0, 0.0, NULL, d, p, t);
  for (int n = 1; n <= 7; n++) {
    assert_close(d[n], 0.0, 0.0, 0.0);
    assert_close(p[n], 0.5 * sqrt(n * (n + 1.0)), 1e-14, 0.0);
    assert_close(t[n], 0.5 * sqrt(n * (n + 1.0)), 1e-14, 0.0);
  }
  rp_special_wigner_d(9, 7, 0.3, sqrt(1.0 - 0.09), NULL, d, p, t); /* m > nmax: zeros */
  for (int n = 0; n <= 7; n++) assert_true(d[n] == 0.0 && p[n] == 0.0 && t[n] == 0.0);
}

/* ---- values for tests/ref_special_functions.py ------------------------------------ */

static int dump_special(void) {
  const double xs[] = {1e-3, 0.1, 1.0, 3.14159, 5.0, 10.0, 25.0};
  double j[41], y[41];
  for (size_t i = 0; i < sizeof xs / sizeof xs[0]; i++) {
    if (rp_special_sph_bessel_jy(xs[i], 30, j, y) != RP_OK) return 1;
    for (int n = 0; n <= 30; n++) printf("jy %d %.17g %.17g %.17g\n", n, xs[i], j[n], y[n]);
  }
  const double complex zs[] = {CMPLX(0.01, 0.002), CMPLX(1.0, 0.5), CMPLX(5.3, 2.8),
                               CMPLX(8.1, 1.9), CMPLX(20.0, 5.0), CMPLX(3.0, 0.0),
                               CMPLX(0.4, 0.3)};
  double complex jc[41];
  for (size_t i = 0; i < sizeof zs / sizeof zs[0]; i++) {
    if (rp_special_sph_bessel_j_complex(zs[i], 30, jc) != RP_OK) return 1;
    for (int n = 0; n <= 30; n++)
      printf("jc %d %.17g %.17g %.17g %.17g\n", n, creal(zs[i]), cimag(zs[i]), creal(jc[n]),
             cimag(jc[n]));
  }
  const double thetas[] = {0.0, 0.3, M_PI / 2.0, 2.5, M_PI};
  const int ms[] = {0, 1, 2, 5, 10};
  double d[41], p[41], t[41];
  for (size_t a = 0; a < sizeof thetas / sizeof thetas[0]; a++) {
    for (size_t b = 0; b < sizeof ms / sizeof ms[0]; b++) {
      const double th = thetas[a];
      const double c = a == 0 ? 1.0 : (a == 4 ? -1.0 : cos(th));
      const double s = (a == 0 || a == 4) ? 0.0 : sin(th);
      rp_special_wigner_d(ms[b], 30, c, s, NULL, d, p, t);
      for (int n = ms[b]; n <= 30; n++)
        printf("wig %d %d %.17g %.17g %.17g %.17g\n", ms[b], n, th, d[n], p[n], t[n]);
    }
  }
  const struct {
    double x;
    double complex m;
  } mie[] = {{2.0 * M_PI * 0.525 / 0.6328, 1.55},
             {0.5, CMPLX(9.0, 1.1)},
             {0.01, CMPLX(1.33, 0.0)},
             {3.0, CMPLX(1.33, 0.01)},
             {20.0, CMPLX(1.5, 0.1)},
             {1.2, CMPLX(8.1, 1.9)}};
  for (size_t i = 0; i < sizeof mie / sizeof mie[0]; i++) {
    rp_mie_result r;
    rp_error err = {0};
    /* diameter 2x at wavelength 2 pi gives size parameter x */
    if (rp_mie_sphere_eval(2.0 * mie[i].x, 2.0 * M_PI, mie[i].m, &r, &err) != RP_OK) return 1;
    printf("mie %.17g %.17g %.17g %zu %.17g %.17g %.17g %.17g %.17g %.17g %.17g\n", mie[i].x,
           creal(mie[i].m), cimag(mie[i].m), r.nmax, r.qext, r.qsca, r.qback, creal(r.s1_fwd),
           cimag(r.s1_fwd), creal(r.s1_back), cimag(r.s1_back));
  }
  return 0;
}

int main(int argc, char **argv) {
  rp_test_init();
  if (argc > 1 && strcmp(argv[1], "--dump-special") == 0) return dump_special();
  const struct CMUnitTest tests[] = {
      cmocka_unit_test(test_tmatrix_sphere_t_equals_minus_mie_coefficients),
      cmocka_unit_test(test_tmatrix_sphere_amplitudes_equal_mie),
      cmocka_unit_test(test_tmatrix_sphere_equals_mie_at_general_angles),
      cmocka_unit_test(test_tmatrix_sphere_backscatter_hh_equals_vv),
      cmocka_unit_test(test_tmatrix_small_spheroids_match_rayleigh_gans),
      cmocka_unit_test(test_tmatrix_lossless_spheroid_obeys_optical_theorem),
      cmocka_unit_test(test_tmatrix_amplitudes_are_reciprocal),
      cmocka_unit_test(test_tmatrix_blocks_have_reciprocity_symmetry),
      cmocka_unit_test(test_tmatrix_oblate_drop_gives_positive_kdp_and_zdr),
      cmocka_unit_test(test_tmatrix_axis_directions_are_continuous_limits),
      cmocka_unit_test(test_tmatrix_rejects_invalid_input),
      cmocka_unit_test(test_tmatrix_reports_enoconv_when_limit_too_small),
      cmocka_unit_test(test_tmatrix_hard_cases_fail_cleanly),
      cmocka_unit_test(test_tmatrix_workspace_and_accessors_validate),
      cmocka_unit_test(test_special_functions_reject_bad_arguments),
  };
  return cmocka_run_group_tests_name("tmatrix", tests, setup_ws, teardown_ws);
}
