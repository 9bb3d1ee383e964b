/* volume.c — synthesis of a radar volume with its truth (method in volume.h and
 * docs/method.md §13).
 *
 * Work plan: sweep by sweep, the gate geometry (height, ground range, temperature) is
 * computed once per sweep for each elevation offset of the beam samples; then the rays
 * of the sweep are done in parallel (OpenMP), each ray sequentially along range because
 * the path integrals accumulate. Every random draw of a gate comes from its own rp_rng
 * stream (RP_RNG_VOLUME_NOISE, sweep, ray, gate), in a fixed order, so the volume is the
 * same for any thread count.
 * Invariants: observed fields are NaN (fill) where there is no rain, above the freezing
 * level or below sensitivity; truth fields of radar variables are NaN where no rain is
 * in the beam; path integrals use K, A = 0 at gates without rain.
 *
 * Pulse level (o->pulses): one rp_iq_workspace and one pair of sample buffers per
 * thread, allocated once per synthesis (M constant per workspace, so FFTW plans are made
 * once); each gate above sensitivity draws its pulses from its own stream
 * (RP_RNG_PULSES, sweep, ray, gate) and, for LDRH only, the formula noise from its
 * (RP_RNG_VOLUME_NOISE, ...) stream as in formula mode, so the volume is again the same
 * for any thread count. The choices (clipping, censoring, PhiDP branch) are in
 * docs/method.md §15. */
#include "rainprint/volume.h"

#include "rainprint/field.h"

#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <omp.h>

#include "rainprint/beam.h"
#include "rainprint/fallspeed.h"
#include "rainprint/iq.h"
#include "rainprint/pulse_estimators.h"
#include "rainprint/rng.h"

static const double DEG = M_PI / 180.0;

static const rp_volume_field_info FIELDS[RP_VF_COUNT] = {
    {"DBZ", "dBZ", "equivalent_reflectivity_factor", "reflectivity (attenuated, with noise)", 1, 0, RP_FIELD_ZH},
    {"ZDR", "dB", "log_differential_reflectivity_hv", "differential reflectivity (attenuated, with bias and noise)", 1, 0, RP_FIELD_ZDR},
    {"PHIDP", "degrees", "differential_phase_hv", "differential phase (system offset + propagation + backscatter)", 1, 0, -1},
    {"KDP", "degrees/km", "specific_differential_phase_hv", "specific differential phase (least-squares slope of PHIDP)", 1, 0, RP_FIELD_KDP},
    {"RHOHV", "1", "cross_correlation_ratio_hv", "copolar correlation coefficient", 1, 0, RP_FIELD_RHOHV},
    {"VEL", "m/s", "radial_velocity_of_scatterers_away_from_instrument", "radial velocity (folded)", 1, 1, -1},
    {"WIDTH", "m/s", "doppler_spectrum_width", "Doppler spectrum width", 1, 0, -1},
    {"SNR", "dB", "signal_to_noise_ratio", "signal-to-noise ratio", 1, 0, -1},
    {"LDRH", "dB", "log_linear_depolarization_ratio_h", "linear depolarisation ratio", 1, 0, RP_FIELD_LDR},
    {"truth_zh_dbz", "dBZ", NULL, "true horizontal reflectivity (unattenuated)", 0, 0, RP_FIELD_ZH},
    {"truth_zdr_db", "dB", NULL, "true differential reflectivity (unattenuated)", 0, 0, RP_FIELD_ZDR},
    {"truth_kdp_deg_km", "degrees/km", NULL, "true specific differential phase", 0, 0, RP_FIELD_KDP},
    {"truth_ah_db_km", "dB/km", NULL, "true specific attenuation at H (one way)", 0, 0, RP_FIELD_AH},
    {"truth_adp_db_km", "dB/km", NULL, "true specific differential attenuation (one way)", 0, 0, RP_FIELD_ADP},
    {"truth_delta_hv_deg", "degrees", NULL, "true backscatter differential phase", 0, 0, RP_FIELD_DELTA_HV},
    {"truth_rhohv", "1", NULL, "true copolar correlation coefficient", 0, 0, RP_FIELD_RHOHV},
    {"truth_ldr_db", "dB", NULL, "true linear depolarisation ratio (unattenuated)", 0, 0, RP_FIELD_LDR},
    {"truth_pia_db", "dB", NULL, "two-way path-integrated attenuation of Zh to the gate centre", 0, 0, -1},
    {"truth_pia_zdr_db", "dB", NULL, "two-way path-integrated differential attenuation to the gate centre", 0, 0, -1},
    {"truth_phidp_deg", "degrees", NULL, "true propagation differential phase 2*integral(KDP) to the gate centre", 0, 0, -1},
    {"truth_velocity_ms", "m/s", NULL, "true radial velocity (unfolded, positive away)", 0, 0, -1},
    {"truth_width_ms", "m/s", NULL, "true spectrum width", 0, 0, -1},
    {"truth_rain_rate_mm_h", "mm h-1", NULL, "true rain rate at the gate centre", 0, 0, RP_FIELD_RAIN_RATE},
    {"truth_lwc_g_m3", "g m-3", NULL, "true liquid water content at the gate centre", 0, 0, RP_FIELD_LWC},
    {"truth_d0_mm", "mm", NULL, "true median volume diameter at the gate centre", 0, 0, RP_FIELD_D0},
    {"truth_dm_mm", "mm", NULL, "true mass-weighted mean diameter at the gate centre", 0, 0, RP_FIELD_DM},
    {"truth_nw_m3_mm", "m-3 mm-1", NULL, "true normalised intercept Nw at the gate centre", 0, 0, RP_FIELD_NW},
    {"truth_mu", "1", NULL, "true shape parameter mu at the gate centre", 0, 0, -1},
    {"truth_temperature_c", "degC", NULL, "air temperature at the gate centre", 0, 0, -1},
    {"gate_height_m", "meters", NULL, "height of the gate centre above mean sea level (4/3-earth model)", 0, 0, -1},
    {"truth_gate_flag", "1", NULL, "gate flag: 0 rain, 1 above the freezing level, 2 no rain", 0, 0, -1},
};

const rp_volume_field_info *rp_volume_field_get(rp_volume_field f) {
  if ((int)f < 0 || f >= RP_VF_COUNT) return NULL;
  return &FIELDS[f];
}

int rp_volume_field_find(const char *name) {
  if (name == NULL) return -1;
  for (int i = 0; i < RP_VF_COUNT; i++)
    if (strcmp(FIELDS[i].name, name) == 0) return i;
  return -1;
}

void rp_volume_options_from_scenario(const rp_scenario *s, rp_volume_options *o) {
  if (o == NULL) return;
  memset(o, 0, sizeof *o);
  if (s == NULL) return;
  o->seed = s->seed;
  o->noise = s->noise;
}

double rp_volume_fold(double v_ms, double nyquist_ms) {
  const double span = 2.0 * nyquist_ms;
  double f = v_ms - span * floor((v_ms + nyquist_ms) / span);
  if (f >= nyquist_ms) f -= span; /* rounding at the upper edge */
  return f;
}

void rp_volume_noise_std(int pulses, double prt_s, double wavelength_m, double width_ms,
                         double snr, double rhohv, double ldr, rp_volume_noise *out) {
  if (pulses < 2) pulses = 2;
  if (pulses > RP_VOLUME_MAX_PULSES) pulses = RP_VOLUME_MAX_PULSES;
  const int mi_ = pulses, ni = pulses - 1; /* M samples, N = M - 1 lag-1 products */
  const double m = (double)mi_, n1 = (double)ni;
  const double va = wavelength_m / (4.0 * prt_s);
  const double svn = width_ms / (2.0 * va); /* normalised spectrum width */
  /* Gaussian spectrum: signal correlation p_l = exp(-2 pi^2 svn^2 l^2) at lag l
   * (Doviak & Zrnić 1993 §6.3, from memory), signal power 1, white noise 1/SNR at lag
   * 0, R_l = p_l + delta_l / SNR. The noise-free parts of the sums are accumulated in one
   * pass (p_{l+1} = p_l e^{-a (2l + 1)}, a = 2 pi^2 svn^2, stopping once p_{l-1} <
   * 1e-17); the noise enters only at lag 0 and is added in closed form:
   *   S   = sum_{|l|<M} (1 - |l|/M) p_l^2                       (M / S independent samples)
   *   t1  = sum_{|l|<N} (N - |l|) R_l^2        = T1 + N (2/SNR + 1/SNR^2)
   *   t2  = sum_{|l|<N} (N - |l|) R_{l+1} R_{1-l} = T2 + 2 (N - 1) p_2 / SNR   (N >= 2)
   *   cpr = sum_{a<M, k<N} R_{k+1-a} R_{a-k}   = C + 2 N p_1 / SNR */
  const double a = 2.0 * M_PI * M_PI * svn * svn;
  const double inv = 1.0 / snr;
  const double ea = exp(-a), e2a = ea * ea;
  double p_prev = 1.0, p = ea, step = e2a * ea; /* p_0, p_1, e^{-3a} */
  const double p1 = p, p2 = p * step;
  double s = 1.0, t1 = n1, t2 = n1 * p1 * p1, cpr = n1 * p1; /* l = 0 terms (j = 0 of C) */
  for (int l = 1; l < mi_; l++) {
    const double p_next = p * step; /* p_{l+1} */
    s += 2.0 * (1.0 - l / m) * p * p;
    if (l < ni) {
      t1 += 2.0 * (n1 - l) * p * p;
      t2 += 2.0 * (n1 - l) * p_next * p_prev;
      cpr += (n1 - l) * p_next * p; /* d = -l <= 0: c = N - l, R_{1+l} R_l */
    }
    cpr += (m - l) * p_prev * p; /* d = l >= 1: c = M - l, R_{1-l} R_l = p_{l-1} p_l */
    if (p_prev < 1e-17) break;
    p_prev = p;
    p = p_next;
    step *= e2a;
  }
  t1 += n1 * (2.0 * inv + inv * inv);
  if (ni >= 2) t2 += 2.0 * (n1 - 1.0) * p2 * inv;
  cpr += 2.0 * n1 * p1 * inv;
  const double rho1 = p1;
  const double mi = m / s;
  out->independent_samples = mi;
  const double ten_log10e = 10.0 / log(10.0);
  /* power with the noise subtracted: var(P)/S^2 = [S + 2/SNR + 1/SNR^2] / M */
  const double var_p = (s + 2.0 * inv + inv * inv) / m;
  out->dbz = ten_log10e * sqrt(var_p);
  /* ZDR (Bringi & Chandrasekar 2001 §6.5, from memory): 2 (1 - rho^2)/M_I plus the
   * noise terms of both channels */
  const double rho_hv = rhohv > 1.0 ? 1.0 : rhohv;
  const double var_zdr = 2.0 * (1.0 - rho_hv * rho_hv) / mi + 2.0 * (2.0 * inv + inv * inv) / m;
  out->zdr_db = ten_log10e * sqrt(var_zdr);
  /* PhiDP: (1 - rho^2)/(2 M_I rho^2) (B&C 2001 §6.5, from memory) plus the white-noise
   * term (2/SNR + 1/SNR^2)/(2 M rho^2) */
  const double var_phi = (1.0 - rho_hv * rho_hv) / (2.0 * mi * rho_hv * rho_hv) +
                         (2.0 * inv + inv * inv) / (2.0 * m * rho_hv * rho_hv);
  out->phidp_deg = sqrt(var_phi) / DEG;
  /* rhohv: (1 - rho^2)/sqrt(2 M_I) (B&C 2001 §6.5, from memory); noise term ours */
  out->rhohv = (1.0 - rho_hv * rho_hv) / sqrt(2.0 * mi) + inv / sqrt(m);
  /* Perturbation (small-error) variances of the pulse-pair estimates for correlated
   * Gaussian samples in white noise (Zrnić 1977; D&Z 1993 §6.4-6.5, from memory):
   * with R1 = (1/N) sum X_k* X_{k+1},
   *   var(arg R1) = (t1 - t2) / (2 N^2 rho_1^2),  var|R1| = (t1 + t2) / (2 N^2),
   *   cov(P, |R1|) = cpr / (M N);
   * velocity v = -(lambda / (4 pi T_s)) arg R1; width sigma^2 = (lambda^2 / (8 pi^2
   * T_s^2)) ln(P / |R1|). Capped at the variance of a value spread uniformly over the
   * Nyquist interval, v_a^2 / 3, where the linearisation fails (very narrow spectra or
   * rho_1 -> 0). */
  const double var_max = va * va / 3.0;
  const double kv = wavelength_m / (4.0 * M_PI * prt_s);
  double var_v = rho1 > 0 ? kv * kv * (t1 - t2) / (2.0 * n1 * n1 * rho1 * rho1) : var_max;
  if (!(var_v < var_max)) var_v = var_max;
  out->vel_ms = sqrt(var_v);
  const double var_ln = rho1 > 0 ? var_p + (t1 + t2) / (2.0 * n1 * n1 * rho1 * rho1) -
                                       2.0 * cpr / (m * n1 * rho1)
                                 : (double)INFINITY;
  const double kw = wavelength_m * wavelength_m / (8.0 * M_PI * M_PI * prt_s * prt_s);
  const double sw = width_ms > 1e-3 ? width_ms : 1e-3;
  double var_w = kw * kw * var_ln / (4.0 * sw * sw);
  if (!(var_w < var_max)) var_w = var_max;
  out->width_ms = sqrt(var_w);
  /* LDR: power ratio of two uncorrelated channels */
  const double invx = ldr > 0 ? inv / ldr : 1e6;
  out->ldr_db = ten_log10e * sqrt(((1 + invx) * (1 + invx) + (1 + inv) * (1 + inv)) / mi);
}

double rp_volume_get(const rp_volume *v, rp_volume_field f, size_t ray, size_t gate) {
  if (v == NULL || (int)f < 0 || f >= RP_VF_COUNT || v->field[f] == NULL || ray >= v->n_rays ||
      gate >= v->n_gates)
    return NAN;
  return (double)v->field[f][ray * v->n_gates + gate];
}

void rp_volume_free(rp_volume *v) {
  if (v == NULL) return;
  for (int f = 0; f < RP_VF_COUNT; f++) free(v->field[f]);
  free(v->sweep_start);
  free(v->sweep_end);
  free(v->fixed_angle_deg);
  free(v->azimuth_deg);
  free(v->elevation_deg);
  free(v->time_s);
  free(v->range_m);
  free(v->iq_h);
  free(v->iq_v);
  free(v);
}

double rp_volume_noise_equivalent_dbz(const rp_scenario *s, double range_m) {
  return s->radar.sensitivity_dbz_at_10km + 20.0 * log10(range_m / 10000.0);
}

/* ---- per-sweep geometry ---------------------------------------------------------- */

typedef struct {
  int nb;                           /* samples per direction */
  double off[RP_BEAM_SAMPLES_MAX];  /* in radians */
  double w[RP_BEAM_SAMPLES_MAX];
  double el_rad;
  /* [k * gates + g] for elevation offset k */
  double *height_m, *ground_km, *temp_c;
  double *density;   /* fall-speed density factor at the beam centre, per gate */
  double *zmin_dbz;  /* noise-equivalent reflectivity per gate */
} sweep_geom;

/* Per-thread state of the pulse-level mode. */
typedef struct {
  rp_iq_workspace *ws;
  double complex *h, *v; /* M samples each */
} pulse_ctx;

typedef struct {
  const rp_scenario *s;
  const rp_volume_physics *p;
  const rp_volume_options *o;
  rp_volume *v;
  size_t sweep;
  const sweep_geom *g;
  double fl_m, dr_km, sigma_b_rad, prt_s, va, lambda, rot_rad_s;
  int pulses;                 /* pulse-level mode */
  size_t m;                   /* pulses per gate */
  float complex *iq_h, *iq_v; /* this sweep's kept I/Q, or NULL */
} ray_job;

static double wrap180(double d) { return d - 360.0 * floor((d + 180.0) / 360.0); }

static double clampd(double x, double lo, double hi) { return x < lo ? lo : x > hi ? hi : x; }

/* I/Q parameters of a gate; width clipped to v_a and SNR, ZDR, rhoHV to the
 * synthesiser's ranges (iq.h). */
static void gate_iq_params(const ray_job *j, double zh_dbz, double zdr_db, double rhohv,
                           double phidp_deg, double vel_ms, double width_ms, double snr_db,
                           rp_iq_params *ip) {
  ip->zh_dbz = zh_dbz;
  ip->zdr_db = clampd(zdr_db, -RP_IQ_ZDR_MAX_DB, RP_IQ_ZDR_MAX_DB);
  ip->rhohv = clampd(rhohv, 0.0, 1.0);
  ip->phidp_deg = phidp_deg;
  ip->velocity_m_s = vel_ms;
  ip->width_m_s = clampd(width_ms, 0.0, j->va);
  ip->snr_db = clampd(snr_db, RP_IQ_SNR_MIN_DB, RP_IQ_SNR_MAX_DB);
  ip->n_pulses = j->m;
  ip->prt_s = j->prt_s;
  ip->wavelength_mm = 1000.0 * j->lambda;
}

/* Pulses of one gate from its stream; estimates into est (may be NULL: samples only,
 * for the kept sweep); the samples are kept when this sweep's I/Q are. */
/* A single-precision copy of z for the kept I/Q (a complex value is an array of its two
 * parts, C11 6.2.5: no CMPLXF, which clang 14 with glibc lacks). */
static float complex to_float_complex(double complex z) {
  float complex f;
  float *parts = (float *)&f;
  parts[0] = (float)creal(z);
  parts[1] = (float)cimag(z);
  return f;
}

static rp_status pulse_gate(const ray_job *j, pulse_ctx *pc, size_t ray_in_sweep, size_t gi,
                            const rp_iq_params *ip, rp_pulse_estimates *est, rp_error *err) {
  rp_rng rng;
  rp_rng_init(&rng, j->o->seed, rp_rng_key(RP_RNG_PULSES, j->sweep, ray_in_sweep, gi));
  rp_status st;
  if (est != NULL) {
    const int keep = j->iq_h != NULL;
    st = rp_pulse_gate(pc->ws, ip, NULL, &rng, RP_WINDOW_HANN, est, keep ? pc->h : NULL,
                       keep ? pc->v : NULL, err);
  } else {
    st = rp_iq_synthesize(pc->ws, ip, NULL, &rng, pc->h, pc->v, err);
  }
  if (st != RP_OK) {
    rp_error_prefix(err, "gate %zu (%.0f m), pulses: ", gi, j->v->range_m[gi]);
    return st;
  }
  if (j->iq_h != NULL) {
    const size_t off = (ray_in_sweep * j->v->n_gates + gi) * j->m;
    for (size_t k = 0; k < j->m; k++) {
      j->iq_h[off + k] = to_float_complex(pc->h[k]);
      j->iq_v[off + k] = to_float_complex(pc->v[k]);
    }
  }
  return RP_OK;
}

/* Kept sweep, gate without echo: receiver noise alone (lowest SNR of the synthesiser). */
static rp_status noise_only_gate(const ray_job *j, pulse_ctx *pc, size_t ray_in_sweep,
                                 size_t gi, rp_error *err) {
  rp_iq_params ip;
  const double zmin = j->g->zmin_dbz[gi];
  gate_iq_params(j, zmin + RP_IQ_SNR_MIN_DB, 0.0, 1.0, 0.0, 0.0, 0.0, RP_IQ_SNR_MIN_DB, &ip);
  return pulse_gate(j, pc, ray_in_sweep, gi, &ip, NULL, err);
}

/* radial component of the wind at map point (x, y) along azimuth (sin_az, cos_az) */
static double radial_wind(const rp_scenario *s, double x_km, double y_km, double sin_az,
                          double cos_az, double cos_el) {
  double u, vv;
  rp_scenario_wind_at(s, x_km, y_km, &u, &vv);
  return (u * sin_az + vv * cos_az) * cos_el;
}

/* One ray: truth, propagation, noise, KDP. Returns a status with the place named. */
static rp_status do_ray(const ray_job *j, pulse_ctx *pc, size_t ray_in_sweep, size_t ray,
                        rp_error *err) {
  const rp_scenario *s = j->s;
  const rp_volume *v = j->v;
  const size_t ng = v->n_gates;
  const sweep_geom *g = j->g;
  const double az = v->azimuth_deg[ray] * DEG, el = g->el_rad;
  const double sin_az = sin(az), cos_az = cos(az);
  const double sin_el = sin(el), cos_el = cos(el);
  /* azimuths one beam sigma either side (for the shear across the beam) */
  const double daz = j->sigma_b_rad / cos_el;
  const double sin_azp = sin(az + daz), cos_azp = cos(az + daz);
  const double sin_azm = sin(az - daz), cos_azm = cos(az - daz);
  const double sig_a = j->rot_rad_s * j->lambda * sqrt(log(2.0)) * cos_el /
                       (2.0 * M_PI * s->radar.beamwidth_deg * DEG);
  const int nb = g->nb;
  double cum_a = 0, cum_adp = 0, cum_k = 0; /* one-way sums over previous gates (per km * dr) */
  float *const *F = v->field;
  const size_t row = ray * ng;
  for (size_t gi = 0; gi < ng; gi++) {
    const size_t ix = row + gi;
    const size_t cix = (size_t)nb * ng + gi; /* beam-centre geometry row */
    const double h = g->height_m[cix], gr = g->ground_km[cix], tc = g->temp_c[cix];
    const double x = gr * sin_az, y = gr * cos_az;
    F[RP_VF_GATE_HEIGHT][ix] = (float)h;
    F[RP_VF_TRUTH_TEMP][ix] = (float)tc;
    double nw = 0, d0 = 0, mu = 0;
    int flag;
    if (h > j->fl_m) {
      flag = RP_GATE_ABOVE_FREEZING;
    } else {
      flag = rp_scenario_dsd_at(s, x, y, &nw, &d0, &mu) ? RP_GATE_RAIN : RP_GATE_NO_RAIN;
    }
    /* linear integrals over the beam */
    rp_gate_linear lin;
    memset(&lin, 0, sizeof lin);
    if (nb == 1) {
      if (flag == RP_GATE_RAIN) {
        const rp_status st = j->p->eval(j->p->ctx, j->sweep, tc, nw, d0, mu, &lin, err);
        if (st != RP_OK) {
          rp_error_prefix(err, "gate %zu (%.0f m): ", gi, v->range_m[gi]);
          return st;
        }
      }
    } else if (flag != RP_GATE_ABOVE_FREEZING) {
      /* a gate whose centre is above the freezing level stays without rain even when
       * the lower part of the beam is below it (the gate is flagged, never rain) */
      for (int ke = 0; ke < nb; ke++) {
        const size_t kix = (size_t)ke * ng + gi;
        const double hk = g->height_m[kix];
        if (hk > j->fl_m) continue;
        for (int ka = 0; ka < nb; ka++) {
          const double aza = az + g->off[ka] / cos(el + g->off[ke]);
          const double xk = g->ground_km[kix] * sin(aza), yk = g->ground_km[kix] * cos(aza);
          double nwk, d0k, muk;
          if (!rp_scenario_dsd_at(s, xk, yk, &nwk, &d0k, &muk)) continue;
          rp_gate_linear lk;
          const rp_status st = j->p->eval(j->p->ctx, j->sweep, g->temp_c[kix], nwk, d0k, muk, &lk, err);
          if (st != RP_OK) {
            rp_error_prefix(err, "gate %zu (%.0f m), beam sample %d,%d: ", gi, v->range_m[gi], ke, ka);
            return st;
          }
          rp_gate_linear_axpy(g->w[ke] * g->w[ka], &lk, &lin);
        }
      }
    }
    rp_gate_result res;
    const int has_echo = lin.zh_mm6_m3 > 0 && lin.zv_mm6_m3 > 0 &&
                         rp_gate_result_from_linear(&lin, &res, NULL) == RP_OK;
    if (!has_echo && flag == RP_GATE_RAIN) flag = RP_GATE_NO_RAIN; /* underflow: no echo */
    F[RP_VF_TRUTH_FLAG][ix] = (float)flag;
    /* path integrals to the gate centre */
    const double ah = has_echo ? lin.ah_db_km : 0.0, adp = has_echo ? lin.adp_db_km : 0.0;
    const double kdp = has_echo ? lin.kdp_deg_km : 0.0;
    const double pia = 2.0 * j->dr_km * (cum_a + 0.5 * ah);
    const double pia_dp = 2.0 * j->dr_km * (cum_adp + 0.5 * adp);
    const double phi_prop = 2.0 * j->dr_km * (cum_k + 0.5 * kdp);
    cum_a += ah;
    cum_adp += adp;
    cum_k += kdp;
    F[RP_VF_TRUTH_PIA][ix] = (float)pia;
    F[RP_VF_TRUTH_PIA_ZDR][ix] = (float)pia_dp;
    F[RP_VF_TRUTH_PHIDP][ix] = (float)phi_prop;
    /* DSD truth at the centre; fall speeds corrected to the air density there */
    double vz = 0, sz = 0;
    if (flag == RP_GATE_RAIN && nw > 0) {
      rp_fallmom_value fm;
      rp_fallmom_eval(j->p->fall, d0, mu, &fm);
      const double dens = g->density[gi];
      vz = fm.vz_ms * dens;
      sz = fm.sigma_z_ms * dens;
      F[RP_VF_TRUTH_RAIN][ix] = (float)(fm.rain_per_nw * nw * dens);
      F[RP_VF_TRUTH_LWC][ix] = (float)(fm.lwc_per_nw * nw);
      F[RP_VF_TRUTH_D0][ix] = (float)d0;
      F[RP_VF_TRUTH_DM][ix] = (float)fm.dm_mm;
      F[RP_VF_TRUTH_NW][ix] = (float)nw;
      F[RP_VF_TRUTH_MU][ix] = (float)mu;
    } else {
      const float r0 = flag == RP_GATE_NO_RAIN ? 0.0f : NAN;
      F[RP_VF_TRUTH_RAIN][ix] = r0;
      F[RP_VF_TRUTH_LWC][ix] = r0;
      F[RP_VF_TRUTH_D0][ix] = NAN;
      F[RP_VF_TRUTH_DM][ix] = NAN;
      F[RP_VF_TRUTH_NW][ix] = NAN;
      F[RP_VF_TRUTH_MU][ix] = NAN;
    }
    for (int f = 0; f < RP_VF_TRUTH_ZH; f++)
      if (F[f] != NULL) F[f][ix] = NAN;
    if (!has_echo) {
      for (int f = RP_VF_TRUTH_ZH; f <= RP_VF_TRUTH_LDR; f++) F[f][ix] = NAN;
      F[RP_VF_TRUTH_VEL][ix] = NAN;
      F[RP_VF_TRUTH_WIDTH][ix] = NAN;
      if (flag == RP_GATE_NO_RAIN) {
        F[RP_VF_TRUTH_KDP][ix] = 0.0f;
        F[RP_VF_TRUTH_AH][ix] = 0.0f;
        F[RP_VF_TRUTH_ADP][ix] = 0.0f;
      }
      if (j->iq_h != NULL) RP_TRY(noise_only_gate(j, pc, ray_in_sweep, gi, err));
      continue;
    }
    F[RP_VF_TRUTH_ZH][ix] = (float)res.zh_dbz;
    F[RP_VF_TRUTH_ZDR][ix] = (float)res.zdr_db;
    F[RP_VF_TRUTH_KDP][ix] = (float)res.kdp_deg_km;
    F[RP_VF_TRUTH_AH][ix] = (float)res.ah_db_km;
    F[RP_VF_TRUTH_ADP][ix] = (float)res.adp_db_km;
    F[RP_VF_TRUTH_DELTA_HV][ix] = (float)res.delta_hv_deg;
    F[RP_VF_TRUTH_RHOHV][ix] = (float)res.rhohv;
    F[RP_VF_TRUTH_LDR][ix] = (float)res.ldr_db;
    /* Doppler: fall speed of the centre DSD (no fall-speed term when only beam samples
     * off the centre hold rain) */
    double uu, vv;
    rp_scenario_wind_at(s, x, y, &uu, &vv);
    const double vh = uu * sin_az + vv * cos_az; /* horizontal wind along the beam */
    const double vr = vh * cos_el - vz * sin_el;
    /* shear across the beam: centred differences one beam sigma either side, in
     * azimuth (map points displaced) and in elevation (analytic: the wind does not vary
     * with height, so only the projection changes) */
    const double db = j->sigma_b_rad;
    const double vp = radial_wind(s, gr * sin_azp, gr * cos_azp, sin_azp, cos_azp, cos_el);
    const double vm = radial_wind(s, gr * sin_azm, gr * cos_azm, sin_azm, cos_azm, cos_el);
    const double dv_daz = (vp - vm) / (2.0 * db);
    const double dv_del = -vh * sin_el - vz * cos_el;
    const double sig_s2 = db * db * (dv_daz * dv_daz + dv_del * dv_del);
    const double sig_d = sz * sin_el;
    /* antenna rotation: sig_a above (D&Z 1993 eq. 5.79 form, from memory) */
    const double sig_t = s->wind.turbulence_ms;
    const double width = sqrt(sig_t * sig_t + sig_s2 + sig_d * sig_d + sig_a * sig_a);
    F[RP_VF_TRUTH_VEL][ix] = (float)vr;
    F[RP_VF_TRUTH_WIDTH][ix] = (float)width;
    /* observation */
    const double zmin = g->zmin_dbz[gi];
    const double dbz_att = res.zh_dbz - pia;
    const double snr_db = dbz_att - zmin;
    const double zdr_att = res.zdr_db - pia_dp + s->radar.zdr_bias_db;
    const double phi_true = s->radar.phidp_offset_deg + phi_prop + res.delta_hv_deg;
    rp_iq_params ip = {0};
    if (j->pulses)
      gate_iq_params(j, dbz_att, zdr_att, res.rhohv, phi_true, vr, width, snr_db, &ip);
    if (snr_db < 0.0) { /* below sensitivity: fill (the kept I/Q hold the weak signal) */
      if (j->iq_h != NULL) RP_TRY(pulse_gate(j, pc, ray_in_sweep, gi, &ip, NULL, err));
      continue;
    }
    double nz[7] = {0, 0, 0, 0, 0, 0, 0};
    rp_volume_noise sd;
    const double snr = pow(10.0, 0.1 * snr_db);
    const double ldr_lin = pow(10.0, 0.1 * res.ldr_db);
    if (j->pulses) {
      rp_pulse_estimates est;
      RP_TRY(pulse_gate(j, pc, ray_in_sweep, gi, &ip, &est, err));
      const double *e = est.value;
      /* censored when the noise-subtracted power is not positive (no estimate) */
      if (!(e[RP_PULSE_POWER] > 0.0)) continue;
      /* DBZ = Z_min + 10 log10(S_est), the same as the calibrated estimate zh */
      const double dbz_p = e[RP_PULSE_ZH];
      F[RP_VF_DBZ][ix] = (float)dbz_p;
      F[RP_VF_SNR][ix] = (float)(dbz_p - zmin);
      F[RP_VF_ZDR][ix] = (float)e[RP_PULSE_ZDR];
      /* the estimate is known mod 360: put it on the branch nearest the noise-free
       * PhiDP (an ideal unfolding) so that KDP is estimated as in formula mode */
      F[RP_VF_PHIDP][ix] = (float)(phi_true + wrap180(e[RP_PULSE_PHIDP] - phi_true));
      F[RP_VF_RHOHV][ix] = (float)e[RP_PULSE_RHOHV];
      F[RP_VF_VEL][ix] = (float)rp_volume_fold(e[RP_PULSE_VELOCITY_PP], j->va);
      F[RP_VF_WIDTH][ix] = (float)e[RP_PULSE_WIDTH_R0R1];
      if (F[RP_VF_LDRH] != NULL && res.ldr_db > RP_LDR_FLOOR_DB && snr * ldr_lin >= 1.0) {
        /* LDR: formula noise from the gate's formula stream (not synthesised) */
        rp_volume_noise_std(s->radar.pulses, j->prt_s, j->lambda, width, snr, res.rhohv,
                            ldr_lin, &sd);
        rp_rng rng;
        rp_rng_init(&rng, j->o->seed, rp_rng_key(RP_RNG_VOLUME_NOISE, j->sweep, ray_in_sweep, gi));
        for (int k = 0; k < 7; k++) nz[k] = rp_rng_normal(&rng);
        F[RP_VF_LDRH][ix] = (float)(res.ldr_db + 0.5 * pia_dp + nz[6] * sd.ldr_db);
      }
      continue;
    }
    rp_volume_noise_std(s->radar.pulses, j->prt_s, j->lambda, width, snr, res.rhohv, ldr_lin,
                        &sd);
    if (j->o->noise) {
      rp_rng rng;
      rp_rng_init(&rng, j->o->seed, rp_rng_key(RP_RNG_VOLUME_NOISE, j->sweep, ray_in_sweep, gi));
      for (int k = 0; k < 7; k++) nz[k] = rp_rng_normal(&rng);
    }
    const double dbz_obs = dbz_att + nz[0] * sd.dbz;
    F[RP_VF_DBZ][ix] = (float)dbz_obs;
    F[RP_VF_SNR][ix] = (float)(dbz_obs - zmin);
    F[RP_VF_ZDR][ix] = (float)(zdr_att + nz[1] * sd.zdr_db);
    F[RP_VF_PHIDP][ix] = (float)(phi_true + nz[2] * sd.phidp_deg);
    F[RP_VF_RHOHV][ix] = (float)(res.rhohv + nz[3] * sd.rhohv);
    F[RP_VF_VEL][ix] = (float)rp_volume_fold(vr + nz[4] * sd.vel_ms, j->va);
    const double w_obs = width + nz[5] * sd.width_ms;
    F[RP_VF_WIDTH][ix] = (float)(w_obs > 0 ? w_obs : 0.0);
    if (F[RP_VF_LDRH] != NULL && res.ldr_db > RP_LDR_FLOOR_DB && snr * ldr_lin >= 1.0)
      F[RP_VF_LDRH][ix] = (float)(res.ldr_db + 0.5 * pia_dp + nz[6] * sd.ldr_db);
  }
  /* observed KDP: least-squares slope of PHIDP over the window, halved */
  const int half = s->kdp_window_gates / 2;
  const float *phi = F[RP_VF_PHIDP] + row;
  float *kdp_out = F[RP_VF_KDP] + row;
  double sxx = 0;
  for (int k = -half; k <= half; k++) sxx += (double)k * k;
  sxx *= j->dr_km * j->dr_km;
  for (size_t gi = 0; gi < ng; gi++) {
    kdp_out[gi] = NAN;
    if (gi < (size_t)half || gi + (size_t)half >= ng) continue;
    double sxy = 0;
    int ok = 1;
    for (int k = -half; k <= half; k++) {
      const float p = phi[(size_t)((long)gi + k)];
      if (isnan(p)) {
        ok = 0;
        break;
      }
      sxy += (double)k * j->dr_km * (double)p;
    }
    if (ok) kdp_out[gi] = (float)(0.5 * sxy / sxx);
  }
  return RP_OK;
}

static void sweep_geom_free(sweep_geom *g) {
  free(g->height_m);
  free(g->ground_km);
  free(g->temp_c);
  free(g->density);
  free(g->zmin_dbz);
}

/* Geometry of every gate for each elevation offset (rows 0..nb-1) and the centre (row
 * nb). */
static rp_status sweep_geom_fill(const rp_scenario *s, const rp_volume *v, double el_deg,
                                 sweep_geom *g, rp_error *err) {
  const size_t ng = v->n_gates;
  const size_t rows = (size_t)g->nb + 1;
  g->height_m = malloc(rows * ng * sizeof *g->height_m);
  g->ground_km = malloc(rows * ng * sizeof *g->ground_km);
  g->temp_c = malloc(rows * ng * sizeof *g->temp_c);
  g->density = malloc(ng * sizeof *g->density);
  g->zmin_dbz = malloc(ng * sizeof *g->zmin_dbz);
  if (!g->height_m || !g->ground_km || !g->temp_c || !g->density || !g->zmin_dbz)
    return rp_error_set(err, RP_ENOMEM, "volume: out of memory for the sweep geometry");
  g->el_rad = el_deg * DEG;
  for (size_t k = 0; k < rows; k++) {
    const double e = el_deg + (k < (size_t)g->nb ? g->off[k] / DEG : 0.0);
    for (size_t gi = 0; gi < ng; gi++) {
      double h, sg;
      rp_beam_geometry(v->range_m[gi], e, &h, &sg);
      const double hm = h + s->radar.altitude_m;
      g->height_m[k * ng + gi] = hm;
      g->ground_km[k * ng + gi] = sg / 1000.0;
      g->temp_c[k * ng + gi] = rp_scenario_temperature_c(s, hm);
    }
  }
  for (size_t gi = 0; gi < ng; gi++) {
    double hk = g->height_m[(size_t)g->nb * ng + gi] / 1000.0;
    if (hk < 0) hk = 0;
    if (hk > RP_FALLSPEED_HEIGHT_MAX_KM) hk = RP_FALLSPEED_HEIGHT_MAX_KM;
    double f = 1.0;
    if (rp_fallspeed_density_factor(hk, &f, NULL) != RP_OK) f = 1.0;
    g->density[gi] = f;
    /* Z_min(r) = sensitivity + 20 log10(r / 10 km) */
    g->zmin_dbz[gi] = rp_volume_noise_equivalent_dbz(s, v->range_m[gi]);
  }
  return RP_OK;
}

rp_status rp_volume_synthesize(const rp_scenario *s, const rp_volume_physics *p,
                               const rp_volume_options *o, rp_volume **out, rp_error *err) {
  if (out != NULL) *out = NULL;
  if (s == NULL || p == NULL || o == NULL || out == NULL)
    return rp_error_set(err, RP_EINVAL, "volume: NULL argument");
  if (p->eval == NULL || p->fall == NULL)
    return rp_error_set(err, RP_EINVAL, "volume: physics without an evaluator or fall moments");
  RP_TRY(rp_scenario_check(s, NULL, 0, err));
  if (o->pulses && !o->noise)
    return rp_error_set(err, RP_EINVAL, "volume: pulse level needs noise on (pulse estimates "
                                        "are noisy by nature)");
  if (o->keep_iq && !o->pulses)
    return rp_error_set(err, RP_EINVAL, "volume: keeping I/Q of sweep %zu needs the pulse "
                                        "level", o->keep_iq_sweep);
  if (o->keep_iq && o->keep_iq_sweep >= s->radar.n_elevations)
    return rp_error_set(err, RP_EINVAL, "volume: I/Q of sweep %zu asked, the scenario has "
                        "%zu sweeps (0 to %zu)", o->keep_iq_sweep, (size_t)s->radar.n_elevations,
                        (size_t)s->radar.n_elevations - 1);
  const double t0 = omp_get_wtime();
  rp_status st = RP_OK;
  const rp_scenario_radar *r = &s->radar;
  rp_volume *v = calloc(1, sizeof *v);
  if (v == NULL) return rp_error_set(err, RP_ENOMEM, "volume: out of memory");
  v->scenario = *s;
  v->seed = o->seed;
  v->noise = o->noise;
  v->pulses = o->pulses;
  v->n_sweeps = r->n_elevations;
  const size_t rays_per = (size_t)llround(360.0 / r->azimuth_step_deg);
  v->n_rays = rays_per * v->n_sweeps;
  v->n_gates = r->gates;
  v->wavelength_m = rp_scenario_wavelength_m(s);
  v->nyquist_ms = rp_scenario_nyquist_ms(s);
  v->freezing_level_m = rp_scenario_freezing_level_m(s);
  v->sweep_start = malloc(v->n_sweeps * sizeof *v->sweep_start);
  v->sweep_end = malloc(v->n_sweeps * sizeof *v->sweep_end);
  v->fixed_angle_deg = malloc(v->n_sweeps * sizeof *v->fixed_angle_deg);
  v->azimuth_deg = malloc(v->n_rays * sizeof *v->azimuth_deg);
  v->elevation_deg = malloc(v->n_rays * sizeof *v->elevation_deg);
  v->time_s = malloc(v->n_rays * sizeof *v->time_s);
  v->range_m = malloc(v->n_gates * sizeof *v->range_m);
  int bad = !v->sweep_start || !v->sweep_end || !v->fixed_angle_deg || !v->azimuth_deg ||
            !v->elevation_deg || !v->time_s || !v->range_m;
  const size_t cells = v->n_rays * v->n_gates;
  for (int f = 0; f < RP_VF_COUNT && !bad; f++) {
    if (f == RP_VF_LDRH && !r->measures_ldr) continue;
    v->field[f] = malloc(cells * sizeof(float));
    if (v->field[f] == NULL) bad = 1;
  }
  const size_t m = (size_t)r->pulses;
  if (!bad && o->keep_iq) {
    const size_t per_ray = v->n_gates * m;
    if (per_ray > SIZE_MAX / sizeof(float complex) / rays_per) {
      bad = 1;
    } else {
      v->iq_h = malloc(rays_per * per_ray * sizeof(float complex));
      v->iq_v = malloc(rays_per * per_ray * sizeof(float complex));
      bad = v->iq_h == NULL || v->iq_v == NULL;
      v->iq_sweep = o->keep_iq_sweep;
      v->iq_pulses = m;
    }
  }
  if (bad) {
    rp_volume_free(v);
    return rp_error_set(err, RP_ENOMEM, "volume: out of memory for %zu rays x %zu gates",
                        v->n_rays, v->n_gates);
  }
  const double prt = 1.0 / r->prf_hz;
  for (size_t k = 0; k < v->n_sweeps; k++) {
    v->sweep_start[k] = k * rays_per;
    v->sweep_end[k] = (k + 1) * rays_per - 1;
    v->fixed_angle_deg[k] = r->elevations_deg[k];
    for (size_t i = 0; i < rays_per; i++) {
      const size_t ray = k * rays_per + i;
      v->azimuth_deg[ray] = ((double)i + 0.5) * r->azimuth_step_deg;
      v->elevation_deg[ray] = r->elevations_deg[k];
      v->time_s[ray] = (double)ray * r->pulses * prt;
    }
  }
  for (size_t gi = 0; gi < v->n_gates; gi++) v->range_m[gi] = ((double)gi + 0.5) * r->gate_spacing_m;

  ray_job job;
  job.s = s;
  job.p = p;
  job.o = o;
  job.v = v;
  job.fl_m = v->freezing_level_m;
  job.dr_km = r->gate_spacing_m / 1000.0;
  job.sigma_b_rad = rp_beam_sigma_deg(r->beamwidth_deg) * DEG;
  job.prt_s = prt;
  job.va = v->nyquist_ms;
  job.lambda = v->wavelength_m;
  job.rot_rad_s = r->azimuth_step_deg * DEG / (r->pulses * prt);
  job.pulses = o->pulses;
  job.m = m;
  job.iq_h = job.iq_v = NULL;
  const int nthreads = o->threads > 0 ? o->threads : omp_get_max_threads();
  /* one workspace and sample buffers per thread, for the whole synthesis */
  pulse_ctx *pcs = NULL;
  if (o->pulses) {
    pcs = calloc((size_t)nthreads, sizeof *pcs);
    if (pcs == NULL) st = rp_error_set(err, RP_ENOMEM, "volume: out of memory for the pulses");
    for (int t = 0; t < nthreads && st == RP_OK; t++) {
      pcs[t].ws = rp_iq_workspace_alloc(m, err);
      pcs[t].h = malloc(m * sizeof *pcs[t].h);
      pcs[t].v = malloc(m * sizeof *pcs[t].v);
      if (pcs[t].ws == NULL) st = err != NULL && err->status != RP_OK ? err->status : RP_ENOMEM;
      else if (pcs[t].h == NULL || pcs[t].v == NULL)
        st = rp_error_set(err, RP_ENOMEM, "volume: out of memory for the pulses");
    }
  }
  sweep_geom g;
  memset(&g, 0, sizeof g);
  g.nb = s->beam_samples;
  if (st == RP_OK) {
    double off[RP_BEAM_SAMPLES_MAX];
    st = rp_beam_gauss_hermite(g.nb, off, g.w, err);
    for (int k = 0; k < g.nb; k++) g.off[k] = off[k] * job.sigma_b_rad;
  }
  rp_volume_summary sum;
  memset(&sum, 0, sizeof sum);
  for (size_t k = 0; k < v->n_sweeps && st == RP_OK; k++) {
    st = sweep_geom_fill(s, v, r->elevations_deg[k], &g, err);
    if (st != RP_OK) break;
    job.sweep = k;
    job.g = &g;
    const int keep = v->iq_h != NULL && k == v->iq_sweep;
    job.iq_h = keep ? v->iq_h : NULL;
    job.iq_v = keep ? v->iq_v : NULL;
    rp_status sweep_st = RP_OK;
    long first_bad = -1;
    rp_error first_err;
    memset(&first_err, 0, sizeof first_err);
    const long nr = (long)rays_per;
#pragma omp parallel for schedule(dynamic, 4) num_threads(nthreads)
    for (long i = 0; i < nr; i++) {
      rp_error e;
      memset(&e, 0, sizeof e);
      pulse_ctx *pc = pcs != NULL ? &pcs[omp_get_thread_num()] : NULL;
      const rp_status rs = do_ray(&job, pc, (size_t)i, k * rays_per + (size_t)i, &e);
      if (rs != RP_OK) {
#pragma omp critical(rp_volume_error)
        {
          if (first_bad < 0 || i < first_bad) {
            first_bad = i;
            sweep_st = rs;
            first_err = e;
          }
        }
      }
    }
    if (sweep_st != RP_OK) {
      st = rp_error_set(err, sweep_st, "volume: sweep %zu, ray %ld: %s", k, first_bad,
                        first_err.msg);
      break;
    }
    sweep_geom_free(&g);
    g.height_m = g.ground_km = g.temp_c = g.density = g.zmin_dbz = NULL;
    if (o->progress != NULL) o->progress(o->progress_ctx, (double)(k + 1) / (double)v->n_sweeps);
  }
  sweep_geom_free(&g);
  if (pcs != NULL) {
    for (int t = 0; t < nthreads; t++) {
      rp_iq_workspace_free(pcs[t].ws);
      free(pcs[t].h);
      free(pcs[t].v);
    }
    free(pcs);
  }
  if (st != RP_OK) {
    rp_volume_free(v);
    return st;
  }
  for (size_t i = 0; i < cells; i++) {
    if (!isnan(v->field[RP_VF_TRUTH_ZH][i])) sum.rain_gates++;
    if (!isnan(v->field[RP_VF_DBZ][i])) sum.observed_gates++;
    const double pia = v->field[RP_VF_TRUTH_PIA][i];
    if (pia > sum.max_pia_db) sum.max_pia_db = pia;
    const double ph = (double)v->field[RP_VF_TRUTH_PHIDP][i] +
                      (isnan(v->field[RP_VF_TRUTH_DELTA_HV][i]) ? 0.0 : (double)v->field[RP_VF_TRUTH_DELTA_HV][i]) +
                      r->phidp_offset_deg;
    if (ph > sum.max_phidp_deg) sum.max_phidp_deg = ph;
  }
  sum.gates = cells;
  sum.seconds = omp_get_wtime() - t0;
  v->summary = sum;
  *out = v;
  return RP_OK;
}
