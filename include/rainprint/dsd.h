/* dsd.h — raindrop size distributions (DSDs): analytic models, measured spectra, and
 * their moments and derived rain quantities.
 *
 * Units: drop diameter D in mm, N(D) in m^-3 mm^-1, moments M_n = ∫ D^n N(D) dD in
 * mm^n m^-3, liquid water content in g m^-3, rain rate in mm h^-1, Z in mm^6 m^-3.
 *
 * Models (formulas and references in docs/method.md §7):
 *   exponential        N(D) = N0 exp(-Lambda D)
 *   Marshall–Palmer    N0 = 8000 m^-3 mm^-1, Lambda = 4.1 R^-0.21 mm^-1 (Marshall & Palmer 1948)
 *   gamma              N(D) = N0 D^mu exp(-Lambda D)                    (Ulbrich 1983)
 *   normalised gamma   N(D) = Nw f(mu) (D/Dx)^mu exp(-(c + mu) D/Dx),
 *                      f(mu) = (6/c^4) (c + mu)^(mu+4) / Gamma(mu + 4)
 *       D0 form: Dx = D0, c = 3.67 (Bringi et al. 2003; Lambda D0 = 3.67 + mu is
 *                Ulbrich's approximation, so the median of the result is close to,
 *                not exactly, D0, and the given Nw equals 3.67^4 W/(pi rho_w D0^4)).
 *       Dm form: Dx = Dm, c = 4 (Testud et al. 2001): Dm = M4/M3 and
 *                Nw = 4^4 W/(pi rho_w Dm^4) hold exactly (untruncated).
 *   spectrum           piecewise constant over caller-owned bins (centre, width, conc).
 *
 * Truncation: every DSD carries [dmin_mm, dmax_mm] (defaults 0.1 and 8 mm for analytic
 * models; for spectra the outer bin edges, dmax capped at 10 mm). N(D) is 0 outside.
 * dmin_mm = 0 and dmax_mm = INFINITY are allowed to obtain the untruncated closed
 * forms (for checks); the rain-rate integral is always cut at RP_DSD_D_LIMIT_MM.
 *
 * Thread safety: all functions are re-entrant; no allocation happens here. */
#ifndef RAINPRINT_DSD_H
#define RAINPRINT_DSD_H

#include <stddef.h>

#include "rainprint/fallspeed.h"
#include "rainprint/status.h"

/* Default truncation of analytic DSDs (mm). */
#define RP_DSD_DMIN_DEFAULT_MM 0.1
#define RP_DSD_DMAX_DEFAULT_MM 8.0
/* Largest drop diameter any DSD may extend to with a finite truncation (mm). */
#define RP_DSD_D_LIMIT_MM 10.0
/* Accepted shape parameter range of the gamma family. */
#define RP_DSD_MU_MIN (-2.0)
#define RP_DSD_MU_MAX 15.0
/* Slack for spectrum bin edges written in decimals (mm): a lower edge down to -this
 * counts as 0, and neighbours may overlap by this much (used by rp_dsd_spectrum, the
 * spectrum CSV reader and the gate integrator alike). */
#define RP_DSD_BIN_SLACK_MM 1e-9
/* Bounds on every input quantity (one place; the table with sources and reasons is in
 * docs/method.md §16). They keep every integral in a physical range, far from
 * overflow, so that a result is either finite or an error:
 *   Nw (normalised intercept)      [RP_DSD_NW_MIN, RP_DSD_NW_MAX] m^-3 mm^-1
 *   Marshall-Palmer rain rate      [RP_DSD_RAIN_RATE_MIN, RP_DSD_RAIN_RATE_MAX] mm h^-1
 *   liquid water content implied by the parameters of any analytic model (untruncated,
 *   so it bounds every truncation) and of a spectrum, and the LWC of any result
 *                                  [RP_DSD_LWC_MIN, RP_DSD_LWC_MAX] g m^-3
 *   spectrum bin concentration     [0, RP_DSD_CONC_MAX] m^-3 mm^-1
 * N0 and Lambda have no bound of their own (the units of N0 depend on mu): they are
 * bounded through the LWC they imply. Out of range: RP_EDOM naming the quantity. */
#define RP_DSD_NW_MIN 1e-2
#define RP_DSD_NW_MAX 1e9
#define RP_DSD_RAIN_RATE_MIN 1e-3
#define RP_DSD_RAIN_RATE_MAX 2000.0
#define RP_DSD_LWC_MIN 1e-12
#define RP_DSD_LWC_MAX 1000.0
#define RP_DSD_CONC_MAX 1e9
/* Constants c of the two normalised-gamma forms. */
#define RP_DSD_C_D0 3.67
#define RP_DSD_C_DM 4.0

typedef enum {
  RP_DSD_EXPONENTIAL,
  RP_DSD_MARSHALL_PALMER,
  RP_DSD_GAMMA,
  RP_DSD_NORMALIZED_GAMMA_D0,
  RP_DSD_NORMALIZED_GAMMA_DM,
  RP_DSD_SPECTRUM
} rp_dsd_model;

typedef struct {
  rp_dsd_model model;
  /* Gamma form N0 D^mu exp(-lambda D): always filled for the analytic models (derived
   * for Marshall–Palmer and normalised gamma); n0 is in m^-3 mm^-(1+mu). 0 for spectra. */
  double n0, lambda_per_mm, mu;
  /* The parameters the user gave, where relevant (0 otherwise). */
  double nw_m3_mm, d0_mm, dm_mm, rain_rate_mm_h;
  /* Truncation: N(D) = 0 outside [dmin_mm, dmax_mm]. */
  double dmin_mm, dmax_mm;
  /* Spectrum: borrowed pointers (the caller owns them and keeps them alive while the
   * DSD is used), n_bins entries each. Bins are included when their centre lies in
   * [dmin_mm, dmax_mm]. */
  const double *bin_center_mm, *bin_width_mm, *bin_conc_m3_mm;
  size_t n_bins;
} rp_dsd;

/* Derived quantities of a DSD, all over its truncation interval. */
typedef struct {
  double nt_m3;             /* total concentration M0 (m^-3) */
  double lwc_g_m3;          /* liquid water content W = (pi/6) 1e-3 M3 (g m^-3) */
  double rain_rate_mm_h;    /* R = 6 pi 1e-4 ∫ v D^3 N dD (mm h^-1) */
  double dm_mm;             /* mass-weighted mean diameter M4/M3 (mm) */
  double d0_mm;             /* median volume diameter (mm) */
  double sigma_m_mm;        /* mass-weighted standard deviation of D (mm) */
  double nw_m3_mm;          /* normalised intercept of the Dm form (Testud et al. 2001):
                               4^4 W/(pi rho_w Dm^4) (m^-3 mm^-1); the JSON key
                               "nw_m3_mm" of the tool is this one */
  double nw_d0_m3_mm;       /* normalised intercept of the D0 form (Bringi et al. 2003):
                               3.67^4 W/(pi rho_w D0^4) (m^-3 mm^-1) */
  double z_rayleigh_mm6_m3; /* M6 (mm^6 m^-3) */
  double z_rayleigh_dbz;    /* 10 log10 M6 (dBZ) */
} rp_dsd_moments;

/* Constructors. Each fills *d completely (truncation set to the defaults) and returns
 * RP_OK, or leaves *d untouched and returns:
 *   RP_EINVAL  d is NULL, or a parameter is NaN, infinite, zero or negative;
 *   RP_EDOM    mu outside [RP_DSD_MU_MIN, RP_DSD_MU_MAX], D0/Dm above
 *              RP_DSD_D_LIMIT_MM (gamma and normalised gamma only), Nw or the rain rate
 *              outside its bounds, or an implied (untruncated) LWC outside
 *              [RP_DSD_LWC_MIN, RP_DSD_LWC_MAX] (the message names the parameters).
 * n0: m^-3 mm^-1 (exponential) or m^-3 mm^-(1+mu) (gamma); lambda in mm^-1;
 * rain_rate in mm h^-1; nw in m^-3 mm^-1; d0/dm in mm. */
rp_status rp_dsd_exponential(rp_dsd *d, double n0, double lambda_per_mm, rp_error *err);
rp_status rp_dsd_marshall_palmer(rp_dsd *d, double rain_rate_mm_h, rp_error *err);
rp_status rp_dsd_gamma(rp_dsd *d, double n0, double mu, double lambda_per_mm, rp_error *err);
rp_status rp_dsd_normalized_gamma_d0(rp_dsd *d, double nw, double d0_mm, double mu,
                                     rp_error *err);
rp_status rp_dsd_normalized_gamma_dm(rp_dsd *d, double nw, double dm_mm, double mu,
                                     rp_error *err);

/* A measured spectrum of n bins: centre (mm), width (mm) and concentration
 * (m^-3 mm^-1). The arrays are borrowed, not copied: the caller keeps them alive and
 * unchanged while d is used. Preconditions checked: n >= 1, finite centres and widths
 * > 0, lower edges >= 0, centres strictly increasing, bins not overlapping (1e-9 mm
 * slack for decimal round-off), concentrations finite and >= 0, the first bin starting
 * below 10 mm. Truncation defaults to [lower edge of the first bin, min(upper edge of
 * the last bin, 10 mm)].
 * Returns RP_OK; RP_EINVAL (message names the bin index and value); RP_EDOM for a
 * concentration above RP_DSD_CONC_MAX or a total LWC above RP_DSD_LWC_MAX. */
rp_status rp_dsd_spectrum(rp_dsd *d, const double *center, const double *width,
                          const double *conc, size_t n, rp_error *err);

/* Set the truncation interval. Accepts 0 <= dmin_mm < dmax_mm with dmax_mm <= 10 mm or
 * dmax_mm = +INFINITY (untruncated upper end). Returns RP_EINVAL for NULL d, NaN,
 * negative dmin or dmin >= dmax; RP_EDOM for a finite dmax above 10 mm. */
rp_status rp_dsd_set_truncation(rp_dsd *d, double dmin_mm, double dmax_mm, rp_error *err);

/* N(D) in m^-3 mm^-1; 0 for D outside [dmin, dmax] or D <= 0, NaN for NaN D or a NULL
 * d. For spectra, the concentration of the bin containing D (lower edge inclusive; at a shared edge the upper bin). */
double rp_dsd_eval(const rp_dsd *d, double d_mm);

/* Moment M_n = ∫ D^n N(D) dD over [dmin, dmax] (mm^n m^-3), for any finite real n.
 * Analytic models: closed form N0 Lambda^-(mu+n+1) ∫ t^(mu+n) e^-t dt over
 * [Lambda dmin, Lambda dmax] via the regularised incomplete gamma functions; spectra:
 * sum of N_i D_i^n width_i over the included bins.
 * Returns RP_OK; RP_EINVAL (NULL, NaN/infinite n, malformed d); RP_EDOM when the
 * integral diverges (mu + n + 1 <= 0 with dmin = 0) or overflows; RP_EGSL when a GSL
 * special function fails. */
rp_status rp_dsd_moment(const rp_dsd *d, double n, double *m, rp_error *err);

/* All derived quantities (see rp_dsd_moments). The rain rate uses fall model `fall`
 * times density_factor (1 at sea level; see rp_fallspeed_density_factor), integrated
 * by adaptive Gauss–Kronrod quadrature to a relative 1e-10 over
 * [dmin, min(dmax, 10 mm)] (bins for spectra). D0 is found by bracketing the
 * cumulative M3 fraction = 0.5 (analytic) or by linear interpolation inside the bin
 * where it crosses 0.5 (spectra).
 * Every field of a successful result is finite.
 * Returns RP_OK; RP_EINVAL (NULL, density_factor not finite or <= 0, malformed d);
 * RP_EDOM (no water in the interval: M3 = 0, e.g. an empty spectrum, or an LWC below
 * RP_DSD_LWC_MIN, e.g. a truncation far in the tail; a result that is not finite or
 * an LWC above RP_DSD_LWC_MAX, e.g. from a hand-edited DSD); RP_ENOCONV
 * (quadrature or root finder did not converge); RP_EGSL; or any status of
 * rp_fallspeed_eval, with its message. */
rp_status rp_dsd_moments_eval(const rp_dsd *d, rp_fall_model fall, double density_factor,
                              rp_dsd_moments *out, rp_error *err);

/* The normalising function f(mu) = (6/c^4) (c + mu)^(mu+4) / Gamma(mu + 4) of the
 * normalised gamma DSD (dimensionless); f(0) = 1 for any c. NaN if mu or c is not
 * finite or c + mu <= 0. */
double rp_dsd_normalized_f(double mu, double c);

/* Model name: "exponential", "marshall-palmer", "gamma", "normalized-gamma" (both
 * normalised forms), "spectrum"; "unknown" otherwise. Static storage. */
const char *rp_dsd_model_name(rp_dsd_model m);

#endif
