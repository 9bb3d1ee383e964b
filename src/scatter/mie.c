/* mie.c — Mie scattering by a homogeneous sphere.
 *
 * Method: Bohren & Huffman (1983), ch. 4. Coefficients (eq. 4.88)
 *   a_n = [(D_n(mx)/m + n/x) psi_n(x) - psi_{n-1}(x)] / [(D_n(mx)/m + n/x) xi_n(x) - xi_{n-1}(x)]
 *   b_n = [(m D_n(mx) + n/x) psi_n(x) - psi_{n-1}(x)] / [(m D_n(mx) + n/x) xi_n(x) - xi_{n-1}(x)]
 * with psi_n = x j_n(x), xi_n = x h_n^(1)(x) = psi_n - i chi_n (chi_n = -x y_n), and the
 * logarithmic derivative D_n(z) = psi_n'(z)/psi_n(z) by the downward recurrence
 * D_{n-1} = n/z - 1/(D_n + n/z) (eq. 4.89). psi_n(x) is built from the downward
 * ratio j_n/j_{n-1} (special.c) rather than B&H's upward recurrence, which loses all
 * digits for x << 1 (the Rayleigh regime of small drops). Series length: Wiscombe
 * (1980), n_max = x + 4.05 x^{1/3} + 2.
 * Efficiencies: eq. 4.61, 4.62; S1, S2: eq. 4.74 with pi_n, tau_n from eq. 4.47.
 * Amplitude as a length: f = i S / k (see mie.h for the backscatter alignment).
 * (Bohren & Huffman equation numbers here and in mie.h are from memory of the 1983
 * edition.)
 *
 * Invariants: no allocation (rp_mie_coefficients uses its output arrays as scratch;
 * rp_mie_sphere_eval keeps RP_MIE_NMAX_CAP-sized arrays on the stack). */
#include "rainprint/mie.h"

#include <math.h>

#include "special.h"

/* the imaginary unit as a double complex (I is float complex) */
static const double complex IU = CMPLX(0.0, 1.0);

size_t rp_mie_nmax(double x) {
  if (!isfinite(x) || x < 0.0) return 1;
  const double n = floor(x + 4.05 * cbrt(x) + 2.0 + 0.5);
  return n < 1.0 ? 1 : (size_t)n;
}

static int m_in_domain(double complex m) {
  return isfinite(creal(m)) && isfinite(cimag(m)) && creal(m) > 0.0 && cimag(m) >= 0.0;
}

rp_status rp_mie_coefficients(double x, double complex m, size_t nmax, double complex *a,
                              double complex *b, rp_error *err) {
  if (a == NULL || b == NULL)
    return rp_error_set(err, RP_EINVAL, "Mie coefficients: NULL output array");
  if (nmax < 1 || nmax > RP_SPECIAL_NMAX)
    return rp_error_set(err, RP_EINVAL, "Mie coefficients: nmax %zu outside [1, %d]", nmax,
                        RP_SPECIAL_NMAX);
  if (!isfinite(x) || x <= 0.0)
    return rp_error_set(err, RP_EINVAL, "Mie size parameter x = %g must be finite and > 0",
                        x);
  if (x > RP_MIE_X_MAX)
    return rp_error_set(err, RP_EDOM, "Mie size parameter x = %g above %g", x, RP_MIE_X_MAX);
  if (!m_in_domain(m))
    return rp_error_set(err, RP_EDOM,
                        "refractive index m = %g%+gi outside Re m > 0, Im m >= 0",
                        creal(m), cimag(m));
  const int nm = (int)nmax;
  const double complex mx = m * x;

  /* Phase 1 (downward): D_n(mx) into a[n-1], ratios j_n(x)/j_{n-1}(x) into b[n-1]. */
  double complex dn = 0.0;
  for (int n = rp_special_ratio_start(nm, cabs(mx)); n >= 1; n--) {
    if (n <= nm) a[n - 1] = dn;
    dn = n / mx - 1.0 / (dn + n / mx);
  }
  double rho = 0.0;
  for (int n = rp_special_ratio_start(nm, x); n >= 1; n--) {
    rho = x / (2.0 * n + 1.0 - x * rho);
    if (n <= nm) b[n - 1] = rho;
  }

  /* Phase 2 (upward): psi_n from the ratios, y_n by upward recurrence (stable), then
   * a_n, b_n overwrite the scratch at the same index after it has been read. */
  const double sx = sin(x), cx = cos(x);
  double j_prev = sx / x;                   /* j_{n-1} */
  double y_prev = -cx / x;                  /* y_{n-1} */
  double y_cur = -cx / (x * x) - sx / x;    /* y_n at n = 1 */
  for (int n = 1; n <= nm; n++) {
    const double complex d_n = a[n - 1];
    double j_cur;
    if (n == 1) {
      const double j1_closed = (sx / x - cx) / x; /* see special.c for this choice */
      j_cur = (fabs(j_prev) >= fabs(j1_closed)) ? creal(b[0]) * j_prev : j1_closed;
    } else {
      j_cur = creal(b[n - 1]) * j_prev;
      const double y_next = (2.0 * n - 1.0) / x * y_cur - y_prev;
      y_prev = y_cur;
      y_cur = y_next;
    }
    const double psi = x * j_cur, psi_prev = x * j_prev;
    const double complex xi = x * (j_cur + IU * y_cur);
    const double complex xi_prev = x * (j_prev + IU * y_prev);
    if (!isfinite(cimag(xi)) || !isfinite(cimag(xi_prev))) {
      /* y_n overflowed (n far above x): |a_n|, |b_n| ~ |psi_n / xi_n| < 1e-300 */
      a[n - 1] = 0.0;
      b[n - 1] = 0.0;
    } else {
      const double complex ga = d_n / m + n / x;
      const double complex gb = m * d_n + n / x;
      a[n - 1] = (ga * psi - psi_prev) / (ga * xi - xi_prev);
      b[n - 1] = (gb * psi - psi_prev) / (gb * xi - xi_prev);
    }
    j_prev = j_cur;
  }
  for (int n = 0; n < nm; n++) {
    if (!isfinite(creal(a[n])) || !isfinite(cimag(a[n])) || !isfinite(creal(b[n])) ||
        !isfinite(cimag(b[n])))
      return rp_error_set(err, RP_EDOM,
                          "Mie coefficient a_%d or b_%d is not finite for x = %g, m = %g%+gi",
                          n + 1, n + 1, x, creal(m), cimag(m));
  }
  return RP_OK;
}

void rp_mie_s12(const double complex *a, const double complex *b, size_t nmax,
                double cos_angle, double complex *s1, double complex *s2) {
  double complex sum1 = 0.0, sum2 = 0.0;
  double pi_prev = 0.0, pi_n = 1.0; /* pi_0, pi_1 */
  for (size_t k = 1; k <= nmax; k++) {
    const double n = (double)k;
    const double tau_n = n * cos_angle * pi_n - (n + 1.0) * pi_prev;
    const double c = (2.0 * n + 1.0) / (n * (n + 1.0));
    sum1 += c * (a[k - 1] * pi_n + b[k - 1] * tau_n);
    sum2 += c * (a[k - 1] * tau_n + b[k - 1] * pi_n);
    const double pi_next = ((2.0 * n + 1.0) * cos_angle * pi_n - (n + 1.0) * pi_prev) / n;
    pi_prev = pi_n;
    pi_n = pi_next;
  }
  *s1 = sum1;
  *s2 = sum2;
}

rp_status rp_mie_sphere_eval(double d_mm, double wavelength_mm, double complex m,
                             rp_mie_result *out, rp_error *err) {
  if (out == NULL) return rp_error_set(err, RP_EINVAL, "Mie: NULL result");
  if (!isfinite(d_mm) || d_mm <= 0.0)
    return rp_error_set(err, RP_EINVAL, "diameter %g mm must be finite and > 0", d_mm);
  if (!isfinite(wavelength_mm) || wavelength_mm <= 0.0)
    return rp_error_set(err, RP_EINVAL, "wavelength %g mm must be finite and > 0",
                        wavelength_mm);
  const double k = 2.0 * M_PI / wavelength_mm;
  const double x = 0.5 * k * d_mm;
  if (!(x <= RP_MIE_X_MAX))
    return rp_error_set(err, RP_EDOM, "Mie size parameter x = %g (D = %g mm, wavelength %g mm) "
                        "above %g", x, d_mm, wavelength_mm, RP_MIE_X_MAX);
  const size_t nmax = rp_mie_nmax(x);
  double complex a[RP_MIE_NMAX_CAP], b[RP_MIE_NMAX_CAP];
  RP_TRY(rp_mie_coefficients(x, m, nmax, a, b, err));

  double sext = 0.0, ssca = 0.0;
  double complex sfwd = 0.0, sback = 0.0;
  double sign = -1.0; /* (-1)^n */
  for (size_t k1 = 1; k1 <= nmax; k1++) {
    const double c = 2.0 * (double)k1 + 1.0;
    const double complex an = a[k1 - 1], bn = b[k1 - 1];
    sext += c * creal(an + bn);
    ssca += c * (creal(an) * creal(an) + cimag(an) * cimag(an) + creal(bn) * creal(bn) +
                 cimag(bn) * cimag(bn));
    sfwd += c * (an + bn);
    sback += c * sign * (bn - an);
    sign = -sign;
  }
  rp_mie_result r;
  r.nmax = nmax;
  r.qext = 2.0 * sext / (x * x);
  r.qsca = 2.0 * ssca / (x * x);
  r.s1_fwd = 0.5 * sfwd;
  r.s1_back = 0.5 * sback;
  r.qback = 4.0 * (creal(r.s1_back) * creal(r.s1_back) + cimag(r.s1_back) * cimag(r.s1_back)) /
            (x * x);
  r.f_fwd_mm = IU * r.s1_fwd / k;
  r.f_back_mm = IU * r.s1_back / k;
  const double geom = 0.25 * M_PI * d_mm * d_mm;
  r.c_ext_mm2 = r.qext * geom;
  r.c_sca_mm2 = r.qsca * geom;
  r.sigma_back_mm2 = r.qback * geom;
  *out = r;
  return RP_OK;
}
