/* beam.h — where a radar beam is: height and ground range of a gate from the
 * effective-earth-radius model, and the sample offsets and weights of a Gaussian beam.
 *
 * Geometry (Doviak & Zrnić 1993, eqs. 2.28a/b, from memory):
 *   h = sqrt(r^2 + (k_e a)^2 + 2 r k_e a sin(theta_e)) - k_e a
 *   s = k_e a asin(r cos(theta_e) / (k_e a + h))
 * with k_e = 4/3 (standard refraction) and a = 6371 km (the mean earth radius of the
 * IUGG), r the slant range, theta_e the elevation, h the height above the antenna and s
 * the distance along the earth's surface.
 *
 * Beam pattern: a Gaussian two-way power pattern with half-power (one-way) beamwidth
 * theta_1, f^4(theta) = exp(-8 ln2 theta^2 / theta_1^2), i.e. a normal weight of
 * standard deviation sigma = theta_1 / (4 sqrt(ln 2)) in each direction (Doviak & Zrnić
 * 1993 eq. 5.75 form, from memory), sampled with n-point Gauss–Hermite rules.
 * No state; every function is pure. */
#ifndef RAINPRINT_BEAM_H
#define RAINPRINT_BEAM_H

#include <stddef.h>

#include "rainprint/status.h"

#define RP_BEAM_EARTH_RADIUS_M 6371000.0
#define RP_BEAM_KE (4.0 / 3.0)
/* Largest Gauss–Hermite order per direction (beam_samples). */
#define RP_BEAM_SAMPLES_MAX 5

/* Height of the beam centre above the antenna (m) at slant range range_m (>= 0) and
 * elevation elevation_deg, 4/3-earth model. NaN for NaN input. */
double rp_beam_height_m(double range_m, double elevation_deg);

/* Distance along the earth's surface (m) to the point below the beam centre. */
double rp_beam_ground_range_m(double range_m, double elevation_deg);

/* Both at once (either pointer may be NULL). */
void rp_beam_geometry(double range_m, double elevation_deg, double *height_m,
                      double *ground_m);

/* Standard deviation (deg) of the two-way Gaussian power pattern in one direction for a
 * half-power beamwidth beamwidth_deg: theta_1 / (4 sqrt(ln 2)). */
double rp_beam_sigma_deg(double beamwidth_deg);

/* The n-point rule (1 <= n <= RP_BEAM_SAMPLES_MAX) for a normal weight of standard
 * deviation 1: offsets[i] (in units of sigma) and weights[i] summing to 1, i.e. the
 * Gauss–Hermite nodes times sqrt(2) and weights over sqrt(pi). Arrays hold n values.
 * Statuses: RP_EINVAL (NULL arrays, n outside the range). */
rp_status rp_beam_gauss_hermite(int n, double *offsets, double *weights, rp_error *err);

#endif
