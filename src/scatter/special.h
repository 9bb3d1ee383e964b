/* special.h — internal (uninstalled) special functions shared by the Mie and T-matrix
 * modules: spherical Bessel functions of real and complex argument and normalised
 * Wigner d functions d^n_{0m}(theta) with the angular functions pi_mn and tau_mn.
 *
 * Methods and references are in special.c. Everything here is allocation-free, takes
 * caller-owned arrays and writes entries 0..nmax (nmax + 1 values). */
#ifndef RP_SCATTER_SPECIAL_H
#define RP_SCATTER_SPECIAL_H

#include <complex.h>

#include "rainprint/status.h"

/* Largest order accepted by the functions below. */
#define RP_SPECIAL_NMAX 2000

/* Start index of the downward ratio / logarithmic-derivative recurrences for orders
 * up to nmax at argument modulus absz (rule and justification in special.c). */
int rp_special_ratio_start(int nmax, double absz);

/* Spherical Bessel functions of the first and second kind of real argument,
 * j[n] = j_n(x), y[n] = y_n(x) for n = 0..nmax (either array may be NULL).
 * Preconditions: x finite and > 0, 0 <= nmax <= RP_SPECIAL_NMAX.
 * Returns RP_OK, RP_EDOM for x <= 0 or non-finite, RP_EINVAL for a bad nmax.
 * y_n overflows to -inf for very large n/x; callers check finiteness. */
rp_status rp_special_sph_bessel_jy(double x, int nmax, double *j, double *y);

/* Spherical Bessel function of the first kind of complex argument, j[n] = j_n(z),
 * n = 0..nmax. Preconditions: z finite, z != 0, |Im z| <= 600 (sin z must not
 * overflow), 0 <= nmax <= RP_SPECIAL_NMAX. Returns RP_OK, RP_EDOM or RP_EINVAL. */
rp_status rp_special_sph_bessel_j_complex(double complex z, int nmax, double complex *j);

/* Normalised Wigner d functions d^n_{0m}(theta) (int_0^pi d^2 sin = 2/(2n+1)) for
 * one m >= 0 and n = 0..nmax, with pi_mn = m d^n_{0m} / sin(theta) and
 * tau_mn = d d^n_{0m} / d theta. Entries with n < m are set to zero. The pi and
 * tau values are computed without dividing by sin(theta), so theta = 0 and pi are
 * exact limits. cos_t = cos(theta), sin_t = sin(theta) >= 0 (theta in [0, pi]).
 * root, when not NULL, holds root[n] = sqrt(n^2 - m^2) for n = m..nmax (a
 * precomputed table); NULL computes the square roots here. d, pi_mn, tau_mn may be
 * NULL when not wanted. Sign convention: d^m_{0m} = +sqrt((2m)!)/(2^m m!) sin^m. */
void rp_special_wigner_d(int m, int nmax, double cos_t, double sin_t, const double *root,
                         double *d, double *pi_mn, double *tau_mn);

#endif
