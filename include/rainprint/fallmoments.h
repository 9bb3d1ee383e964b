/* fallmoments.h — Doppler and rain moments of a normalised gamma DSD that do not depend
 * on Nw, tabulated once from a scattering table on a (ln D0, mu) grid.
 *
 * For N(D) = Nw f(mu) (D/D0)^mu exp(-(3.67 + mu) D/D0) over the default truncation
 * [RP_DSD_DMIN_DEFAULT_MM, RP_DSD_DMAX_DEFAULT_MM] (dsd.h), with sigma_b(D) the table's
 * back_hh2_mm2 column and v(D) its fall_speed_m_s column (still air, sea level):
 *   v_z     = ∫ v sigma_b N dD / ∫ sigma_b N dD                (m/s)
 *   sigma_z = sqrt(∫ (v - v_z)^2 sigma_b N dD / ∫ sigma_b N dD) (m/s)
 *   R / Nw  = 6 pi 1e-4 ∫ v D^3 N dD / Nw                       (mm/h per m^-3 mm^-1)
 *   W / Nw  = (pi/6) 1e-3 ∫ D^3 N dD / Nw                       (g/m^3 per m^-3 mm^-1)
 *   D_m     = ∫ D^4 N dD / ∫ D^3 N dD                           (mm)
 * (Doviak & Zrnić 1993 §5.3 for v_z and its spread, from memory; rain rate and water
 * content as in dsd.h). The integrals use the trapezoid rule on the table diameters
 * refined 8 times, sigma_b / D^6 and v interpolated linearly in between.
 * Read-only after allocation: share it between threads. */
#ifndef RAINPRINT_FALLMOMENTS_H
#define RAINPRINT_FALLMOMENTS_H

#include "rainprint/status.h"
#include "rainprint/table.h"

typedef struct rp_fallmom rp_fallmom;

typedef struct {
  double vz_ms, sigma_z_ms;         /* reflectivity-weighted fall speed and spread */
  double rain_per_nw, lwc_per_nw;   /* R / Nw (mm/h), W / Nw (g/m^3) */
  double dm_mm;
} rp_fallmom_value;

/* Tabulate from table t (borrowed during the call; needs d_mm, back_hh2_mm2 and
 * fall_speed_m_s covering [0.1, 8] mm) on the fast-path domain of gate.h
 * (RP_GATE_FAST_D0_* x RP_GATE_FAST_MU_*). Caller frees *out with rp_fallmom_free.
 * Statuses: RP_EINVAL (NULL), RP_ETABLE (fewer than 2 diameters, diameters not
 * increasing, a non-finite or negative value, or the table not covering the
 * truncation), RP_ENOMEM. */
rp_status rp_fallmom_alloc(const rp_table *t, rp_fallmom **out, rp_error *err);
void rp_fallmom_free(rp_fallmom *f); /* NULL ok */

/* Bilinear interpolation in (ln D0, mu). No allocation. D0 and mu are clamped to the
 * grid (callers pass checked values). */
void rp_fallmom_eval(const rp_fallmom *f, double d0_mm, double mu, rp_fallmom_value *out);

#endif
