/* permittivity.c — complex permittivity of liquid water, double-Debye model.
 *
 * Method: the double-Debye model of Liebe, Hufford & Manabe (1991, "A model for the
 * complex permittivity of water at frequencies below 1 THz", Int. J. Infrared Millimeter
 * Waves 12, 659-675) with the constants of ITU-R P.840 (eqs. 6-11 of P.840-6), which are
 * those of Liebe et al. (1993); checked against the Recommendation's text. (Liebe et al.
 * 1991 differ slightly: eps2 = 3.52 + 7.52 (1 - 300/T) and 146.4 for 146.)
 *
 *   theta = 300 / T            (T in kelvin)
 *   eps0  = 77.66 + 103.3 (theta - 1)       static permittivity
 *   eps1  = 0.0671 eps0,  eps2 = 3.52
 *   fp    = 20.20 - 146 (theta - 1) + 316 (theta - 1)^2  GHz   (principal relaxation)
 *   fs    = 39.8 fp                                     GHz   (secondary relaxation)
 *   eps'  = (eps0 - eps1)/(1 + (f/fp)^2) + (eps1 - eps2)/(1 + (f/fs)^2) + eps2
 *   eps'' = f (eps0 - eps1)/(fp (1 + (f/fp)^2)) + f (eps1 - eps2)/(fs (1 + (f/fs)^2))
 *
 * This is eps = eps0 - f [ (eps0 - eps1)/(f + i fp) + (eps1 - eps2)/(f + i fs) ], a sum
 * of Debye terms for exp(-i omega t): eps'' > 0 for f > 0 (tested). */
#include "rainprint/permittivity.h"

#include <math.h>

rp_status rp_water_permittivity(double freq_ghz, double temp_c, double complex *eps,
                                rp_error *err) {
  if (eps == NULL) return rp_error_set(err, RP_EINVAL, "permittivity output pointer is NULL");
  if (!isfinite(freq_ghz))
    return rp_error_set(err, RP_EINVAL, "frequency %g GHz is not a finite number", freq_ghz);
  if (!isfinite(temp_c))
    return rp_error_set(err, RP_EINVAL, "water temperature %g C is not a finite number",
                        temp_c);
  if (freq_ghz < RP_WATER_FREQ_MIN_GHZ || freq_ghz > RP_WATER_FREQ_MAX_GHZ)
    return rp_error_set(err, RP_EDOM,
                        "frequency %g GHz outside [%g, %g] GHz of the water permittivity model",
                        freq_ghz, RP_WATER_FREQ_MIN_GHZ, RP_WATER_FREQ_MAX_GHZ);
  if (temp_c < RP_WATER_TEMP_MIN_C || temp_c > RP_WATER_TEMP_MAX_C)
    return rp_error_set(err, RP_EDOM,
                        "water temperature %g C outside [%g, %g] C of the permittivity model",
                        temp_c, RP_WATER_TEMP_MIN_C, RP_WATER_TEMP_MAX_C);

  const double t_k = temp_c + 273.15;
  const double th1 = 300.0 / t_k - 1.0; /* theta - 1 */
  const double eps0 = 77.66 + 103.3 * th1;
  const double eps1 = 0.0671 * eps0;
  const double eps2 = 3.52;
  const double fp = 20.20 - 146.0 * th1 + 316.0 * th1 * th1;
  const double fs = 39.8 * fp;
  const double up = freq_ghz / fp, us = freq_ghz / fs;
  const double dp = 1.0 + up * up, ds = 1.0 + us * us;
  const double re = (eps0 - eps1) / dp + (eps1 - eps2) / ds + eps2;
  const double im = up * (eps0 - eps1) / dp + us * (eps1 - eps2) / ds;
  *eps = re + im * (double complex)I; /* exact for finite re, im */
  return RP_OK;
}

double complex rp_water_refractive_index(double complex eps) {
  double complex m = csqrt(eps);
  /* csqrt returns Re >= 0; for Im eps = -0 on the negative real axis it returns -i|.|,
   * so flip onto the Im m >= 0 branch. */
  if (cimag(m) < 0.0) m = -m;
  return m;
}

double rp_dielectric_factor_k2(double complex eps) {
  if (isnan(creal(eps)) || isnan(cimag(eps))) return (double)NAN;
  const double complex den = eps + 2.0;
  if (creal(den) == 0.0 && cimag(den) == 0.0) return (double)INFINITY;
  const double complex k = (eps - 1.0) / den;
  const double a = cabs(k);
  return a * a;
}
