/* pulse_estimators.c — moments of one gate from its I/Q samples, their first-order
 * standard deviations, and Monte-Carlo ensembles.
 *
 * Lag products (samples normalised to noise power 1 per channel, iq.h):
 *   R0 = (1/M) sum |x|^2, R1 = (1/(M-1)) sum x*(m) x(m+1), R2 = (1/(M-2)) sum x*(m) x(m+2),
 *   R_hv = (1/M) sum h v*.
 * Pulse pair (Doviak & Zrnić 1993, sec. 6.4; eq. numbers from memory: 6.19 velocity,
 * 6.27 width from R0/R1, 6.32 width from R1/R2): for a Gaussian spectrum
 * |R(k)| = S exp(-8 pi^2 w^2 k^2 T^2 / lambda^2), hence
 *   v = (lambda / (4 pi T)) arg R1 = (v_a/pi) arg R1    (sign: iq.h, exp(-i omega t))
 *   w = (lambda / (2 sqrt 2 pi T)) sqrt(ln(S/|R1|)) = (sqrt 2 v_a / pi) sqrt(ln(S/|R1|))
 *   w = (lambda / (2 sqrt 6 pi T)) sqrt(ln(|R1|/|R2|)) = (2 v_a/(sqrt 6 pi)) sqrt(...)
 * with S = R0 - 1 the noise-subtracted power. Polarimetric (Bringi & Chandrasekar 2001,
 * sec. 6.4): Z_DR = 10 log10(S_h/S_v), rho_hv = |R_hv| / sqrt(S_h S_v) (noise corrected:
 * noise is uncorrelated between channels, so it biases only the powers),
 * Phi_DP = arg R_hv.
 *
 * Spectral moments: periodogram P_k = |sum_m w_m h_m e^{-2 pi i k m/M}|^2 / sum w^2
 * (noise floor 1), e_k = P_k - 1; bins are taken relative to the peak bin k0 with
 * offsets d in [-M/2, M/2) (a circular treatment: a spectrum straddling +-v_a stays in
 * one piece), mean = k0 + sum e d / sum e, width^2 = sum e (d - mean)^2 / sum e minus the
 * second moment of the window's spectral kernel (the periodogram's expectation is the
 * spectrum convolved with it, and second moments of a convolution add). The kernel's
 * moment is exact from the window's autocorrelation r_w:
 *   int_{-1/2}^{1/2} f^2 |W(f)|^2 df = r_w(0)/12 + sum_{k != 0} r_w(k) (-1)^k / (2 pi^2 k^2).
 *
 * Theory (rp_pulse_theory_sd): the lag products P_i = (1/L) sum a*(m) b(m+p) of the
 * complex Gaussian model have exact covariances by Isserlis' theorem,
 *   E[d1 d2*] = (1/(L1 L2)) sum_k n(k) C_db(k + p - q) C_ac(-k)
 *   E[d1 d2]  = (1/(L1 L2)) sum_k n(k) C_cb(k + p) C_ad(q - k),
 * n(k) = #{(m, n): m - n = k} and C_xy(k) = E[x*(m) y(m+k)]; the estimators' variances
 * follow to first order from their gradients. This is the perturbation method of Zrnić
 * (1977) and Doviak & Zrnić (1993, sec. 6.4.1), evaluated without the large-M or
 * narrow-spectrum simplifications. */
#include "rainprint/pulse_estimators.h"

#include <math.h>
#include <omp.h>
#include <stdlib.h>
#include <string.h>

#include "signal/signal_internal.h"

static const double complex IU = CMPLX(0.0, 1.0);

static const double RAD2DEG = 57.295779513082320876798;

static const struct {
  const char *name, *units;
} KEYS[RP_PULSE_N_KEYS] = {
    {"power", "1"},           {"zh", "dBZ"},          {"velocity_pp", "m s-1"},
    {"width_r0r1", "m s-1"},  {"width_r1r2", "m s-1"}, {"zdr", "dB"},
    {"rhohv", "1"},           {"phidp", "degree"},    {"velocity_spectral", "m s-1"},
    {"width_spectral", "m s-1"}};

const char *rp_pulse_key_name(rp_pulse_key k) {
  return (unsigned)k < RP_PULSE_N_KEYS ? KEYS[k].name : NULL;
}
const char *rp_pulse_key_units(rp_pulse_key k) {
  return (unsigned)k < RP_PULSE_N_KEYS ? KEYS[k].units : NULL;
}

/* ---- window ------------------------------------------------------------------------- */

void rp_signal_window(rp_pulse_window k, size_t n, double *w, double *sum2,
                      double *var_bins2) {
  const double dn = (double)n;
  double s2 = 0;
  for (size_t m = 0; m < n; m++) {
    if (k == RP_WINDOW_HANN) {
      const double s = sin(M_PI * ((double)m + 0.5) / dn);
      w[m] = s * s;
    } else {
      w[m] = 1.0;
    }
    s2 += w[m] * w[m];
  }
  /* second moment of |W(f)|^2 / r_w(0) over f in [-1/2, 1/2], from r_w */
  double acc = s2 / 12.0;
  for (size_t lag = 1; lag < n; lag++) {
    double r = 0;
    for (size_t m = 0; m + lag < n; m++) r += w[m] * w[m + lag];
    const double dl = (double)lag;
    acc += 2.0 * r * ((lag & 1) ? -1.0 : 1.0) / (2.0 * M_PI * M_PI * dl * dl);
  }
  *sum2 = s2;
  *var_bins2 = acc / s2 * dn * dn;
}

static rp_status prepare_fwd(rp_iq_workspace *ws, size_t m, rp_pulse_window window,
                             rp_error *err) {
  if (ws->fwd_n != m) {
    rp_fft_destroy(ws->fwd);
    ws->fwd_n = 0;
    ws->fwd = rp_fft_plan_1d((int)m, ws->fx, ws->fx, FFTW_FORWARD);
    if (!ws->fwd)
      return rp_error_set(err, RP_EFFTW, "FFTW could not plan a forward transform of %zu "
                          "points", m);
    ws->fwd_n = m;
    ws->win_kind = -1;
  }
  if (ws->win_kind != (int)window) {
    rp_signal_window(window, m, ws->win, &ws->win_sum2, &ws->win_var_bins2);
    ws->win_kind = (int)window;
  }
  return RP_OK;
}

/* ---- estimates ---------------------------------------------------------------------- */

/* What the estimators use of p (the spectrum fields may be unused when the samples
 * came from a mixture): M, T_s, lambda, SNR and Z_h. */
static rp_status check_estimator_params(const rp_iq_params *p, rp_error *err) {
  if (!p) return rp_error_set(err, RP_EINVAL, "pulse estimators: NULL parameters");
  rp_iq_params q = *p;
  q.velocity_m_s = 0;
  q.width_m_s = 0;
  q.zdr_db = 0;
  q.rhohv = 1;
  q.phidp_deg = 0;
  return rp_iq_params_check(&q, NULL, err);
}

static double wrap_sym(double x, double half_period) {
  /* into (-half, half] */
  const double p = 2 * half_period;
  double y = x - p * floor(x / p + 0.5);
  if (y <= -half_period) y += p;
  if (y > half_period) y -= p;
  return y;
}

rp_status rp_pulse_estimate(rp_iq_workspace *ws, const rp_iq_params *p,
                            const double complex *h, const double complex *v,
                            rp_pulse_window window, rp_pulse_estimates *out,
                            double *periodogram, rp_error *err) {
  if (!ws || !h || !v || !out)
    return rp_error_set(err, RP_EINVAL, "pulse estimators: NULL pointer");
  RP_TRY(check_estimator_params(p, err));
  if (window != RP_WINDOW_RECT && window != RP_WINDOW_HANN)
    return rp_error_set(err, RP_EINVAL, "pulse estimators: unknown window %d", (int)window);
  const size_t m = p->n_pulses;
  if (m > ws->max_pulses)
    return rp_error_set(err, RP_EINVAL, "pulse estimators: M = %zu pulses exceeds the "
                        "workspace's %zu", m, ws->max_pulses);
  RP_TRY(prepare_fwd(ws, m, window, err));
  const double va = rp_iq_nyquist_m_s(p->prt_s, p->wavelength_mm);
  const double dm = (double)m;

  double r0h = 0, r0v = 0;
  double complex r1 = 0, r2 = 0, rhv = 0;
  for (size_t k = 0; k < m; k++) {
    const double complex a = h[k], b = v[k];
    r0h += creal(a) * creal(a) + cimag(a) * cimag(a);
    r0v += creal(b) * creal(b) + cimag(b) * cimag(b);
    rhv += a * conj(b);
    if (k + 1 < m) r1 += conj(a) * h[k + 1];
    if (k + 2 < m) r2 += conj(a) * h[k + 2];
    ws->fx[k] = ws->win[k] * a;
  }
  r0h /= dm;
  r0v /= dm;
  rhv /= dm;
  r1 /= (dm - 1);
  if (m > 2) r2 /= (dm - 2);

  double *e = out->value;
  const double sh = r0h - 1, sv = r0v - 1;
  const double s_true = pow(10.0, p->snr_db / 10);
  const double a1 = cabs(r1), a2 = cabs(r2);
  e[RP_PULSE_POWER] = sh;
  e[RP_PULSE_ZH] = sh > 0 ? p->zh_dbz + 10 * log10(sh / s_true) : (double)NAN;
  e[RP_PULSE_VELOCITY_PP] = va / M_PI * carg(r1);
  e[RP_PULSE_WIDTH_R0R1] =
      (sh > 0 && a1 > 0) ? M_SQRT2 * va / M_PI * sqrt(fmax(0.0, log(sh / a1))) : (double)NAN;
  e[RP_PULSE_WIDTH_R1R2] = (m > 2 && a2 > 0 && a1 > 0)
                               ? 2 * va / (sqrt(6.0) * M_PI) * sqrt(fmax(0.0, log(a1 / a2)))
                               : (double)NAN;
  const int both = sh > 0 && sv > 0;
  e[RP_PULSE_ZDR] = both ? 10 * log10(sh / sv) : (double)NAN;
  e[RP_PULSE_RHOHV] = both ? cabs(rhv) / sqrt(sh * sv) : (double)NAN;
  e[RP_PULSE_PHIDP] = RAD2DEG * carg(rhv);

  /* spectral moments */
  fftw_execute_dft(ws->fwd, ws->fx, ws->fx);
  double *pg = periodogram ? periodogram : ws->pgram;
  size_t k0 = 0;
  for (size_t k = 0; k < m; k++) {
    const double complex x = ws->fx[k];
    pg[k] = (creal(x) * creal(x) + cimag(x) * cimag(x)) / ws->win_sum2;
    if (pg[k] > pg[k0]) k0 = k;
  }
  const long half = (long)(m / 2), lm = (long)m;
  double se = 0, sed = 0, sed2 = 0;
  for (size_t k = 0; k < m; k++) {
    long d = ((long)k - (long)k0 + lm + half) % lm - half;   /* [-M/2, M/2) */
    const double ek = pg[k] - 1, dd = (double)d;
    se += ek;
    sed += ek * dd;
    sed2 += ek * dd * dd;
  }
  if (se > 0) {
    const double mean_rel = sed / se;
    const double var = sed2 / se - mean_rel * mean_rel - ws->win_var_bins2;
    const double dv = 2 * va / dm;
    double vel = ((double)k0 + mean_rel) * dv;
    vel = wrap_sym(vel, va);
    e[RP_PULSE_VELOCITY_SPECTRAL] = vel;
    e[RP_PULSE_WIDTH_SPECTRAL] = sqrt(fmax(0.0, var)) * dv;
  } else {
    e[RP_PULSE_VELOCITY_SPECTRAL] = NAN;
    e[RP_PULSE_WIDTH_SPECTRAL] = NAN;
  }
  return RP_OK;
}

rp_status rp_pulse_gate(rp_iq_workspace *ws, const rp_iq_params *p,
                        const rp_iq_spectrum *spec, rp_rng *rng, rp_pulse_window window,
                        rp_pulse_estimates *out, double complex *h_out,
                        double complex *v_out, rp_error *err) {
  if (!ws || !out) return rp_error_set(err, RP_EINVAL, "pulse gate: NULL pointer");
  double complex *h = h_out ? h_out : ws->h;
  double complex *v = v_out ? v_out : ws->v;
  RP_TRY(rp_iq_synthesize(ws, p, spec, rng, h, v, err));
  return rp_pulse_estimate(ws, p, h, v, window, out, NULL, err);
}

rp_status rp_pulse_staggered_velocity(const rp_iq_params *p, rp_iq_stagger st,
                                      const double complex *h, double *v_t1, double *v_t2,
                                      double *v_ext, rp_error *err) {
  if (!p || !h) return rp_error_set(err, RP_EINVAL, "staggered velocity: NULL pointer");
  RP_TRY(check_estimator_params(p, err));
  if (p->n_pulses < 3)
    return rp_error_set(err, RP_EINVAL, "staggered velocity: M = %zu pulses, need >= 3",
                        p->n_pulses);
  if (st.k1 < 1 || st.k2 <= st.k1 || st.k2 > 16)
    return rp_error_set(err, RP_EINVAL, "staggered PRT ratio %u/%u: need 1 <= k1 < k2 <= 16",
                        st.k1, st.k2);
  const size_t m = p->n_pulses;
  double complex r1 = 0, r2 = 0;   /* gaps T1 (m even -> m + 1) and T2 (m odd -> m + 1) */
  for (size_t k = 0; k + 1 < m; k++) {
    if (k & 1)
      r2 += conj(h[k]) * h[k + 1];
    else
      r1 += conj(h[k]) * h[k + 1];
  }
  const double t1 = p->prt_s, t2 = p->prt_s * (double)st.k2 / (double)st.k1;
  const double lam = 1e-3 * p->wavelength_mm;
  const double va1 = lam / (4 * t1);
  const double a1 = lam / (4 * M_PI * t1) * carg(r1);
  const double a2 = lam / (4 * M_PI * t2) * carg(r2);
  const double vd = lam / (4 * M_PI * (t2 - t1)) * carg(r2 * conj(r1));
  const double vext = lam / (4 * (t2 - t1));
  const double n = round((vd - a1) / (2 * va1));
  double ve = wrap_sym(a1 + 2 * va1 * n, vext);
  if (v_t1) *v_t1 = a1;
  if (v_t2) *v_t2 = a2;
  if (v_ext) *v_ext = ve;
  return RP_OK;
}

void rp_pulse_truth(const rp_iq_params *p, const rp_iq_spectrum *spec,
                    rp_pulse_estimates *truth) {
  double mean, width;
  rp_iq_spectrum_moments(p, spec, &mean, &width);
  double *t = truth->value;
  t[RP_PULSE_POWER] = pow(10.0, p->snr_db / 10);
  t[RP_PULSE_ZH] = p->zh_dbz;
  t[RP_PULSE_VELOCITY_PP] = mean;
  t[RP_PULSE_WIDTH_R0R1] = width;
  t[RP_PULSE_WIDTH_R1R2] = width;
  t[RP_PULSE_ZDR] = p->zdr_db;
  t[RP_PULSE_RHOHV] = p->rhohv;
  t[RP_PULSE_PHIDP] = wrap_sym(p->phidp_deg, 180.0);
  t[RP_PULSE_VELOCITY_SPECTRAL] = mean;
  t[RP_PULSE_WIDTH_SPECTRAL] = width;
}

/* ---- theory ------------------------------------------------------------------------- */

typedef struct {
  const double complex *r; /* r[k + off], k in [-off, off] */
  long off;
  double sh, sv;
  double complex chv, cvh;  /* C_hv(k) = chv r(k), C_vh(k) = cvh r(k) */
} model_cov;

/* C_xy(k) = E[x*(m) y(m+k)], channels 0 = h, 1 = v */
static double complex cov_xy(const model_cov *mc, int x, int y, long k) {
  const double complex r = mc->r[k + mc->off];
  if (x == y) return (x == 0 ? mc->sh : mc->sv) * r + (k == 0 ? 1.0 : 0.0);
  return (x == 0 ? mc->chv : mc->cvh) * r;
}

typedef struct {
  int a, b;
  long p, l;
} lag_product;

static void product_cov(const model_cov *mc, const lag_product *u, const lag_product *w,
                        double complex *e_conj, double complex *e_plain) {
  double complex s1 = 0, s2 = 0;
  for (long k = -(w->l - 1); k <= u->l - 1; k++) {
    const long lo = k > 0 ? k : 0;
    const long hi = u->l < w->l + k ? u->l : w->l + k;
    if (hi <= lo) continue;
    const double cnt = (double)(hi - lo);
    s1 += cnt * cov_xy(mc, w->b, u->b, k + u->p - w->p) * cov_xy(mc, u->a, w->a, -k);
    s2 += cnt * cov_xy(mc, w->a, u->b, k + u->p) * cov_xy(mc, u->a, w->b, w->p - k);
  }
  const double norm = (double)u->l * (double)w->l;
  *e_conj = s1 / norm;
  *e_plain = s2 / norm;
}

enum { P_R0H, P_R0V, P_R1, P_R2, P_HV, N_PROD };

rp_status rp_pulse_theory_sd(const rp_iq_params *p, const rp_iq_spectrum *spec,
                             rp_pulse_estimates *sd, rp_error *err) {
  if (!sd) return rp_error_set(err, RP_EINVAL, "pulse theory: NULL pointer");
  RP_TRY(rp_iq_params_check(p, spec, err));
  const long m = (long)p->n_pulses;
  const long off = m + 3;
  double complex *r = malloc((size_t)(2 * off + 1) * sizeof *r);
  if (!r) return rp_error_set(err, RP_ENOMEM, "pulse theory for M = %ld: out of memory", m);
  for (long k = -off; k <= off; k++) r[k + off] = rp_iq_autocorr(p, spec, k);
  model_cov mc;
  mc.r = r;
  mc.off = off;
  mc.sh = pow(10.0, p->snr_db / 10);
  mc.sv = mc.sh * pow(10.0, -p->zdr_db / 10);
  const double phi = p->phidp_deg / RAD2DEG;
  const double mag = p->rhohv * sqrt(mc.sh * mc.sv);
  mc.chv = mag * cexp(-IU * phi);
  mc.cvh = mag * cexp(IU * phi);

  const lag_product prod[N_PROD] = {
      {0, 0, 0, m}, {1, 1, 0, m}, {0, 0, 1, m - 1}, {0, 0, 2, m - 2}, {0, 1, 0, m}};
  const int nprod = N_PROD; /* P_R2 has l = 0 for M = 2: its moments are left 0 */
  double cov[2 * N_PROD][2 * N_PROD];
  double complex mean[N_PROD];
  for (int i = 0; i < nprod; i++)
    mean[i] = prod[i].l > 0 ? cov_xy(&mc, prod[i].a, prod[i].b, prod[i].p) : 0;
  for (int i = 0; i < nprod; i++) {
    for (int j = 0; j < nprod; j++) {
      double complex ec = 0, ep = 0;
      if (prod[i].l > 0 && prod[j].l > 0) product_cov(&mc, &prod[i], &prod[j], &ec, &ep);
      cov[2 * i][2 * j] = 0.5 * creal(ep + ec);         /* Re Re */
      cov[2 * i + 1][2 * j + 1] = 0.5 * creal(ec - ep); /* Im Im */
      cov[2 * i][2 * j + 1] = 0.5 * (cimag(ep) - cimag(ec)); /* Re_i Im_j */
      cov[2 * i + 1][2 * j] = 0.5 * (cimag(ep) + cimag(ec)); /* Im_i Re_j */
    }
  }
  free(r);

  const double va = rp_iq_nyquist_m_s(p->prt_s, p->wavelength_mm);
  const double sh = mc.sh, sv = mc.sv;
  const double ln10 = log(10.0);
  double g[RP_PULSE_N_KEYS][2 * N_PROD];
  memset(g, 0, sizeof g);
  int defined[RP_PULSE_N_KEYS] = {0};
  /* power and Z_h */
  g[RP_PULSE_POWER][2 * P_R0H] = 1;
  defined[RP_PULSE_POWER] = 1;
  g[RP_PULSE_ZH][2 * P_R0H] = 10 / (ln10 * sh);
  defined[RP_PULSE_ZH] = 1;
  /* velocity: (va/pi) atan2(Im R1, Re R1) */
  const double complex m1 = mean[P_R1], m2 = mean[P_R2];
  const double a1 = cabs(m1), a2 = cabs(m2);
  if (a1 > 0) {
    g[RP_PULSE_VELOCITY_PP][2 * P_R1] = -va / M_PI * cimag(m1) / (a1 * a1);
    g[RP_PULSE_VELOCITY_PP][2 * P_R1 + 1] = va / M_PI * creal(m1) / (a1 * a1);
    defined[RP_PULSE_VELOCITY_PP] = 1;
  }
  /* width R0/R1 */
  const double lg01 = a1 > 0 ? log(sh / a1) : 0;
  if (lg01 > 1e-12) {
    const double c = M_SQRT2 * va / M_PI / (2 * sqrt(lg01));
    g[RP_PULSE_WIDTH_R0R1][2 * P_R0H] = c / sh;
    g[RP_PULSE_WIDTH_R0R1][2 * P_R1] = -c * creal(m1) / (a1 * a1);
    g[RP_PULSE_WIDTH_R0R1][2 * P_R1 + 1] = -c * cimag(m1) / (a1 * a1);
    defined[RP_PULSE_WIDTH_R0R1] = 1;
  }
  const double lg12 = (m > 2 && a1 > 0 && a2 > 0) ? log(a1 / a2) : 0;
  if (lg12 > 1e-12) {
    const double c = 2 * va / (sqrt(6.0) * M_PI) / (2 * sqrt(lg12));
    g[RP_PULSE_WIDTH_R1R2][2 * P_R1] = c * creal(m1) / (a1 * a1);
    g[RP_PULSE_WIDTH_R1R2][2 * P_R1 + 1] = c * cimag(m1) / (a1 * a1);
    g[RP_PULSE_WIDTH_R1R2][2 * P_R2] = -c * creal(m2) / (a2 * a2);
    g[RP_PULSE_WIDTH_R1R2][2 * P_R2 + 1] = -c * cimag(m2) / (a2 * a2);
    defined[RP_PULSE_WIDTH_R1R2] = 1;
  }
  /* Z_DR */
  g[RP_PULSE_ZDR][2 * P_R0H] = 10 / (ln10 * sh);
  g[RP_PULSE_ZDR][2 * P_R0V] = -10 / (ln10 * sv);
  defined[RP_PULSE_ZDR] = 1;
  /* rho_hv = |P_HV| / sqrt(S_h S_v) and Phi_DP = -arg P_HV (P_HV = (1/M) sum h* v) */
  const double complex mh = mean[P_HV];
  const double ah = cabs(mh);
  const double rho = ah / sqrt(sh * sv);
  if (ah > 0) {
    g[RP_PULSE_RHOHV][2 * P_HV] = creal(mh) / ah / sqrt(sh * sv);
    g[RP_PULSE_RHOHV][2 * P_HV + 1] = cimag(mh) / ah / sqrt(sh * sv);
    g[RP_PULSE_PHIDP][2 * P_HV] = RAD2DEG * cimag(mh) / (ah * ah);
    g[RP_PULSE_PHIDP][2 * P_HV + 1] = -RAD2DEG * creal(mh) / (ah * ah);
    defined[RP_PULSE_PHIDP] = 1;
  }
  g[RP_PULSE_RHOHV][2 * P_R0H] = -rho / (2 * sh);
  g[RP_PULSE_RHOHV][2 * P_R0V] = -rho / (2 * sv);
  defined[RP_PULSE_RHOHV] = 1;

  for (int k = 0; k < RP_PULSE_N_KEYS; k++) {
    if (!defined[k]) {
      sd->value[k] = NAN;
      continue;
    }
    double var = 0;
    for (int i = 0; i < 2 * N_PROD; i++)
      for (int j = 0; j < 2 * N_PROD; j++) var += g[k][i] * cov[i][j] * g[k][j];
    sd->value[k] = sqrt(fmax(0.0, var));
  }
  return RP_OK;
}

rp_status rp_pulse_expected_periodogram(const rp_iq_params *p, const rp_iq_spectrum *spec,
                                        rp_pulse_window window, double *out,
                                        rp_error *err) {
  if (!out) return rp_error_set(err, RP_EINVAL, "expected periodogram: NULL pointer");
  RP_TRY(rp_iq_params_check(p, spec, err));
  if (window != RP_WINDOW_RECT && window != RP_WINDOW_HANN)
    return rp_error_set(err, RP_EINVAL, "expected periodogram: unknown window %d", (int)window);
  const size_t m = p->n_pulses;
  double *w = malloc(m * sizeof *w);
  double complex *c = malloc(m * sizeof *c);
  rp_status st = RP_OK;
  if (!w || !c) {
    st = rp_error_set(err, RP_ENOMEM, "expected periodogram for M = %zu: out of memory", m);
    goto done;
  }
  double s2, var;
  rp_signal_window(window, m, w, &s2, &var);
  const double sh = pow(10.0, p->snr_db / 10);
  /* c[l] = r_w(l) C_hh(l) for l >= 0; C_hh(-l) = conj C_hh(l) */
  for (size_t l = 0; l < m; l++) {
    double rw = 0;
    for (size_t k = 0; k + l < m; k++) rw += w[k] * w[k + l];
    c[l] = rw * (sh * rp_iq_autocorr(p, spec, (long)l) + (l == 0 ? 1.0 : 0.0));
  }
  const double dm = (double)m;
  for (size_t k = 0; k < m; k++) {
    double acc = creal(c[0]);
    for (size_t l = 1; l < m; l++) {
      const double ang = -2 * M_PI * (double)((k * l) % m) / dm;
      acc += 2 * creal(c[l] * cexp(IU * ang));
    }
    out[k] = acc / s2;
  }
done:
  free(w);
  free(c);
  return st;
}

/* ---- ensembles ---------------------------------------------------------------------- */

rp_status rp_pulse_ensemble(const rp_iq_params *p, const rp_iq_spectrum *spec,
                            rp_pulse_window window, size_t n_realisations, uint64_t seed,
                            rp_pulse_summary *summary, const rp_pulse_ensemble_out *out,
                            rp_error *err) {
  if (!p || !summary) return rp_error_set(err, RP_EINVAL, "pulse ensemble: NULL pointer");
  if (n_realisations == 0)
    return rp_error_set(err, RP_EINVAL, "pulse ensemble: number of realisations is 0");
  RP_TRY(rp_iq_params_check(p, spec, err));
  if (window != RP_WINDOW_RECT && window != RP_WINDOW_HANN)
    return rp_error_set(err, RP_EINVAL, "pulse ensemble: unknown window %d", (int)window);
  const size_t m = p->n_pulses, nr = n_realisations;
  const int want_pg = out && out->mean_periodogram;
  /* periodograms are kept for one chunk of realisations at a time (bounded memory) and
   * summed in realisation order after each chunk */
  const size_t chunk = nr < 512 ? nr : 512;
  rp_pulse_estimates *est = malloc(nr * sizeof *est);
  double *pgs = want_pg ? malloc(chunk * m * sizeof *pgs) : NULL;
  if (!est || (want_pg && !pgs)) {
    free(est);
    free(pgs);
    return rp_error_set(err, RP_ENOMEM, "pulse ensemble of %zu realisations: out of memory",
                        nr);
  }
  if (want_pg)
    for (size_t k = 0; k < m; k++) out->mean_periodogram[k] = 0;
  rp_status st = RP_OK;
  size_t fail_index = nr;
  rp_error fail_err = {RP_OK, ""};
#pragma omp parallel
  {
    rp_error lerr = {RP_OK, ""};
    rp_iq_workspace *ws = rp_iq_workspace_alloc(m, &lerr);
    rp_status lst = ws ? RP_OK : lerr.status;
    size_t lfail = ws ? nr : 0;
    for (size_t c0 = 0; c0 < nr; c0 += chunk) {
      const size_t c1 = nr - c0 < chunk ? nr : c0 + chunk;
#pragma omp for schedule(dynamic, 16)
      for (size_t j = c0; j < c1; j++) {
        if (lst != RP_OK) continue;
        rp_rng rng;
        rp_rng_init(&rng, seed, rp_rng_key(RP_RNG_PULSES, 0, j, 0));
        double complex *h = (out && out->h) ? out->h + j * m : ws->h;
        double complex *v = (out && out->v) ? out->v + j * m : ws->v;
        lst = rp_iq_synthesize(ws, p, spec, &rng, h, v, &lerr);
        if (lst == RP_OK)
          lst = rp_pulse_estimate(ws, p, h, v, window, &est[j],
                                  want_pg ? pgs + (j - c0) * m : NULL, &lerr);
        if (lst != RP_OK) lfail = j;
      }
      if (want_pg) {
#pragma omp single
        for (size_t k = 0; k < m; k++)
          for (size_t j = c0; j < c1; j++) out->mean_periodogram[k] += pgs[(j - c0) * m + k];
      }
    }
    if (lst != RP_OK) {
#pragma omp critical(rp_pulse_ensemble_fail)
      if (lfail < fail_index || fail_index == nr) {
        fail_index = lfail;
        st = lst;
        fail_err = lerr;
      }
    }
    rp_iq_workspace_free(ws);
  }
  if (st != RP_OK) {
    if (err) *err = fail_err;
    goto done;
  }

  rp_pulse_estimates truth, theory;
  rp_pulse_truth(p, spec, &truth);
  st = rp_pulse_theory_sd(p, spec, &theory, err);
  if (st != RP_OK) goto done;
  const double va = rp_iq_nyquist_m_s(p->prt_s, p->wavelength_mm);
  for (int k = 0; k < RP_PULSE_N_KEYS; k++) {
    double half = 0; /* wrap period / 2, 0: none */
    if (k == RP_PULSE_VELOCITY_PP || k == RP_PULSE_VELOCITY_SPECTRAL) half = va;
    if (k == RP_PULSE_PHIDP) half = 180.0;
    double s = 0;
    size_t n = 0;
    for (size_t j = 0; j < nr; j++) {
      const double x = est[j].value[k];
      if (!isfinite(x)) continue;
      double d = x - truth.value[k];
      if (half > 0) d = wrap_sym(d, half);
      s += d;
      n++;
    }
    rp_pulse_summary *o = &summary[k];
    o->truth = truth.value[k];
    o->sd_theory = theory.value[k];
    o->n_valid = n;
    o->bias = n ? s / (double)n : (double)NAN;
    o->mean = o->truth + o->bias;
    if (half > 0 && n) o->mean = wrap_sym(o->mean, half);
    double ss = 0;
    for (size_t j = 0; j < nr && n > 1; j++) {
      const double x = est[j].value[k];
      if (!isfinite(x)) continue;
      double d = x - truth.value[k];
      if (half > 0) d = wrap_sym(d, half);
      ss += (d - o->bias) * (d - o->bias);
    }
    o->sd = n > 1 ? sqrt(ss / (double)(n - 1)) : (double)NAN;
  }
  if (want_pg)
    for (size_t k = 0; k < m; k++) out->mean_periodogram[k] /= (double)nr;
  if (out && out->true_spectrum) rp_iq_true_spectrum(p, spec, out->true_spectrum);
  if (out && out->expected_periodogram)
    st = rp_pulse_expected_periodogram(p, spec, window, out->expected_periodogram, err);
  if (out && out->each && st == RP_OK) memcpy(out->each, est, nr * sizeof *est);
done:
  free(est);
  free(pgs);
  return st;
}
