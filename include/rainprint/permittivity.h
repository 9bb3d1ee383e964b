/* permittivity.h — complex relative permittivity of liquid water and the quantities
 * derived from it (refractive index, dielectric factor |K|^2).
 *
 * Model: the double-Debye form of Liebe, Hufford & Manabe (1991, Int. J. Infrared
 * Millimeter Waves 12, 659-675) with the constants of ITU-R P.840 (= Liebe et al. 1993;
 * checked against the Recommendation's text). Equations and
 * constants: the physics method notes in docs/ (water permittivity section).
 *
 * Convention (time dependence exp(-i omega t), Bohren & Huffman 1983):
 *   eps = eps' + i eps'' with eps'' > 0 for a lossy medium,
 *   m = sqrt(eps) with Im m >= 0. */
#ifndef RAINPRINT_PERMITTIVITY_H
#define RAINPRINT_PERMITTIVITY_H

#include <complex.h>

#include "rainprint/status.h"

/* Validity range accepted by rp_water_permittivity (inclusive). The model is fitted up
 * to about 1 THz; the library restricts it to radar use. The temperature range keeps
 * to liquid rain, slightly supercooled included (see the method notes). */
#define RP_WATER_FREQ_MIN_GHZ 1.0
#define RP_WATER_FREQ_MAX_GHZ 100.0
#define RP_WATER_TEMP_MIN_C (-10.0)
#define RP_WATER_TEMP_MAX_C 50.0

/* Complex relative permittivity of pure liquid water.
 *   freq_ghz: frequency in GHz, in [1, 100].
 *   temp_c:   water temperature in degrees Celsius, in [-10, 50].
 *   eps:      output (non-NULL), eps' + i eps'' with eps'' > 0.
 * Returns RP_OK; RP_EINVAL for NaN/Inf inputs or a NULL eps; RP_EDOM for a finite
 * frequency or temperature outside the range. On error *eps is left unchanged and
 * err (may be NULL) names the quantity and value. */
rp_status rp_water_permittivity(double freq_ghz, double temp_c, double complex *eps,
                                rp_error *err);

/* Complex refractive index m = sqrt(eps), on the branch with Im m >= 0 (for eps on
 * the negative real axis the sign of a zero imaginary part does not matter: the
 * result is i sqrt(|eps|)). Pure function, no status; NaN in gives NaN out. */
double complex rp_water_refractive_index(double complex eps);

/* Dielectric factor |K|^2 = |(eps - 1)/(eps + 2)|^2 (dimensionless).
 * Returns +INFINITY for eps == -2 exactly (the limit), NaN when eps has a NaN part. */
double rp_dielectric_factor_k2(double complex eps);

#endif
