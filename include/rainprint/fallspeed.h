/* fallspeed.h — terminal fall speed of raindrops in still air and its air-density
 * correction with height.
 *
 * Speeds refer to sea-level laboratory air (1013.25 hPa, 20 C, density
 * RP_FALLSPEED_RHO_REF_KG_M3). Multiply by rp_fallspeed_density_factor() for air of
 * another density. Formulas, table and references: the method notes in docs/
 * (fall-speed section). */
#ifndef RAINPRINT_FALLSPEED_H
#define RAINPRINT_FALLSPEED_H

#include "rainprint/status.h"

typedef enum { RP_FALL_ATLAS, RP_FALL_BRANDES, RP_FALL_GUNN_KINZER, RP_FALL_COUNT } rp_fall_model;

#define RP_FALL_DEFAULT RP_FALL_ATLAS

/* Largest equal-volume diameter accepted (mm). */
#define RP_FALLSPEED_D_MAX_MM 10.0
/* Highest height accepted by the density correction (km above mean sea level). */
#define RP_FALLSPEED_HEIGHT_MAX_KM 20.0
/* Density of dry air at 1013.25 hPa and 20 C (kg m^-3): p / (R_d T) with
 * R_d = 287.0531 J kg^-1 K^-1, the reference density of the speeds. */
#define RP_FALLSPEED_RHO_REF_KG_M3 1.2041

/* CLI name: "atlas", "brandes", "gunn-kinzer". Static string; "unknown" for an invalid m. */
const char *rp_fallspeed_name(rp_fall_model m);

/* Model from its CLI name (exact match). RP_OK; RP_EINVAL for NULL arguments or an
 * unknown name (the message lists the valid names). *m is unchanged on error. */
rp_status rp_fallspeed_from_name(const char *name, rp_fall_model *m, rp_error *err);

/* Terminal fall speed v (m s^-1) of a drop of equal-volume diameter d_mm in still air
 * at the reference density (1013.25 hPa, 20 C).
 *   d_mm in (0, 10] mm. Atlas and Brandes formulas are clipped at 0 for tiny drops;
 *   Gunn-Kinzer interpolates its table (Steffen monotone cubic), scales as D^2 (Stokes)
 *   below 0.1 mm and holds 9.17 m/s above 5.8 mm.
 * Returns RP_OK; RP_EINVAL for NaN/Inf d_mm, an invalid model or a NULL v_m_s;
 * RP_EDOM for a finite d_mm outside (0, 10]. *v_m_s is unchanged on error. */
rp_status rp_fallspeed_eval(rp_fall_model m, double d_mm, double *v_m_s, rp_error *err);

/* Air-density correction factor (rho_ref / rho(h))^0.4 (Foote & du Toit 1969) to
 * multiply the speeds by, with rho(h) from the U.S. Standard Atmosphere 1976 (dry air,
 * geometric height converted to geopotential; troposphere lapse 6.5 K/km to 11 km,
 * isothermal 216.65 K above) and rho_ref = RP_FALLSPEED_RHO_REF_KG_M3.
 * Note: factor(0) = (1.2041/1.2250)^0.4 = 0.9931, not 1, because the standard sea-level
 * air (15 C) is denser than the 20 C laboratory air of the speeds.
 *   height_km in [0, 20] km above mean sea level.
 * Returns RP_OK; RP_EINVAL for NaN/Inf or a NULL factor; RP_EDOM outside [0, 20] km. */
rp_status rp_fallspeed_density_factor(double height_km, double *factor, rp_error *err);

#endif
