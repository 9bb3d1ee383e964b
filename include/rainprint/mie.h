/* mie.h — Mie scattering by a homogeneous sphere.
 *
 * Bohren & Huffman (1983, ch. 4) with time dependence exp(-i omega t) (see scatter.h).
 * Size parameter x = k D / 2 = pi D / lambda; relative refractive index m with
 * Im m >= 0 (loss).
 *
 * Amplitude convention. Bohren & Huffman write the far field as
 * E_s = e^{ikr}/(-ikr) S E_i, so the amplitude as a length (scatter.h: E_s = f E_i
 * e^{ikr}/r) is f = i S / k. In the forward direction S1(0) = S2(0). In the back
 * direction Bohren & Huffman's S2(pi) = -S1(pi) is the forward-scatter-alignment
 * sign; in the backscatter alignment used by the radar (the same fixed h, v vectors
 * for transmit and receive) a sphere has
 *     f_hh(pi) = f_vv(pi) = f_back = i S1(pi) / k,
 * which in the particle-frame theta-hat/phi-hat basis of scatter.h for broadside
 * incidence (+x in, -x out) is S_tt(pi) = f_back and S_pp(pi) = -f_back. For a small
 * sphere f_back -> k^2 (D/2)^3 K, K = (m^2-1)/(m^2+2): positive real when lossless.
 * The T-matrix (tmatrix.h) gives the same complex numbers (tested, phase included).
 */
#ifndef RAINPRINT_MIE_H
#define RAINPRINT_MIE_H

#include <complex.h>
#include <stddef.h>

#include "rainprint/status.h"

/* Largest size parameter accepted by rp_mie_sphere_eval (its coefficient arrays live
 * on the stack: RP_MIE_NMAX_CAP entries). */
#define RP_MIE_X_MAX 1000.0
#define RP_MIE_NMAX_CAP 1100

/* Number of terms of the series for size parameter x: Wiscombe (1980),
 * n_max = x + 4.05 x^{1/3} + 2 rounded to nearest, at least 1. x must be finite and
 * >= 0 (returns 1 otherwise). */
size_t rp_mie_nmax(double x);

/* Mie coefficients a_n, b_n (Bohren & Huffman 1983, eq. 4.88, with the logarithmic
 * derivative D_n(mx) by downward recurrence, eq. 4.89) for n = 1..nmax, stored at
 * a[n-1], b[n-1]; the caller allocates nmax entries in each (the arrays are also used
 * as scratch, nothing is allocated).
 * Preconditions: x finite in (0, RP_MIE_X_MAX]; m finite, Re m > 0, Im m >= 0;
 * 1 <= nmax <= 2000.
 * Coefficients of orders so far above x that y_n(x) overflows are set to 0 (their
 * modulus is below 1e-300).
 * Statuses: RP_OK; RP_EINVAL for NULL arrays, nmax out of range or non-finite /
 * non-positive x; RP_EDOM for x above RP_MIE_X_MAX or m outside the domain (and,
 * as a guard that no tested input reaches, for a coefficient that is not finite). */
rp_status rp_mie_coefficients(double x, double complex m, size_t nmax, double complex *a,
                              double complex *b, rp_error *err);

/* Amplitude functions S1, S2 (Bohren & Huffman eq. 4.74) at scattering angle with
 * cosine cos_angle in [-1, 1] from coefficients a, b (nmax entries each). Angular
 * functions pi_n, tau_n by upward recurrence (eq. 4.47). No allocation. */
void rp_mie_s12(const double complex *a, const double complex *b, size_t nmax,
                double cos_angle, double complex *s1, double complex *s2);

typedef struct {
  double qext, qsca, qback;            /* efficiencies (cross-section / (pi D^2/4)) */
  double complex s1_fwd, s1_back;      /* Bohren-Huffman S1(0), S1(pi) (dimensionless);
                                          S2(0) = S1(0), S2(pi) = -S1(pi) */
  double complex f_fwd_mm, f_back_mm;  /* f = i S1 / k in mm; f_back_mm is the
                                          backscatter-alignment value of both hh and vv */
  double sigma_back_mm2, c_ext_mm2, c_sca_mm2; /* 4 pi |f_back|^2, cross-sections, mm^2 */
  size_t nmax;                         /* terms used */
} rp_mie_result;

/* Scattering by a sphere of diameter d_mm at wavelength wavelength_mm (in the medium)
 * with relative refractive index m.
 * Qext = (2/x^2) sum (2n+1) Re(a_n + b_n), Qsca = (2/x^2) sum (2n+1)(|a_n|^2+|b_n|^2)
 * (B&H eq. 4.61, 4.62), Qback = 4 |S1(pi)|^2 / x^2 = sigma_back / (pi D^2/4).
 * Preconditions: d_mm, wavelength_mm finite and > 0; m as above; x <= RP_MIE_X_MAX.
 * Statuses: RP_OK, RP_EINVAL (NULL out, non-finite or non-positive sizes),
 * RP_EDOM (x too large, m outside the domain). out is written only on RP_OK. */
rp_status rp_mie_sphere_eval(double d_mm, double wavelength_mm, double complex m,
                             rp_mie_result *out, rp_error *err);

#endif
