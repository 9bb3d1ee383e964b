/* iq.h — synthetic dual-polarisation I/Q pulses of one radar gate.
 *
 * A gate is M pulses at a pulse repetition time T_s of complex H and V samples whose
 * signal has a given Doppler spectrum (Gaussian, or a mixture of Gaussians such as the
 * fall-speed spectrum of a DSD), given powers (SNR and Z_DR), H-V correlation rho_hv
 * and differential phase Phi_DP, plus independent white receiver noise in each channel.
 * Method (Zrnić 1975, J. Appl. Meteor. 14, 619-620): random spectral coefficients with
 * exponentially distributed power and uniform phase (complex Gaussian), inverse FFT
 * (FFTW). Details and the choices made are in src/signal/iq.c and docs/method.md §14.
 *
 * Conventions (the project's exp(-i omega t), see docs/method.md):
 *   - radial velocity positive AWAY from the radar; a receding scatterer advances the
 *     baseband phase by +4 pi v T_s / lambda per pulse, so arg R(T_s) > 0;
 *   - Nyquist velocity v_a = lambda / (4 T_s); velocities fold into [-v_a, v_a);
 *   - Phi_DP = arg <H V*> (degrees), the sign of delta_hv = arg <f_hh f_vv*> (gate.h):
 *     positive for oblate rain;
 *   - samples are normalised: the receiver noise power E|n|^2 is 1 in each channel,
 *     the H signal power is 10^(SNR/10), the V signal power 10^((SNR - Z_DR)/10).
 *
 * Random numbers come only from the rp_rng stream the caller passes (key it by gate or
 * realisation, e.g. rp_rng_key(RP_RNG_PULSES, ray, gate, 0)), so results do not depend
 * on the thread count. A workspace is used by one thread at a time; give each thread
 * its own. */
#ifndef RAINPRINT_IQ_H
#define RAINPRINT_IQ_H

#include <complex.h>
#include <stddef.h>

#include "rainprint/dsd.h"
#include "rainprint/rng.h"
#include "rainprint/status.h"
#include "rainprint/table.h"

/* Largest number of pulses per gate accepted. */
#define RP_IQ_MAX_PULSES 65536
/* SNR accepted (dB): outside it the request is absurd (RP_EDOM). */
#define RP_IQ_SNR_MIN_DB (-100.0)
#define RP_IQ_SNR_MAX_DB 120.0
/* |Z_DR| accepted (dB). */
#define RP_IQ_ZDR_MAX_DB 30.0

/* What the synthesis of one gate needs. Velocity and width describe the Gaussian
 * spectrum (ignored when a spectrum is passed); zh_dbz is carried to the estimates
 * (a calibrated radar: the estimated Z_h is zh_dbz + 10 log10(S_est / S_true)). */
typedef struct {
  double zh_dbz;          /* reflectivity of the gate (dBZ), any finite value */
  double zdr_db;          /* differential reflectivity (dB), |.| <= RP_IQ_ZDR_MAX_DB */
  double rhohv;           /* H-V correlation coefficient, in [0, 1] */
  double phidp_deg;       /* differential phase (deg), any finite value (wraps) */
  double velocity_m_s;    /* mean radial velocity (m/s, + away), any finite (folds) */
  double width_m_s;       /* spectrum width (standard deviation, m/s), 0 <= w <= v_a */
  double snr_db;          /* H signal-to-noise ratio (dB) */
  size_t n_pulses;        /* M, 2 <= M <= RP_IQ_MAX_PULSES */
  double prt_s;           /* pulse repetition time T_s (s) > 0 */
  double wavelength_mm;   /* radar wavelength (mm) > 0 */
} rp_iq_params;

/* A Doppler spectrum as a mixture of Gaussians: component c has relative power
 * weight[c] >= 0 (the weights need not sum to 1), mean mean_m_s[c] (+ away) and
 * standard deviation width_m_s[c] in [0, v_a]. Borrowed arrays of n entries. */
typedef struct {
  size_t n;
  const double *weight, *mean_m_s, *width_m_s;
} rp_iq_spectrum;

/* Nyquist velocity lambda / (4 T_s) in m/s (no checks: NaN for bad input). */
double rp_iq_nyquist_m_s(double prt_s, double wavelength_mm);

/* Velocity of periodogram bin k of M (frequency k/M cycles per pulse): 2 v_a k / M
 * folded into [-v_a, v_a) (m/s; no checks). */
double rp_iq_bin_velocity_m_s(const rp_iq_params *p, size_t k);

/* Check p (and spec when not NULL) for synthesis. RP_OK, or RP_EINVAL for NULL, NaN or
 * infinite values, M < 2 or above RP_IQ_MAX_PULSES, width < 0, rho_hv outside [0, 1],
 * PRT or wavelength <= 0, negative spectrum weights or all weights zero; RP_EDOM for
 * a width (of the Gaussian or of any component) larger than the Nyquist velocity, SNR
 * outside [RP_IQ_SNR_MIN_DB, RP_IQ_SNR_MAX_DB] or |Z_DR| > RP_IQ_ZDR_MAX_DB. The message
 * names the quantity and its value. */
rp_status rp_iq_params_check(const rp_iq_params *p, const rp_iq_spectrum *spec,
                             rp_error *err);

/* Workspace for gates of up to max_pulses pulses: FFT buffers and FFTW plans (made once
 * per transform size and reused; planning is serialised process-wide, see
 * src/signal/fft_plan.c, so workspaces may be allocated inside a parallel region).
 * NULL with RP_EINVAL (max_pulses < 2 or too large) or RP_ENOMEM in err. */
typedef struct rp_iq_workspace rp_iq_workspace;
rp_iq_workspace *rp_iq_workspace_alloc(size_t max_pulses, rp_error *err);
void rp_iq_workspace_free(rp_iq_workspace *ws);   /* NULL ok */
size_t rp_iq_workspace_max_pulses(const rp_iq_workspace *ws);

/* Synthesise one gate: M = p->n_pulses samples of H into h[] and V into v[] (caller's
 * arrays of M values), spectrum spec (NULL: Gaussian of p->velocity_m_s and
 * p->width_m_s). Draws only from rng. Does not allocate, except that the first gate of
 * a new transform size in a workspace makes (and keeps) its FFTW plan.
 * Statuses: those of rp_iq_params_check; RP_EINVAL when M exceeds the workspace's
 * max_pulses or a pointer is NULL; RP_EFFTW if FFTW cannot make a plan. */
rp_status rp_iq_synthesize(rp_iq_workspace *ws, const rp_iq_params *p,
                           const rp_iq_spectrum *spec, rp_rng *rng, double complex *h,
                           double complex *v, rp_error *err);

/* Staggered PRT (optional mode): the gaps between pulses alternate T1 = p->prt_s and
 * T2 = T1 k2 / k1 (integers 1 <= k1 < k2 <= 16, e.g. k1 = 2, k2 = 3 for T1/T2 = 2/3),
 * starting with T1: pulse m is at t_m = T_u (j (k1 + k2) + (m odd ? k1 : 0)), m = 2j or
 * 2j + 1, with T_u = T1 / k1. */
typedef struct {
  unsigned k1, k2;
} rp_iq_stagger;

/* Time of pulse m (s) and the number of base steps T_u the M pulses span plus one (the
 * workspace's max_pulses must be at least this). No checks. */
double rp_iq_stagger_time_s(const rp_iq_params *p, rp_iq_stagger st, size_t m);
size_t rp_iq_stagger_span(const rp_iq_params *p, rp_iq_stagger st);

/* Synthesise M staggered pulses into h[], v[]: a uniform series at T_u (rp_iq_synthesize
 * with PRT T_u over the span) sampled at the pulse times, so every property of the
 * uniform synthesis carries over. p is checked at PRT T1 (width <= v_a(T1)). Statuses:
 * those of rp_iq_synthesize; RP_EINVAL for a bad stagger or a span above the
 * workspace's max_pulses. */
rp_status rp_iq_synthesize_staggered(rp_iq_workspace *ws, const rp_iq_params *p,
                                     const rp_iq_spectrum *spec, rp_iq_stagger st,
                                     rp_rng *rng, double complex *h, double complex *v,
                                     rp_error *err);

/* The normalised signal autocorrelation r(k) = E[s*(m) s(m+k)] / E|s|^2 of the model
 * spectrum at lag k pulses (complex; r(0) = 1): for each component
 * exp(2 pi i f k - 2 pi^2 sigma^2 k^2), f = v / (2 v_a), sigma = w / (2 v_a), weighted.
 * The synthesised series has this autocorrelation in expectation up to a relative
 * wrap-around error below 1e-6 (src/signal/iq.c). p and spec as for rp_iq_synthesize
 * and assumed valid. */
double complex rp_iq_autocorr(const rp_iq_params *p, const rp_iq_spectrum *spec, long k);

/* Moments of the model spectrum: mean velocity v_a/pi arg r(1) (what the pulse-pair
 * estimator targets; m/s, in [-v_a, v_a)) and width sqrt(sum w_c (sigma_c^2 + (v_c -
 * vbar)^2)) with velocities taken relative to the mean within (-v_a, v_a]. For the
 * Gaussian (spec NULL) these are the folded velocity and the width. */
void rp_iq_spectrum_moments(const rp_iq_params *p, const rp_iq_spectrum *spec,
                            double *mean_m_s, double *width_m_s);

/* The model spectrum as the periodogram would see it with infinitely many pulses, on
 * the M bins k = 0..M-1 of frequency k/M (velocity 2 v_a k / M folded into
 * [-v_a, v_a)): S_h * D(f_k) + 1, with D the spectral density per unit normalised
 * frequency (cycles per pulse, integral 1 over a period) folded over the Nyquist
 * interval, in the normalised units of the samples (noise floor 1 per bin). out has M
 * values. p and spec assumed valid. */
void rp_iq_true_spectrum(const rp_iq_params *p, const rp_iq_spectrum *spec, double *out);

/* The spectrum of the drops of a DSD as a mixture: one component per table diameter
 * D_i with weight N(D_i) |f_hh(pi)|^2(D_i) dD_i (trapezoidal weights over the table
 * grid, mm^2 m^-3), mean v_r = u_radial cos(el) - v_fall(D_i) sin(el) (positive away:
 * at positive elevation falling drops approach the radar, v_r < 0) and standard
 * deviation turbulence_sd_m_s (>= 0). The caller gives arrays weight, mean_m_s,
 * width_m_s of t->n values each; *out borrows them. Statuses: RP_EINVAL for NULL
 * pointers, a table with fewer than 2 diameters, NaN/infinite arguments, a negative
 * turbulence SD, elevation outside [-90, 90] deg, or a DSD that gives no backscatter
 * on the table's diameters. */
rp_status rp_iq_dsd_spectrum(const rp_table *t, const rp_dsd *dsd, double elevation_deg,
                             double u_radial_m_s, double turbulence_sd_m_s, double *weight,
                             double *mean_m_s, double *width_m_s, rp_iq_spectrum *out,
                             rp_error *err);

#endif
