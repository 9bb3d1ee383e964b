/* rayleigh.h — Rayleigh (Rayleigh-Gans electrostatic) scattering by a small homogeneous
 * spheroid: depolarisation factors, polarisabilities and the amplitude matrix in the
 * conventions of rainprint/scatter.h.
 *
 * Particle frame: symmetry axis along z; semi-axes a (x, y; equatorial) and b (z);
 * axis ratio r = b/a (< 1 oblate, > 1 prolate). The drop is replaced by a point dipole
 * with polarisability tensor alpha_a (x x + y y) + alpha_b z z (mm^3), so the amplitude
 * dyadic is F = k^2/(4 pi) [alpha_a (x x + y y) + alpha_b z z] (mm) and
 * s[p][q] = e_p(k_sca) . F . e_q(k_inc), e_0 = theta-hat, e_1 = phi-hat.
 * No radiative-reaction correction: the forward amplitude carries absorption only, so
 * the optical theorem fails at order (k D)^3 relative; valid for |m| k D/2 << 1.
 * Method and references: Bohren & Huffman (1983) §5.3; the method notes in docs/. */
#ifndef RAINPRINT_RAYLEIGH_H
#define RAINPRINT_RAYLEIGH_H

#include <complex.h>

#include "rainprint/scatter.h"
#include "rainprint/status.h"

/* Accepted axis ratios (inclusive): from thin discs to thin needles. */
#define RP_RAYLEIGH_AXIS_RATIO_MIN 1e-3
#define RP_RAYLEIGH_AXIS_RATIO_MAX 1e3
/* Largest equal-volume diameter accepted (mm). */
#define RP_RAYLEIGH_D_MAX_MM 10.0

/* Solved state of one spheroid (plain value, no heap memory).
 *   k_per_mm:    wavenumber 2 pi / lambda (mm^-1)
 *   alpha_a_mm3: polarisability along x and y (equatorial semi-axis a)
 *   alpha_b_mm3: polarisability along z (symmetry semi-axis b) */
typedef struct {
  double k_per_mm;
  double complex alpha_a_mm3, alpha_b_mm3;
} rp_rayleigh_spheroid;

/* Depolarisation (demagnetisation) factors of a spheroid of axis ratio r = b/a:
 * l_a along each equatorial axis, l_b along the symmetry axis; 2 l_a + l_b = 1,
 * l_a = l_b = 1/3 for a sphere, l_b -> 1 for a thin disc (r -> 0), l_b -> 0 for a
 * thin needle (r -> infinity). Dimensionless.
 *   axis_ratio in [1e-3, 1e3]; l_a, l_b non-NULL.
 * Returns RP_OK; RP_EINVAL for NaN/Inf or NULL pointers; RP_EDOM for a finite axis
 * ratio outside the range. Outputs are unchanged on error. */
rp_status rp_rayleigh_depolarization(double axis_ratio, double *l_a, double *l_b,
                                     rp_error *err);

/* Fill r for a spheroid of equal-volume diameter d_mm, axis ratio b/a, at wavelength
 * wavelength_mm (in the surrounding medium, taken as vacuum/air), relative permittivity
 * eps (Im eps >= 0, exp(-i omega t)). alpha_j = V (eps - 1)/(1 + L_j (eps - 1)),
 * V = pi d^3 / 6.
 *   d_mm in (0, 10]; axis_ratio in [1e-3, 1e3]; wavelength_mm > 0 and finite.
 * Returns RP_OK; RP_EINVAL for NaN/Inf arguments, a NULL r or Im eps < 0 (wrong sign
 * convention); RP_EDOM for d_mm, axis_ratio or wavelength_mm out of range, or when
 * |1 + L_j (eps - 1)| < 1e-12 (electrostatic resonance: no finite polarisability).
 * *r is unchanged on error. */
rp_status rp_rayleigh_spheroid_init(rp_rayleigh_spheroid *r, double d_mm, double axis_ratio,
                                    double wavelength_mm, double complex eps, rp_error *err);

/* Amplitude matrix s (mm) in the particle frame for unit vectors k_inc (incidence) and
 * k_sca (scattering), theta-hat/phi-hat bases of rp_scatter_basis (see scatter.h).
 * ctx is a const rp_rayleigh_spheroid * filled by rp_rayleigh_spheroid_init. Matches
 * rp_amplitude_fn. Preconditions (not checked): ctx valid, k_inc and k_sca unit length.
 * Broadside (k_inc = +x): forward s = diag(f_b, f_a); backward (k_sca = -x)
 * s = diag(f_b, -f_a) — the phi-hat sign flip of this basis; in the radar's backscatter
 * alignment f_hh = f_a, f_vv = f_b with f_j = k^2 alpha_j / (4 pi). */
void rp_rayleigh_amplitude(const void *ctx, const double k_inc[3], const double k_sca[3],
                           double complex s[2][2]);

#endif
