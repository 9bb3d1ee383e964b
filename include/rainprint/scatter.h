/* scatter.h — conventions shared by every scattering method (Mie, Rayleigh, T-matrix).
 *
 * Time dependence exp(-i omega t) (Bohren & Huffman 1983): Im eps > 0 for loss and the
 * complex refractive index is m = sqrt(eps) with Im m > 0.
 *
 * Amplitude matrix: in the frame of the particle (symmetry axis along +z), for a plane
 * wave travelling along the unit vector k_inc and a scattered wave along k_sca, the far
 * field is E_s = (e^{ikr}/r) S E_i with E written in the (theta-hat, phi-hat) components
 * of each direction (Mishchenko, Travis & Lacis 2002, eq. 2.13 with their sign
 * conventions):
 *     s[0][0] = S_tt, s[0][1] = S_tp, s[1][0] = S_pt, s[1][1] = S_pp     (in mm).
 * Forward: C_ext(p) = (4 pi / k) Im(e_p . S(k,k) . e_p) = 2 lambda Im f(0).
 * Back:    sigma_back = 4 pi |f(pi)|^2.
 * A small sphere gives S = k^2 (D/2)^3 K (e_s . e_i) with K = (eps-1)/(eps+2), so
 * f is positive real for a lossless small sphere.
 *
 * theta-hat and phi-hat of a direction k: theta = acos(k_z), phi = atan2(k_y, k_x)
 * (phi = 0 on the z axis), theta-hat = (cos t cos p, cos t sin p, -sin t),
 * phi-hat = (-sin p, cos p, 0). */
#ifndef RAINPRINT_SCATTER_H
#define RAINPRINT_SCATTER_H

#include <complex.h>

#include "rainprint/status.h"

/* Speed of light for converting frequency to wavelength: lambda_mm = RP_C_MM_GHZ / f_ghz. */
#define RP_C_MM_GHZ 299.792458

/* Wavelength in mm of a frequency in GHz. */
double rp_wavelength_mm(double freq_ghz);

/* theta-hat and phi-hat of the unit vector k (see above). */
void rp_scatter_basis(const double k[3], double theta_hat[3], double phi_hat[3]);

/* A particle-frame amplitude evaluator: fills s (mm) for the unit vectors k_inc, k_sca.
 * ctx is the method's solved state (an rp_tmatrix_ws, an rp_rayleigh_spheroid, ...). */
typedef void (*rp_amplitude_fn)(const void *ctx, const double k_inc[3],
                                const double k_sca[3], double complex s[2][2]);

#endif
