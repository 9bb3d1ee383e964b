/* pulse_estimators.h — radar moments from the I/Q samples of one gate, their
 * first-order theoretical standard deviations, and Monte-Carlo ensembles.
 *
 * Estimators (samples normalised as in iq.h: noise power 1 in each channel):
 *   power      S_h = R0_h - 1 (noise subtracted), linear, noise units
 *   zh         zh_dbz + 10 log10(S_h / 10^(SNR/10))              dBZ (calibrated radar)
 *   velocity_pp  v_a/pi arg R1_h                                  m/s, + away
 *   width_r0r1 (sqrt(2) v_a/pi) sqrt(ln(S_h/|R1_h|))              m/s
 *   width_r1r2 (2 v_a/(sqrt(6) pi)) sqrt(ln(|R1_h|/|R2_h|))      m/s
 *   zdr        10 log10(S_h / S_v)                                 dB
 *   rhohv      |R_hv| / sqrt(S_h S_v) (noise corrected)            -
 *   phidp      arg R_hv, R_hv = (1/M) sum h v*                     deg, in (-180, 180]
 *   velocity_spectral, width_spectral: moments of the windowed periodogram (noise
 *              subtracted) about its peak, circular so aliasing is handled   m/s
 * with R_k = (1/(M-k)) sum_m x*(m) x(m+k) (Doviak & Zrnić 1993, eqs. 6.19, 6.27 and
 * 6.32 (equation numbers from memory); Bringi & Chandrasekar 2001, sec. 6.4-6.5).
 * Undefined values are NaN: a power, Z_DR, rho_hv or width_r0r1 when a noise-subtracted
 * power is <= 0; width_r1r2 for M = 2; the spectral moments when the noise-subtracted
 * periodogram sums to <= 0. A width whose logarithm is negative is 0 (clipped). */
#ifndef RAINPRINT_PULSE_ESTIMATORS_H
#define RAINPRINT_PULSE_ESTIMATORS_H

#include <complex.h>
#include <stddef.h>
#include <stdint.h>

#include "rainprint/iq.h"
#include "rainprint/rng.h"
#include "rainprint/status.h"

/* The estimates, indexed by key. */
typedef enum {
  RP_PULSE_POWER,
  RP_PULSE_ZH,
  RP_PULSE_VELOCITY_PP,
  RP_PULSE_WIDTH_R0R1,
  RP_PULSE_WIDTH_R1R2,
  RP_PULSE_ZDR,
  RP_PULSE_RHOHV,
  RP_PULSE_PHIDP,
  RP_PULSE_VELOCITY_SPECTRAL,
  RP_PULSE_WIDTH_SPECTRAL,
  RP_PULSE_N_KEYS
} rp_pulse_key;

/* Key names ("power", "zh", "velocity_pp", "width_r0r1", "width_r1r2", "zdr",
 * "rhohv", "phidp", "velocity_spectral", "width_spectral") and units ("1", "dBZ",
 * "m s-1", "m s-1", "m s-1", "dB", "1", "degree", "m s-1", "m s-1"); NULL past the end. */
const char *rp_pulse_key_name(rp_pulse_key k);
const char *rp_pulse_key_units(rp_pulse_key k);

typedef struct {
  double value[RP_PULSE_N_KEYS];
} rp_pulse_estimates;

/* Periodogram window. Hann: w_m = sin^2(pi (m + 1/2) / M) (no zero end points; side
 * lobes -31 dB, so strong signals do not leak into the noise floor). */
typedef enum { RP_WINDOW_RECT, RP_WINDOW_HANN } rp_pulse_window;

/* All estimates of one gate from its samples h, v (M = p->n_pulses values each; p gives
 * M, T_s, lambda, the SNR and zh_dbz used for calibration). periodogram (NULL or M
 * values) receives the windowed H periodogram |sum w h e^{-2 pi i k m/M}|^2 / sum w^2
 * on bins k = 0..M-1 (frequency k/M; velocity 2 v_a k/M folded), noise floor 1.
 * Uses ws's buffers; no allocation except when a workspace meets an M different from
 * the previous call's (it keeps one forward plan and window: alternating M per gate
 * re-plans every time, so keep M constant per workspace). Statuses: RP_EINVAL for NULL
 * pointers, an unknown window, M above the workspace's size, or invalid M, T_s, lambda,
 * SNR or zh_dbz (checked as by rp_iq_params_check; the spectrum fields are unused);
 * RP_EFFTW if no plan. */
rp_status rp_pulse_estimate(rp_iq_workspace *ws, const rp_iq_params *p,
                            const double complex *h, const double complex *v,
                            rp_pulse_window window, rp_pulse_estimates *out,
                            double *periodogram, rp_error *err);

/* One gate end to end (what the volume synthesiser calls per gate, one workspace per
 * thread): synthesise with rp_iq_synthesize from rng, estimate with rp_pulse_estimate.
 * h_out, v_out (NULL, or M values each) receive the samples. Statuses as the two. */
rp_status rp_pulse_gate(rp_iq_workspace *ws, const rp_iq_params *p,
                        const rp_iq_spectrum *spec, rp_rng *rng, rp_pulse_window window,
                        rp_pulse_estimates *out, double complex *h_out,
                        double complex *v_out, rp_error *err);

/* Velocities from staggered-PRT samples of H (rp_iq_synthesize_staggered): v_t1 =
 * (lambda/(4 pi T1)) arg R(T1) and v_t2 = (lambda/(4 pi T2)) arg R(T2), R(T) averaged
 * over the pulse pairs with gap T, folded at v_a(T1), v_a(T2); and v_ext, dealiased within
 * (-v_ext, v_ext], v_ext = lambda / (4 (T2 - T1)): the difference estimate
 * (lambda/(4 pi (T2 - T1))) arg(R(T2) R(T1)*) picks the alias v_t1 + 2 n v_a(T1) nearest
 * to it (Zrnić & Mahapatra 1985, IEEE Trans. Aerosp. Electron. Syst. 21, 470-483; from
 * memory). Needs M >= 3. Any output pointer may be NULL. Statuses: RP_EINVAL for a NULL
 * p or h, M < 3, a bad stagger or invalid p. */
rp_status rp_pulse_staggered_velocity(const rp_iq_params *p, rp_iq_stagger st,
                                      const double complex *h, double *v_t1, double *v_t2,
                                      double *v_ext, rp_error *err);

/* The true values the estimators target: power 10^(SNR/10), zh_dbz, the spectrum's
 * moments (rp_iq_spectrum_moments) for the velocities and widths, zdr_db, rhohv and
 * phidp_deg (wrapped into (-180, 180]). p, spec assumed valid. */
void rp_pulse_truth(const rp_iq_params *p, const rp_iq_spectrum *spec,
                    rp_pulse_estimates *truth);

/* First-order (delta-method) standard deviations of the estimators for the model
 * (complex Gaussian signal of the given spectrum plus white noise): the covariances of
 * the lag products R0_h, R0_v, R1_h, R2_h, R_hv are computed exactly for finite M from
 * the model's autocorrelations (Isserlis' theorem), then propagated through the
 * estimators' gradients — the method of Zrnić (1977) and Doviak & Zrnić (1993,
 * sec. 6.4.1), of which their eq. 6.21 for the velocity is the special case; Bringi &
 * Chandrasekar (2001, sec. 6.5) for Z_DR, rho_hv, Phi_DP. Valid when the estimates'
 * relative errors are small (many pulses, SNR not too low, width neither tiny nor near
 * v_a; docs/method.md §14). NaN where there is no such formula (spectral moments) or
 * the gradient does not exist (a true width of 0; rho_hv = 0 for Phi_DP).
 * Statuses: those of rp_iq_params_check; RP_ENOMEM. */
rp_status rp_pulse_theory_sd(const rp_iq_params *p, const rp_iq_spectrum *spec,
                             rp_pulse_estimates *sd, rp_error *err);

/* Expected windowed periodogram of the H samples (the mean of `periodogram` above over
 * infinitely many realisations) on the M bins: sum_l r_w(l) C_hh(l) e^{-2 pi i k l/M} /
 * sum w^2 with r_w the window's autocorrelation. out has M values. Statuses: those of
 * rp_iq_params_check. */
rp_status rp_pulse_expected_periodogram(const rp_iq_params *p, const rp_iq_spectrum *spec,
                                        rp_pulse_window window, double *out,
                                        rp_error *err);

/* Monte-Carlo ensemble summary of one estimator. Deviations are est - truth, wrapped
 * into (-v_a, v_a] for velocities and (-180, 180] for Phi_DP; bias = mean deviation;
 * mean = truth + bias; sd = sample standard deviation (n - 1) of the deviations; all
 * over the n_valid finite estimates (NaN when n_valid is 0, sd NaN when it is 1). */
typedef struct {
  double truth, mean, bias, sd, sd_theory;
  size_t n_valid;
} rp_pulse_summary;

/* Optional outputs of rp_pulse_ensemble (any pointer NULL: not wanted). */
typedef struct {
  double *mean_periodogram;     /* M: periodogram averaged over the realisations */
  double *true_spectrum;        /* M: rp_iq_true_spectrum */
  double *expected_periodogram; /* M: rp_pulse_expected_periodogram */
  double complex *h, *v;        /* n_realisations * M samples, realisation-major */
  rp_pulse_estimates *each;     /* n_realisations estimates */
} rp_pulse_ensemble_out;

/* n_realisations independent gates with the same inputs (what `rainprint pulses`
 * needs), in parallel over realisations (OpenMP; one workspace per thread). Realisation
 * j draws from stream (seed, rp_rng_key(RP_RNG_PULSES, 0, j, 0)), and all sums run in
 * realisation order, so every output is identical for any thread count.
 * summary: RP_PULSE_N_KEYS entries. Statuses: those of rp_iq_params_check; RP_EINVAL
 * for NULL p/summary or n_realisations of 0; RP_ENOMEM; RP_EFFTW. */
rp_status rp_pulse_ensemble(const rp_iq_params *p, const rp_iq_spectrum *spec,
                            rp_pulse_window window, size_t n_realisations, uint64_t seed,
                            rp_pulse_summary *summary, const rp_pulse_ensemble_out *out,
                            rp_error *err);

#endif
