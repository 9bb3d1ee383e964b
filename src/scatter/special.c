/* special.c — spherical Bessel functions and normalised Wigner d functions for the
 * Mie and T-matrix modules (internal; see special.h).
 *
 * Spherical Bessel j_n (real or complex argument z): the ratios
 * rho_n = j_n / j_{n-1} are the minimal-solution ratios of the three-term recurrence
 * j_{n-1} + j_{n+1} = (2n+1)/z j_n (Abramowitz & Stegun 1964, eq. 10.1.19; A&S
 * equation numbers in this file are from memory), so they are computed by the
 * stable downward recurrence rho_n = z / (2n+1 - z rho_{n+1})
 * started far above both n_max and |z| (Miller's algorithm in ratio form; the start
 * index rule is ours, see below). The values follow from j_0 = sin z / z (A&S
 * 10.1.11) by j_n = rho_n j_{n-1}. y_n (real x) uses the upward recurrence, stable for
 * the dominant solution, from y_0 = -cos x / x and y_1 = -cos x / x^2 - sin x / x
 * (A&S 10.1.12).
 *
 * Wigner d^n_{0m}(theta) (Mishchenko, Travis & Lacis 2002, appendix on Wigner d
 * functions; Edmonds 1957):
 * the normalised associated Legendre functions obey
 *   sqrt((n+1)^2 - m^2) d^{n+1} = (2n+1) cos(theta) d^n - sqrt(n^2 - m^2) d^{n-1},
 * started from d^{m-1}_{0m} = 0 and d^m_{0m} = A_m sin^m(theta),
 * A_m = sqrt((2m)!)/(2^m m!) = prod_{k=1..m} sqrt((2k-1)/(2k)) (no factorials).
 * For m >= 1 the same (linear) recurrence is run on d/sin(theta), started from
 * A_m sin^{m-1}(theta), which gives pi_mn = m d/sin and
 * tau_mn = n cos(theta) (d^n/sin) - sqrt(n^2 - m^2) (d^{n-1}/sin) (from
 * (1-x^2) dP_n^m/dx = -n x P_n^m + (n+m) P_{n-1}^m, A&S 8.5.4) with no division by
 * sin(theta): the values at theta = 0 and pi are the exact limits. For m = 0,
 * tau_0n = -sin(theta) P_n'(cos theta) with P'_{n+1} = P'_{n-1} + (2n+1) P_n
 * (A&S 8.5.3 combined with 8.5.4).
 *
 * Accuracy is checked against SciPy by tests/ref_special_functions.py. */
#include "special.h"

#include <math.h>
#include <stddef.h>

/* Start index of the downward ratio recurrence. An error in the starting ratio at
 * index N reaches index n damped by about |j_N / y_N| / |j_n / y_n|. Above n ~ |z|
 * this falls off like exp(-(4/3) t^(3/2)) with t the distance in units of the
 * transition width |z|^(1/3), so 10 widths (exp(-42)) plus 20 extra terms leave the
 * start value's error far below one ulp at every n <= max(nmax, |z|). */
int rp_special_ratio_start(int nmax, double absz) {
  double base = (double)nmax > absz ? (double)nmax : absz;
  return (int)ceil(base + 10.0 * cbrt(absz) + 20.0);
}

rp_status rp_special_sph_bessel_jy(double x, int nmax, double *j, double *y) {
  if (!isfinite(x) || x <= 0.0) return RP_EDOM;
  if (nmax < 0 || nmax > RP_SPECIAL_NMAX) return RP_EINVAL;
  const double sx = sin(x), cx = cos(x);
  if (j != NULL) {
    /* ratios rho_n stored in j[n] (n >= 1), then turned into values in place */
    const int nstart = rp_special_ratio_start(nmax, x);
    double rho = 0.0;
    for (int n = nstart; n >= 1; n--) {
      rho = x / (2.0 * n + 1.0 - x * rho);
      if (n <= nmax) j[n] = rho;
    }
    j[0] = sx / x;
    if (nmax >= 1) {
      /* j_1 from the ratio when j_0 dominates (small x: the closed form cancels),
       * from the closed form otherwise (near a zero of j_0 the ratio is inexact). */
      const double j1_closed = (sx / x - cx) / x;
      j[1] = (fabs(j[0]) >= fabs(j1_closed)) ? j[1] * j[0] : j1_closed;
    }
    for (int n = 2; n <= nmax; n++) j[n] *= j[n - 1];
  }
  if (y != NULL) {
    y[0] = -cx / x;
    if (nmax >= 1) y[1] = -cx / (x * x) - sx / x;
    for (int n = 1; n < nmax; n++) y[n + 1] = (2.0 * n + 1.0) / x * y[n] - y[n - 1];
  }
  return RP_OK;
}

rp_status rp_special_sph_bessel_j_complex(double complex z, int nmax, double complex *j) {
  if (!isfinite(creal(z)) || !isfinite(cimag(z)) || z == 0.0 || fabs(cimag(z)) > 600.0)
    return RP_EDOM;
  if (nmax < 0 || nmax > RP_SPECIAL_NMAX || j == NULL) return RP_EINVAL;
  const int nstart = rp_special_ratio_start(nmax, cabs(z));
  double complex rho = 0.0;
  for (int n = nstart; n >= 1; n--) {
    rho = z / (2.0 * n + 1.0 - z * rho);
    if (n <= nmax) j[n] = rho;
  }
  const double complex sz = csin(z), cz = ccos(z);
  j[0] = sz / z;
  if (nmax >= 1) {
    const double complex j1_closed = (sz / z - cz) / z;
    j[1] = (cabs(j[0]) >= cabs(j1_closed)) ? j[1] * j[0] : j1_closed;
  }
  for (int n = 2; n <= nmax; n++) j[n] *= j[n - 1];
  return RP_OK;
}

void rp_special_wigner_d(int m, int nmax, double cos_t, double sin_t, const double *root,
                         double *d, double *pi_mn, double *tau_mn) {
  if (nmax < 0) return;
  for (int n = 0; n <= nmax && n < m; n++) {
    if (d) d[n] = 0.0;
    if (pi_mn) pi_mn[n] = 0.0;
    if (tau_mn) tau_mn[n] = 0.0;
  }
  if (m > nmax || m < 0) return;
  if (m == 0) {
    /* Legendre P_n and its derivative P'_n (both upward, stable) */
    double p_prev = 0.0, p = 1.0;       /* P_{n-1}, P_n */
    double dp_prev = 0.0, dp = 0.0;     /* P'_{n-1}, P'_n */
    for (int n = 0; n <= nmax; n++) {
      if (d) d[n] = p;
      if (pi_mn) pi_mn[n] = 0.0;
      if (tau_mn) tau_mn[n] = -sin_t * dp;
      const double p_next = ((2.0 * n + 1.0) * cos_t * p - n * p_prev) / (n + 1.0);
      const double dp_next = dp_prev + (2.0 * n + 1.0) * p;
      p_prev = p;
      p = p_next;
      dp_prev = dp;
      dp = dp_next;
    }
    return;
  }
  /* A_m sin^{m-1}: the start of the recurrence on d/sin(theta) */
  double start = 1.0;
  for (int k = 1; k <= m; k++) start *= sqrt((2.0 * k - 1.0) / (2.0 * k));
  for (int k = 1; k < m; k++) start *= sin_t;
  double t_prev = 0.0, t = start; /* d^{n-1}/sin, d^n/sin */
  double r_n = 0.0;               /* sqrt(n^2 - m^2) at n = m */
  for (int n = m; n <= nmax; n++) {
    if (d) d[n] = sin_t * t;
    if (pi_mn) pi_mn[n] = m * t;
    if (tau_mn) tau_mn[n] = n * cos_t * t - r_n * t_prev;
    if (n == nmax) break;
    const double r_next = root ? root[n + 1]
                               : sqrt((double)(n + 1 - m) * (double)(n + 1 + m));
    const double t_next = ((2.0 * n + 1.0) * cos_t * t - r_n * t_prev) / r_next;
    t_prev = t;
    t = t_next;
    r_n = r_next;
  }
}
