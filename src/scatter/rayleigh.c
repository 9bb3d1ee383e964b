/* rayleigh.c — Rayleigh (electrostatic-dipole) scattering by a homogeneous spheroid.
 *
 * Method: Bohren & Huffman (1983), Absorption and Scattering of Light by Small
 * Particles, §5.3 (ellipsoid in the electrostatic approximation).
 *
 * Depolarisation factors, axis ratio r = b/a (b along the symmetry axis):
 *   general ellipsoid, semi-axes a1, a2, a3 (Bohren & Huffman eq. 5.33, equation
 *   number from memory):
 *     L_j = (a1 a2 a3 / 2) Int_0^inf ds / ((s + a_j^2) sqrt((s+a1^2)(s+a2^2)(s+a3^2)))
 *   oblate, r < 1, e^2 = 1 - r^2, g = sqrt((1 - e^2)/e^2) = r/e (Bohren & Huffman):
 *     L_a = g/(2 e^2) (pi/2 - atan g) - g^2/2
 *     L_b = (1 - r asin(e)/e) / e^2
 *   prolate, r > 1, e^2 = 1 - 1/r^2 (Bohren & Huffman for L_b):
 *     L_b = ((1 - e^2)/e^2) (-1 + atanh(e)/e),     atanh(e) = (1/2) ln((1+e)/(1-e))
 *     L_a = (1 - (1 - e^2) atanh(e)/e) / (2 e^2)
 *   (each pair satisfies 2 L_a + L_b = 1; L_a and L_b are computed separately so the
 *   tests can check that identity.) pi/2 - atan g = asin e = atan2(e, r).
 * Near the sphere (e^2 < 0.1) the closed forms cancel; there the series in q = e^2 is
 * used instead (error < 1e-16 after at most ~20 terms):
 *   oblate:  sqrt(1-q) asin(e)/e = sum p_n q^n, p_n = sum_k d_k c_{n-k},
 *            c_n = c_{n-1} (2n-1)^2 / (2n (2n+1)) (asin(e)/e), d_n = d_{n-1} (n - 3/2)/n
 *            (sqrt(1-q)); L_b = -sum_{n>=1} p_n q^{n-1}, L_a = (1 - L_b)/2.
 *   prolate: atanh(e)/e - 1 = sum_{n>=1} q^n / (2n+1),
 *            L_b = (1 - q) sum_{k>=0} q^k / (2k+3), L_a = (1 - L_b)/2.
 *
 * Polarisability (Bohren & Huffman §5.3: alpha_j = 4 pi a1 a2 a3 (eps - 1) /
 * (3 + 3 L_j (eps - 1)) in vacuum), i.e. in volume units
 *   alpha_j = V (eps - 1) / (1 + L_j (eps - 1)),  V = pi D^3 / 6.
 * Amplitude: the dipole p = alpha . E0 / (4 pi) radiates E_s = k^2 (p - n (n . p))
 * e^{ikr}/r, so the amplitude dyadic is F = k^2/(4 pi) [alpha_a (xx + yy) + alpha_b zz]
 * and s[p][q] = e_p(k_sca) . F . e_q(k_inc). For a sphere, f = k^2 (D/2)^3 K with
 * K = (eps - 1)/(eps + 2). No radiative correction. */
#include "rainprint/rayleigh.h"

#include <math.h>
#include <stddef.h>

/* Below this e^2 the series replaces the closed forms (relative cancellation in the
 * closed forms ~ 1e-16 / e^2, i.e. < 1e-15 here). */
#define SERIES_Q_MAX 0.1
#define SERIES_N_MAX 60

static void depol_oblate_series(double q, double *l_a, double *l_b) {
  /* c[], d[] built on the fly; p_n needs c_0..c_n and d_0..d_n. */
  double c[SERIES_N_MAX + 1], d[SERIES_N_MAX + 1];
  c[0] = 1.0;
  d[0] = 1.0;
  double sum = 0.0, qn = 1.0; /* qn = q^(n-1) */
  for (int n = 1; n <= SERIES_N_MAX; n++) {
    const double dn = (double)n;
    c[n] = c[n - 1] * (2.0 * dn - 1.0) * (2.0 * dn - 1.0) / (2.0 * dn * (2.0 * dn + 1.0));
    d[n] = d[n - 1] * (dn - 1.5) / dn;
    double p = 0.0;
    for (int k = 0; k <= n; k++) p += d[k] * c[n - k];
    const double term = p * qn;
    sum += term;
    if (fabs(term) < 1e-18 * fabs(sum)) break;
    qn *= q;
  }
  *l_b = -sum;
  *l_a = 0.5 * (1.0 + sum);
}

static void depol_prolate_series(double q, double *l_a, double *l_b) {
  double sum = 0.0, qk = 1.0;
  for (int k = 0; k <= SERIES_N_MAX; k++) {
    const double term = qk / (2.0 * (double)k + 3.0);
    sum += term;
    if (term < 1e-18 * sum) break;
    qk *= q;
  }
  *l_b = (1.0 - q) * sum;
  *l_a = 0.5 * (1.0 - *l_b);
}

rp_status rp_rayleigh_depolarization(double axis_ratio, double *l_a, double *l_b,
                                     rp_error *err) {
  if (l_a == NULL || l_b == NULL)
    return rp_error_set(err, RP_EINVAL, "depolarisation output pointer is NULL");
  if (!isfinite(axis_ratio))
    return rp_error_set(err, RP_EINVAL, "axis ratio %g is not a finite number", axis_ratio);
  if (axis_ratio < RP_RAYLEIGH_AXIS_RATIO_MIN || axis_ratio > RP_RAYLEIGH_AXIS_RATIO_MAX)
    return rp_error_set(err, RP_EDOM, "axis ratio %g outside [%g, %g]", axis_ratio,
                        RP_RAYLEIGH_AXIS_RATIO_MIN, RP_RAYLEIGH_AXIS_RATIO_MAX);
  const double r = axis_ratio;
  if (r == 1.0) {
    *l_a = *l_b = 1.0 / 3.0;
    return RP_OK;
  }
  if (r < 1.0) {
    const double q = (1.0 - r) * (1.0 + r); /* e^2, without cancellation near r = 1 */
    if (q < SERIES_Q_MAX) {
      depol_oblate_series(q, l_a, l_b);
    } else {
      const double e = sqrt(q);
      const double g = r / e;
      const double asin_e = atan2(e, r); /* = pi/2 - atan(g) */
      *l_a = g / (2.0 * q) * asin_e - 0.5 * g * g;
      *l_b = (1.0 - r * asin_e / e) / q;
    }
  } else {
    const double inv_r2 = 1.0 / (r * r); /* 1 - e^2 */
    const double q = (r - 1.0) * (r + 1.0) * inv_r2;
    if (q < SERIES_Q_MAX) {
      depol_prolate_series(q, l_a, l_b);
    } else {
      const double e = sqrt(q);
      const double one_minus_e = inv_r2 / (1.0 + e);
      const double atanh_e = 0.5 * (log1p(e) - log(one_minus_e));
      *l_b = inv_r2 / q * (atanh_e / e - 1.0);
      *l_a = (1.0 - inv_r2 * atanh_e / e) / (2.0 * q);
    }
  }
  return RP_OK;
}

rp_status rp_rayleigh_spheroid_init(rp_rayleigh_spheroid *r, double d_mm, double axis_ratio,
                                    double wavelength_mm, double complex eps, rp_error *err) {
  if (r == NULL) return rp_error_set(err, RP_EINVAL, "spheroid output pointer is NULL");
  if (!isfinite(d_mm))
    return rp_error_set(err, RP_EINVAL, "diameter %g mm is not a finite number", d_mm);
  if (!isfinite(wavelength_mm))
    return rp_error_set(err, RP_EINVAL, "wavelength %g mm is not a finite number",
                        wavelength_mm);
  if (!isfinite(creal(eps)) || !isfinite(cimag(eps)))
    return rp_error_set(err, RP_EINVAL, "permittivity %g%+gi is not finite", creal(eps),
                        cimag(eps));
  if (cimag(eps) < 0.0)
    return rp_error_set(err, RP_EINVAL,
                        "permittivity %g%+gi has Im < 0; the convention is eps' + i eps'' "
                        "with eps'' >= 0 (exp(-i omega t))",
                        creal(eps), cimag(eps));
  if (!(d_mm > 0.0 && d_mm <= RP_RAYLEIGH_D_MAX_MM))
    return rp_error_set(err, RP_EDOM, "diameter %g mm outside (0, %g] mm", d_mm,
                        RP_RAYLEIGH_D_MAX_MM);
  if (!(wavelength_mm > 0.0))
    return rp_error_set(err, RP_EDOM, "wavelength %g mm must be > 0", wavelength_mm);
  double l_a, l_b;
  RP_TRY(rp_rayleigh_depolarization(axis_ratio, &l_a, &l_b, err));

  const double v_mm3 = M_PI * d_mm * d_mm * d_mm / 6.0;
  const double complex em1 = eps - 1.0;
  const double complex den_a = 1.0 + l_a * em1, den_b = 1.0 + l_b * em1;
  if (cabs(den_a) < 1e-12 || cabs(den_b) < 1e-12)
    return rp_error_set(err, RP_EDOM,
                        "permittivity %g%+gi is at the electrostatic resonance of a spheroid "
                        "with axis ratio %g (1 + L (eps - 1) = 0)",
                        creal(eps), cimag(eps), axis_ratio);
  r->k_per_mm = 2.0 * M_PI / wavelength_mm;
  r->alpha_a_mm3 = v_mm3 * em1 / den_a;
  r->alpha_b_mm3 = v_mm3 * em1 / den_b;
  return RP_OK;
}

void rp_rayleigh_amplitude(const void *ctx, const double k_inc[3], const double k_sca[3],
                           double complex s[2][2]) {
  const rp_rayleigh_spheroid *sp = (const rp_rayleigh_spheroid *)ctx;
  double th_i[3], ph_i[3], th_s[3], ph_s[3];
  rp_scatter_basis(k_inc, th_i, ph_i);
  rp_scatter_basis(k_sca, th_s, ph_s);
  const double *e_i[2] = {th_i, ph_i};
  const double *e_s[2] = {th_s, ph_s};
  const double c = sp->k_per_mm * sp->k_per_mm / (4.0 * M_PI);
  const double complex fa = c * sp->alpha_a_mm3, fb = c * sp->alpha_b_mm3;
  for (int p = 0; p < 2; p++)
    for (int q = 0; q < 2; q++)
      s[p][q] = fa * (e_s[p][0] * e_i[q][0] + e_s[p][1] * e_i[q][1]) +
                fb * (e_s[p][2] * e_i[q][2]);
}
