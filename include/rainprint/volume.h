/* volume.h — a synthetic radar volume with its known truth: every gate of every ray of
 * every sweep of a scenario (scenario.h), the radar variables of the local rain seen
 * through the beam, attenuated along the path, with Doppler moments and estimator noise.
 *
 * The physics of a gate comes from an evaluator (rp_volume_physics): the linear
 * integrals (gate.h) of a normalised gamma DSD at a temperature for a sweep, and the
 * Nw-free Doppler and rain moments (fallmoments.h). volume_model.h binds the radar
 * model (radar_model.h) to it; tests may pass hand-made evaluators.
 *
 * Method (docs/method.md §13, every equation with its reference):
 *   geometry   4/3-earth model (beam.h); temperature from the lapse rate; rain only
 *              below the freezing level (gates above are flagged, never rain);
 *   beam       beam_samples = n > 1: the linear integrals averaged over n x n
 *              Gauss–Hermite samples of the two-way Gaussian beam, each at its own
 *              location's DSD and temperature (non-uniform beam filling);
 *   path       to the gate centre: sum over previous gates plus half of this one,
 *              PIA_h = 2 dr (sum_{j<i} A_h,j + A_h,i / 2), PIA_dp likewise with A_DP,
 *              PhiDP = offset + 2 dr (sum_{j<i} K_j + K_i / 2) + delta_hv,i;
 *   Doppler    v_r = (u sin az + v cos az) cos el - v_z sin el (positive away), folded
 *              into [-v_a, v_a); sigma_v^2 = sigma_t^2 + sigma_s^2 + sigma_d^2 +
 *              sigma_a^2 (turbulence, shear across the beam, fall-speed spread,
 *              antenna rotation);
 *   noise      SNR from Z_min(r) = sensitivity + 20 log10(r / 10 km); gates with
 *              SNR < 0 dB are fill values; normal errors with the standard deviations
 *              of rp_volume_noise_std, drawn from rp_rng streams keyed
 *              (RP_RNG_VOLUME_NOISE, sweep, ray, gate): results do not depend on the
 *              thread count;
 *   KDP        observed: half the least-squares slope of the observed PhiDP over
 *              kdp_window_gates gates centred on the gate, only where every gate of
 *              the window has signal.
 *   pulses     (optional, rp_volume_options.pulses) instead of the formula noise, every
 *              gate above sensitivity gets M = radar.pulses dual-pol I/Q pulses (iq.h,
 *              Zrnić 1975) of its attenuated Zh, ZDR (with bias), rhoHV, PhiDP (with
 *              offset), radial velocity and width (clipped to v_a), SNR (clipped to
 *              RP_IQ_SNR_MAX_DB), drawn from streams (RP_RNG_PULSES, sweep, ray, gate);
 *              DBZ, ZDR, RHOHV (noise-corrected), PHIDP, VEL (pulse pair), WIDTH
 *              (R0/R1) are the estimates of pulse_estimators.h; LDRH keeps the formula
 *              noise; KDP as above; the truth fields are unchanged
 *              (docs/method.md §15).
 * Memory: fields are float, rays x gates each (about 130 bytes per gate in all). */
#ifndef RAINPRINT_VOLUME_H
#define RAINPRINT_VOLUME_H

#include <complex.h>
#include <stdbool.h>
#include <stddef.h>

#include "rainprint/fallmoments.h"
#include "rainprint/gate.h"
#include "rainprint/scenario.h"
#include "rainprint/status.h"

/* The fields of a volume. Observed ones carry the convention's short names. */
typedef enum {
  RP_VF_DBZ, RP_VF_ZDR, RP_VF_PHIDP, RP_VF_KDP, RP_VF_RHOHV, RP_VF_VEL, RP_VF_WIDTH,
  RP_VF_SNR, RP_VF_LDRH,
  RP_VF_TRUTH_ZH, RP_VF_TRUTH_ZDR, RP_VF_TRUTH_KDP, RP_VF_TRUTH_AH, RP_VF_TRUTH_ADP,
  RP_VF_TRUTH_DELTA_HV, RP_VF_TRUTH_RHOHV, RP_VF_TRUTH_LDR, RP_VF_TRUTH_PIA,
  RP_VF_TRUTH_PIA_ZDR, RP_VF_TRUTH_PHIDP, RP_VF_TRUTH_VEL, RP_VF_TRUTH_WIDTH,
  RP_VF_TRUTH_RAIN, RP_VF_TRUTH_LWC, RP_VF_TRUTH_D0, RP_VF_TRUTH_DM, RP_VF_TRUTH_NW,
  RP_VF_TRUTH_MU, RP_VF_TRUTH_TEMP, RP_VF_GATE_HEIGHT, RP_VF_TRUTH_FLAG,
  RP_VF_COUNT
} rp_volume_field;

/* Values of the flag field (truth_gate_flag). */
enum { RP_GATE_RAIN = 0, RP_GATE_ABOVE_FREEZING = 1, RP_GATE_NO_RAIN = 2 };

typedef struct {
  const char *name;          /* variable name in files */
  const char *units;         /* UDUNITS spelling ("1" for none) */
  const char *standard_name; /* CF/Radial standard name, NULL for ours */
  const char *long_name;
  int observed;              /* 1: what the radar gives (fill below sensitivity) */
  int folds;                 /* 1: folded at the Nyquist velocity */
  int quantity;              /* the quantity of the one table of fields (field.h,
                                rp_field_id) it measures or is, -1 for none; its units
                                are that descriptor's (tested) */
} rp_volume_field_info;

/* Descriptor of field f (NULL past the end). Static storage. */
const rp_volume_field_info *rp_volume_field_get(rp_volume_field f);
/* Field by name; -1 when unknown. */
int rp_volume_field_find(const char *name);

/* Linear integrals of Nw, D0, mu at temp_c for sweep k (0-based). Called from several
 * threads at once: must not allocate or lock. Non-OK statuses stop the synthesis. */
typedef rp_status (*rp_volume_eval_fn)(const void *ctx, size_t sweep, double temp_c,
                                       double nw_m3_mm, double d0_mm, double mu,
                                       rp_gate_linear *out, rp_error *err);
typedef struct {
  rp_volume_eval_fn eval;
  const void *ctx;
  const rp_fallmom *fall;  /* Doppler and rain moments (borrowed) */
} rp_volume_physics;

typedef void (*rp_volume_progress_fn)(void *ctx, double fraction_done);

typedef struct {
  unsigned long long seed;
  bool noise;                       /* false: every observed field exact */
  int threads;                      /* 0: OpenMP's default */
  rp_volume_progress_fn progress;   /* may be NULL; called between sweeps */
  void *progress_ctx;
  bool pulses;        /* true: observed fields estimated from synthesised I/Q (needs noise) */
  bool keep_iq;       /* with pulses: keep the I/Q of sweep keep_iq_sweep in the volume */
  size_t keep_iq_sweep; /* 0-based */
} rp_volume_options;

/* Seed and noise switch from the scenario, default threads, no progress, formula
 * noise (pulses false, no I/Q kept). */
void rp_volume_options_from_scenario(const rp_scenario *s, rp_volume_options *o);

typedef struct {
  size_t gates;           /* simulated */
  size_t rain_gates;      /* with rain in the beam */
  size_t observed_gates;  /* with DBZ above sensitivity */
  double max_pia_db;      /* largest two-way path-integrated attenuation of Zh */
  double max_phidp_deg;   /* largest noise-free PhiDP (offset + 2∫KDP + delta_hv) */
  double seconds;         /* wall time of the synthesis */
} rp_volume_summary;

typedef struct {
  rp_scenario scenario;     /* copy of what was simulated */
  unsigned long long seed;
  bool noise;
  size_t n_sweeps, n_rays, n_gates; /* n_rays over all sweeps */
  size_t *sweep_start, *sweep_end;  /* inclusive ray indices, n_sweeps each */
  double *fixed_angle_deg;          /* n_sweeps */
  double *azimuth_deg, *elevation_deg, *time_s; /* n_rays */
  double *range_m;                              /* n_gates, gate centres */
  double nyquist_ms, wavelength_m, freezing_level_m;
  float *field[RP_VF_COUNT]; /* n_rays x n_gates, row per ray; NULL when absent
                                (LDRH without measures_ldr); NaN = fill */
  rp_volume_summary summary;
  bool pulses;              /* observed fields are pulse-level estimates */
  size_t iq_sweep;          /* the sweep whose I/Q were kept (iq_h non-NULL) */
  size_t iq_pulses;         /* M of the kept I/Q (0 when none) */
  /* kept I/Q (options.keep_iq) or NULL: rays of iq_sweep x n_gates x M samples, ray
   * then gate then pulse, normalised to receiver noise power 1 per channel (iq.h). Every
   * gate has samples: gates without echo or below sensitivity hold their (weak) signal
   * at an SNR clipped to [RP_IQ_SNR_MIN_DB, RP_IQ_SNR_MAX_DB], or receiver noise alone
   * (SNR RP_IQ_SNR_MIN_DB) where there is no rain. 16 M bytes per gate. */
  float complex *iq_h, *iq_v;
} rp_volume;

/* Simulate scenario s (checked here with rp_scenario_check) with physics p.
 * Caller frees *out with rp_volume_free. Statuses: those of rp_scenario_check;
 * RP_EINVAL (NULL arguments, p without eval or fall; o->pulses without o->noise;
 * o->keep_iq without o->pulses or with keep_iq_sweep past the last sweep); RP_ENOMEM
 * (also for kept I/Q too large for memory); any status of the evaluator (the message
 * names sweep, ray and gate); at pulse level those of rp_pulse_gate (RP_EFFTW). */
rp_status rp_volume_synthesize(const rp_scenario *s, const rp_volume_physics *p,
                               const rp_volume_options *o, rp_volume **out, rp_error *err);
void rp_volume_free(rp_volume *v); /* NULL ok */

/* Value of field f at (ray, gate) as a double (NaN for fill or an absent field). */
double rp_volume_get(const rp_volume *v, rp_volume_field f, size_t ray, size_t gate);

/* Standard deviations of the estimates from `pulses` samples at pulse repetition time
 * prt_s, wavelength wavelength_m, for a Gaussian spectrum of width width_ms, SNR snr
 * (linear, > 0), copolar correlation rhohv (0..1], LDR ldr (linear):
 *   dbz (dB), zdr_db, phidp_deg, rhohv, vel_ms, width_ms, ldr_db.
 * Formulas and references in docs/method.md §13 ("noise"). Pure function. */
typedef struct {
  double dbz, zdr_db, phidp_deg, rhohv, vel_ms, width_ms, ldr_db;
  double independent_samples;
} rp_volume_noise;
/* Largest pulse count the noise formulas take (the scenario's limit); more are
 * treated as this many. */
#define RP_VOLUME_MAX_PULSES 1024
void rp_volume_noise_std(int pulses, double prt_s, double wavelength_m, double width_ms,
                         double snr, double rhohv, double ldr, rp_volume_noise *out);

/* Noise-equivalent reflectivity (dBZ) at range_m of the scenario's radar: the
 * reflectivity of SNR 0 dB, sensitivity + 20 log10(r / 10 km). No checks. */
double rp_volume_noise_equivalent_dbz(const rp_scenario *s, double range_m);

/* Fold v into [-v_a, v_a). */
double rp_volume_fold(double v_ms, double nyquist_ms);

#endif
