/* iq.c — synthetic dual-polarisation I/Q samples of one gate (Zrnić 1975).
 *
 * Method (Zrnić 1975, "Simulation of weatherlike Doppler spectra and signals", J. Appl.
 * Meteor. 14, 619-620): the signal of a gate is a complex Gaussian process; its N-point
 * discrete Fourier coefficients X_j are independent complex Gaussians (power
 * exponentially distributed, phase uniform) with E|X_j|^2 = S D_j / sum D, D_j the
 * spectral density sampled at frequency j/N (cycles per pulse). The inverse transform
 * x_m = sum_j X_j e^{2 pi i j m / N} (FFTW backward, unnormalised) has E|x|^2 = S and
 * autocorrelation E[x*_m x_{m+k}] = S sum_j (D_j/sum D) e^{2 pi i j k / N}.
 *
 * Periodicity: by Poisson summation, sampling the density (folded over the Nyquist
 * interval) at j/N gives the autocorrelation sum_p r(k + pN) / sum_p r(pN): the true
 * one plus its copies shifted by N lags (the series is N-periodic). We keep M samples
 * of a series of length N >= M with N the smallest power of two for which the copies
 * are negligible: for a Gaussian of normalised width sigma = w/(2 v_a),
 * r(N) = exp(-2 pi^2 sigma^2 N^2) <= 1e-6 when N sigma >= sqrt(ln(1e6)/(2 pi^2)) =
 * 0.8366 (RP_IQ_WRAP_NSIGMA). So the lag correlations of the M kept samples are those
 * of the input spectrum to 1e-6 (tested), whatever M and the width, up to
 * N <= n_cap = max(8192, 16 M) (power of two). Components narrower than
 * RP_IQ_WRAP_NSIGMA / n_cap are treated as lines (all power in one bin): then
 * r(k) = 1 instead of exp(-2 pi^2 sigma^2 k^2), a relative error below
 * 2 pi^2 (0.8366 M / n_cap)^2 <= 5.4 % at the last lag k = M and far less at lags 1-2
 * (widths below 0.84 * 2 v_a / n_cap, e.g. 3 mm/s for v_a = 16 m/s and M = 64).
 *
 * Exact mean velocity: the spectrum is synthesised around a shift frequency f_s (the
 * mean of a Gaussian; the phase of r(1) of a mixture) and the series multiplied by
 * e^{2 pi i f_s m}, so the mean velocity is not quantised to the bins, and a Gaussian
 * is centred exactly on bin 0, where its folded samples come from a recurrence
 * (g_{k+1} = g_k exp(-(2k+1)/(2 s^2))) instead of one exp() per bin.
 *
 * Dual polarisation: two independent series s, w with the same spectrum;
 * H = s + n_h, V = g (rho e^{-i Phi} s + sqrt(1 - rho^2) w) + n_v with
 * g = 10^(-Z_DR/20), so <|V|^2> - 1 = S 10^(-Z_DR/10), |<H V*>| = rho sqrt(S_h S_v) and
 * arg <H V*> = Phi_DP (the sign of delta_hv = arg <f_hh f_vv*>, gate.h). Noise n_h, n_v:
 * independent complex Gaussians of power 1.
 *
 * Gaussian deviates: the ziggurat method (Marsaglia & Tsang 2000, "The ziggurat method
 * for generating random variables", J. Stat. Softw. 5(8); 128 layers, r = 3.442619855899,
 * v = 9.91256303526217e-3, their constants) on 64-bit words of the gate's rp_rng stream:
 * the layer from bits 0-6, the sign from bit 7 and the 53-bit magnitude from bits
 * 11-63, so layer and value never share bits (the weakness of the 32-bit original noted
 * by Doornik 2005). About 4 ns per deviate against ~25 ns for rp_rng_normal's polar
 * method, which dominated the per-gate cost (512 deviates per M = 64 gate). Tables live
 * in the workspace (computed at allocation; no global state). Distribution checked in
 * tests/test_iq.c (moments and a Kolmogorov-Smirnov test against GSL's normal CDF).
 *
 * Noise in the spectral domain when N = M (the usual case for broad spectra): all N
 * samples are kept, and white noise of power 1 is white in the spectral domain
 * (coefficients of variance 1/N), so H_j = X_j + Nh_j, V_j = a X_j + Z_j with
 * Z_j = b Y_j + Nv_j drawn as one Gaussian of the summed variance: 3 complex deviates
 * per bin instead of 2 per bin + 2 per pulse.
 *
 * Draw order from the stream (fixed, so a seed gives the same samples anywhere):
 * N = M: per bin j, X_j, Nh_j, Z_j (each real, imaginary). N > M: X_0..X_{N-1} (real,
 * imaginary), then W's coefficients when rho < 1, then for each pulse the H noise and
 * the V noise.
 *
 * Invariants: no allocation per gate (plans made once per size per workspace); no
 * global state besides the planner mutex of fft_plan.c. */
#include "rainprint/iq.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "signal/signal_internal.h"

static const double complex IU = CMPLX(0.0, 1.0);

#define RP_IQ_WRAP_NSIGMA 0.8366
/* Gaussian tails are summed out to this many standard deviations (exp(-41.4) = 1e-18). */
#define RP_IQ_TAIL_NSIGMA 9.1

static const double TWO_PI = 6.283185307179586476925;

double rp_iq_nyquist_m_s(double prt_s, double wavelength_mm) {
  return 1e-3 * wavelength_mm / (4.0 * prt_s);
}

static int bad(double x) { return !isfinite(x); }

double rp_iq_bin_velocity_m_s(const rp_iq_params *p, size_t k) {
  const double va = rp_iq_nyquist_m_s(p->prt_s, p->wavelength_mm);
  const double f = (double)(k % p->n_pulses) / (double)p->n_pulses;  /* [0, 1) */
  return 2 * va * (f >= 0.5 ? f - 1 : f);
}

rp_status rp_iq_params_check(const rp_iq_params *p, const rp_iq_spectrum *spec,
                             rp_error *err) {
  if (!p) return rp_error_set(err, RP_EINVAL, "I/Q parameters: NULL pointer");
  if (p->n_pulses < 2 || p->n_pulses > RP_IQ_MAX_PULSES)
    return rp_error_set(err, RP_EINVAL, "number of pulses M = %zu outside [2, %d]",
                        p->n_pulses, RP_IQ_MAX_PULSES);
  if (bad(p->prt_s) || p->prt_s <= 0)
    return rp_error_set(err, RP_EINVAL, "PRT = %g s must be positive and finite", p->prt_s);
  if (bad(p->wavelength_mm) || p->wavelength_mm <= 0)
    return rp_error_set(err, RP_EINVAL, "wavelength = %g mm must be positive and finite",
                        p->wavelength_mm);
  const double va = rp_iq_nyquist_m_s(p->prt_s, p->wavelength_mm);
  if (bad(va) || va <= 0)
    return rp_error_set(err, RP_EINVAL, "Nyquist velocity = %g m/s from PRT %g s and "
                        "wavelength %g mm is not a positive finite number", va, p->prt_s,
                        p->wavelength_mm);
  if (bad(p->snr_db))
    return rp_error_set(err, RP_EINVAL, "SNR = %g dB must be finite", p->snr_db);
  if (p->snr_db < RP_IQ_SNR_MIN_DB || p->snr_db > RP_IQ_SNR_MAX_DB)
    return rp_error_set(err, RP_EDOM, "SNR = %g dB outside [%g, %g] dB", p->snr_db,
                        RP_IQ_SNR_MIN_DB, RP_IQ_SNR_MAX_DB);
  if (bad(p->zh_dbz))
    return rp_error_set(err, RP_EINVAL, "Zh = %g dBZ must be finite", p->zh_dbz);
  if (bad(p->zdr_db))
    return rp_error_set(err, RP_EINVAL, "ZDR = %g dB must be finite", p->zdr_db);
  if (fabs(p->zdr_db) > RP_IQ_ZDR_MAX_DB)
    return rp_error_set(err, RP_EDOM, "ZDR = %g dB outside [-%g, %g] dB", p->zdr_db,
                        RP_IQ_ZDR_MAX_DB, RP_IQ_ZDR_MAX_DB);
  if (bad(p->rhohv) || p->rhohv < 0 || p->rhohv > 1)
    return rp_error_set(err, RP_EINVAL, "rhoHV = %g outside [0, 1]", p->rhohv);
  if (bad(p->phidp_deg))
    return rp_error_set(err, RP_EINVAL, "PhiDP = %g deg must be finite", p->phidp_deg);
  if (!spec) {
    if (bad(p->velocity_m_s))
      return rp_error_set(err, RP_EINVAL, "mean velocity = %g m/s must be finite",
                          p->velocity_m_s);
    if (bad(p->width_m_s) || p->width_m_s < 0)
      return rp_error_set(err, RP_EINVAL, "spectrum width = %g m/s must be >= 0 and finite",
                          p->width_m_s);
    if (p->width_m_s > va)
      return rp_error_set(err, RP_EDOM, "spectrum width %g m/s exceeds the Nyquist velocity "
                          "%g m/s (PRT %g s, wavelength %g mm)", p->width_m_s, va, p->prt_s,
                          p->wavelength_mm);
    return RP_OK;
  }
  if (spec->n == 0 || !spec->weight || !spec->mean_m_s || !spec->width_m_s)
    return rp_error_set(err, RP_EINVAL, "Doppler spectrum: no components or NULL arrays");
  double wsum = 0;
  for (size_t c = 0; c < spec->n; c++) {
    const double w = spec->weight[c], m = spec->mean_m_s[c], s = spec->width_m_s[c];
    if (bad(w) || w < 0)
      return rp_error_set(err, RP_EINVAL, "Doppler spectrum component %zu: weight %g must be "
                          ">= 0 and finite", c, w);
    if (bad(m))
      return rp_error_set(err, RP_EINVAL, "Doppler spectrum component %zu: mean velocity %g "
                          "m/s must be finite", c, m);
    if (bad(s) || s < 0)
      return rp_error_set(err, RP_EINVAL, "Doppler spectrum component %zu: width %g m/s must "
                          "be >= 0 and finite", c, s);
    if (s > va)
      return rp_error_set(err, RP_EDOM, "Doppler spectrum component %zu: width %g m/s "
                          "exceeds the Nyquist velocity %g m/s", c, s, va);
    wsum += w;
  }
  if (!(wsum > 0) || !isfinite(wsum))
    return rp_error_set(err, RP_EINVAL, "Doppler spectrum: the weights sum to %g, not a "
                        "positive finite number", wsum);
  return RP_OK;
}

/* ---- Gaussian deviates (ziggurat) ---------------------------------------------------- */

#define RP_ZIG_R 3.442619855899
#define RP_ZIG_V 9.91256303526217e-3

void rp_signal_zig_setup(rp_zig_table *z) {
  const double r = RP_ZIG_R, v = RP_ZIG_V;
  const double fr = exp(-0.5 * r * r);
  z->x[0] = v / fr;   /* the base layer: a box of area v holding the tail beyond r */
  z->x[1] = r;
  for (int i = 1; i < RP_ZIG_LAYERS - 1; i++)
    z->x[i + 1] = sqrt(-2.0 * log(v / z->x[i] + exp(-0.5 * z->x[i] * z->x[i])));
  z->x[RP_ZIG_LAYERS] = 0;
  for (int i = 0; i <= RP_ZIG_LAYERS; i++) z->f[i] = exp(-0.5 * z->x[i] * z->x[i]);
}

static inline double u53(uint64_t u) { return (double)(u >> 11) * 0x1.0p-53; }

double rp_signal_normal(const rp_zig_table *z, rp_rng *rng) {
  for (;;) {
    const uint64_t u = rp_rng_u64(rng);
    const unsigned i = (unsigned)(u & (RP_ZIG_LAYERS - 1));
    const double sign = (u & 128) ? -1.0 : 1.0;
    const double x = u53(u) * z->x[i];
    if (x < z->x[i + 1]) return sign * x;  /* inside the layer's inner rectangle */
    if (i == 0) {
      /* tail beyond r (Marsaglia 1964): r + a with a ~ Exp(r), accepted w.p. e^{-a^2/2} */
      double a, b;
      do {
        a = -log(rp_rng_uniform_pos(rng)) / RP_ZIG_R;
        b = -log(rp_rng_uniform_pos(rng));
      } while (2 * b < a * a);
      return sign * (RP_ZIG_R + a);
    }
    /* the wedge between the curve and the rectangle */
    const double y = z->f[i] + rp_rng_uniform(rng) * (z->f[i + 1] - z->f[i]);
    if (y < exp(-0.5 * x * x)) return sign * x;
  }
}

/* ---- workspace ---------------------------------------------------------------------- */

static size_t pow2_at_least(size_t n) {
  size_t p = 1;
  while (p < n) p <<= 1;
  return p;
}

static unsigned log2_of(size_t n) {
  unsigned k = 0;
  while (((size_t)1 << k) < n) k++;
  return k;
}

rp_iq_workspace *rp_iq_workspace_alloc(size_t max_pulses, rp_error *err) {
  if (max_pulses < 2 || max_pulses > RP_IQ_MAX_PULSES) {
    rp_error_set(err, RP_EINVAL, "I/Q workspace: max_pulses = %zu outside [2, %d]",
                 max_pulses, RP_IQ_MAX_PULSES);
    return NULL;
  }
  rp_iq_workspace *ws = calloc(1, sizeof *ws);
  if (!ws) goto nomem;
  ws->max_pulses = max_pulses;
  ws->n_cap = pow2_at_least(16 * max_pulses);
  if (ws->n_cap < 8192) ws->n_cap = 8192;
  if (ws->n_cap > ((size_t)1 << RP_IQ_LOG2_CAP_MAX)) ws->n_cap = (size_t)1 << RP_IQ_LOG2_CAP_MAX;
  ws->win_kind = -1;
  rp_signal_zig_setup(&ws->zig);
  ws->x = fftw_malloc(ws->n_cap * sizeof *ws->x);
  ws->y = fftw_malloc(ws->n_cap * sizeof *ws->y);
  ws->dens = malloc(ws->n_cap * sizeof *ws->dens);
  ws->h = fftw_malloc(max_pulses * sizeof *ws->h);
  ws->v = fftw_malloc(max_pulses * sizeof *ws->v);
  ws->fx = fftw_malloc(max_pulses * sizeof *ws->fx);
  ws->win = malloc(max_pulses * sizeof *ws->win);
  ws->pgram = malloc(max_pulses * sizeof *ws->pgram);
  if (!ws->x || !ws->y || !ws->dens || !ws->h || !ws->v || !ws->fx || !ws->win || !ws->pgram)
    goto nomem;
  return ws;
nomem:
  rp_iq_workspace_free(ws);
  rp_error_set(err, RP_ENOMEM, "I/Q workspace for %zu pulses: out of memory", max_pulses);
  return NULL;
}

void rp_iq_workspace_free(rp_iq_workspace *ws) {
  if (!ws) return;
  for (size_t i = 0; i <= RP_IQ_LOG2_CAP_MAX; i++) rp_fft_destroy(ws->inv[i]);
  rp_fft_destroy(ws->fwd);
  fftw_free(ws->x);
  fftw_free(ws->y);
  free(ws->dens);
  fftw_free(ws->h);
  fftw_free(ws->v);
  fftw_free(ws->fx);
  free(ws->win);
  free(ws->pgram);
  free(ws);
}

size_t rp_iq_workspace_max_pulses(const rp_iq_workspace *ws) { return ws ? ws->max_pulses : 0; }

/* ---- model spectrum ----------------------------------------------------------------- */

/* Component c of the model in normalised units: weight, frequency (cycles/pulse) and
 * width (cycles/pulse). The Gaussian of p when spec is NULL. */
static size_t n_components(const rp_iq_spectrum *spec) { return spec ? spec->n : 1; }

static void component(const rp_iq_params *p, const rp_iq_spectrum *spec, size_t c, double va,
                      double *w, double *f, double *s) {
  if (!spec) {
    *w = 1;
    *f = p->velocity_m_s / (2 * va);
    *s = p->width_m_s / (2 * va);
  } else {
    *w = spec->weight[c];
    *f = spec->mean_m_s[c] / (2 * va);
    *s = spec->width_m_s[c] / (2 * va);
  }
}

/* x - round(x): into [-1/2, 1/2]. */
static double wrap_unit(double x) { return x - floor(x + 0.5); }

double complex rp_iq_autocorr(const rp_iq_params *p, const rp_iq_spectrum *spec, long k) {
  const double va = rp_iq_nyquist_m_s(p->prt_s, p->wavelength_mm);
  double complex r = 0;
  double wsum = 0;
  const double kk = (double)k;
  for (size_t c = 0; c < n_components(spec); c++) {
    double w, f, s;
    component(p, spec, c, va, &w, &f, &s);
    const double ph = TWO_PI * wrap_unit(f * kk);
    r += w * exp(-0.5 * TWO_PI * TWO_PI * s * s * kk * kk) * cexp(IU * ph);
    wsum += w;
  }
  return r / wsum;
}

void rp_iq_spectrum_moments(const rp_iq_params *p, const rp_iq_spectrum *spec,
                            double *mean_m_s, double *width_m_s) {
  const double va = rp_iq_nyquist_m_s(p->prt_s, p->wavelength_mm);
  double mean;
  if (!spec) {
    mean = 2 * va * wrap_unit(p->velocity_m_s / (2 * va));
    if (mean >= va) mean -= 2 * va;
  } else {
    const double complex r1 = rp_iq_autocorr(p, spec, 1);
    mean = va / M_PI * carg(r1);
    if (mean >= va) mean -= 2 * va;
  }
  if (mean_m_s) *mean_m_s = mean;
  if (!width_m_s) return;
  if (!spec) {
    *width_m_s = p->width_m_s;
    return;
  }
  double m2 = 0, wsum = 0;
  for (size_t c = 0; c < spec->n; c++) {
    const double w = spec->weight[c];
    const double d = 2 * va * wrap_unit((spec->mean_m_s[c] - mean) / (2 * va));
    m2 += w * (spec->width_m_s[c] * spec->width_m_s[c] + d * d);
    wsum += w;
  }
  *width_m_s = sqrt(m2 / wsum);
}

/* Add weight a of a Gaussian of width s_bins (bins) centred at bin position mu (in
 * [-n/2, n/2)) to dens[0..n), folded over the period n, as a density per bin. Lines
 * (s_bins == 0) go to the nearest bin. */
static void add_gaussian(double *dens, size_t n, double a, double mu, double s_bins) {
  const double dn = (double)n;
  if (s_bins <= 0) {
    long j = lround(mu);
    j %= (long)n;
    if (j < 0) j += (long)n;
    dens[j] += a;
    return;
  }
  const double amp = a / (sqrt(TWO_PI) * s_bins);
  const double reach = RP_IQ_TAIL_NSIGMA * s_bins;
  if (mu == 0) {
    /* Centred: g(k) = exp(-k^2 / (2 s^2)) by recurrence, folded onto k mod n. */
    const double q = exp(-1.0 / (s_bins * s_bins));
    double g = 1.0, ratio = exp(-0.5 / (s_bins * s_bins));
    const size_t kmax = (size_t)reach + 1;
    dens[0] += amp;
    for (size_t k = 1; k <= kmax; k++) {
      g *= ratio;     /* g = exp(-k^2/(2 s^2)) */
      ratio *= q;
      const size_t j = k % n;
      dens[j] += amp * g;
      dens[(n - j) % n] += amp * g;
    }
    return;
  }
  for (size_t j = 0; j < n; j++) {
    double d = (double)j - mu;
    d -= dn * floor(d / dn + 0.5);   /* into [-n/2, n/2] */
    const double plo = ceil((-reach - d) / dn), phi = floor((reach - d) / dn);
    double acc = 0;
    for (double pp = plo; pp <= phi; pp += 1.0) {
      const double x = (d + pp * dn) / s_bins;
      acc += exp(-0.5 * x * x);
    }
    dens[j] += amp * acc;
  }
}

void rp_iq_true_spectrum(const rp_iq_params *p, const rp_iq_spectrum *spec, double *out) {
  const double va = rp_iq_nyquist_m_s(p->prt_s, p->wavelength_mm);
  const size_t m = p->n_pulses;
  const double dm = (double)m;
  const double s_h = pow(10.0, p->snr_db / 10);
  for (size_t k = 0; k < m; k++) out[k] = 0;
  double wsum = 0;
  for (size_t c = 0; c < n_components(spec); c++) {
    double w, f, s;
    component(p, spec, c, va, &w, &f, &s);
    /* out holds density * (1/M) per bin: the weight falling in each bin */
    /* narrower than half a bin: a line (point samples would not conserve its power) */
    add_gaussian(out, m, w, wrap_unit(f) * dm, s * dm < 0.5 ? 0.0 : s * dm);
    wsum += w;
  }
  for (size_t k = 0; k < m; k++) out[k] = s_h * out[k] / wsum * dm + 1.0;
}

/* ---- synthesis ---------------------------------------------------------------------- */

static rp_status plan_for(rp_iq_workspace *ws, size_t n, fftw_plan *plan, rp_error *err) {
  const unsigned l = log2_of(n);
  if (!ws->inv[l]) {
    ws->inv[l] = rp_fft_plan_1d((int)n, ws->x, ws->x, FFTW_BACKWARD);
    if (!ws->inv[l])
      return rp_error_set(err, RP_EFFTW, "FFTW could not plan an inverse transform of %zu "
                          "points", n);
  }
  *plan = ws->inv[l];
  return RP_OK;
}

static void fill_coefficients(const rp_zig_table *z, fftw_complex *x, const double *dens,
                              size_t n, double scale, rp_rng *rng) {
  for (size_t j = 0; j < n; j++) {
    const double a = sqrt(scale * dens[j]);
    const double re = rp_signal_normal(z, rng);
    const double im = rp_signal_normal(z, rng);
    x[j] = a * (re + IU * im);
  }
}

rp_status rp_iq_synthesize(rp_iq_workspace *ws, const rp_iq_params *p,
                           const rp_iq_spectrum *spec, rp_rng *rng, double complex *h,
                           double complex *v, rp_error *err) {
  if (!ws || !rng || !h || !v)
    return rp_error_set(err, RP_EINVAL, "I/Q synthesis: NULL pointer");
  RP_TRY(rp_iq_params_check(p, spec, err));
  const size_t m = p->n_pulses;
  if (m > ws->max_pulses)
    return rp_error_set(err, RP_EINVAL, "I/Q synthesis: M = %zu pulses exceeds the "
                        "workspace's %zu", m, ws->max_pulses);
  const double va = rp_iq_nyquist_m_s(p->prt_s, p->wavelength_mm);
  const size_t nc = n_components(spec);

  /* shift frequency and the narrowest resolved width */
  double fs;
  if (!spec) {
    fs = wrap_unit(p->velocity_m_s / (2 * va));
  } else {
    fs = carg(rp_iq_autocorr(p, spec, 1)) / TWO_PI;
  }
  const double line_sigma = RP_IQ_WRAP_NSIGMA / (double)ws->n_cap;
  double smin = INFINITY;
  for (size_t c = 0; c < nc; c++) {
    double w, f, s;
    component(p, spec, c, va, &w, &f, &s);
    if (w > 0 && s >= line_sigma && s < smin) smin = s;
  }
  size_t n = pow2_at_least(m);
  while (n < ws->n_cap && isfinite(smin) && (double)n * smin < RP_IQ_WRAP_NSIGMA) n <<= 1;
  const double dn = (double)n;

  double *dens = ws->dens;
  for (size_t j = 0; j < n; j++) dens[j] = 0;
  for (size_t c = 0; c < nc; c++) {
    double w, f, s;
    component(p, spec, c, va, &w, &f, &s);
    if (!(w > 0)) continue;
    const double mu = spec ? wrap_unit(f - fs) * dn : 0.0;
    add_gaussian(dens, n, w, mu, s >= line_sigma ? s * dn : 0.0);
  }
  double dsum = 0;
  for (size_t j = 0; j < n; j++) dsum += dens[j];

  fftw_plan plan = NULL;
  RP_TRY(plan_for(ws, n, &plan, err));
  const double s_h = pow(10.0, p->snr_db / 10);
  const double scale = 0.5 * s_h / dsum;   /* 0.5: variance of each of re, im */
  const double rho = p->rhohv;
  const double g = pow(10.0, -p->zdr_db / 20);
  const double phi = p->phidp_deg * (M_PI / 180);
  const double complex a_s = g * rho * cexp(-IU * phi);
  const double b_w = g * sqrt(fmax(0.0, 1 - rho * rho));
  const double complex step = cexp(IU * TWO_PI * fs);
  double complex ph = 1;
  if (n == m) {
    /* All M samples of an N = M series: white noise is white in the spectral domain too
     * (coefficients of variance 1/N each; the modulation by e^{2 pi i f_s m} keeps it
     * white), so the noise joins the coefficients: H_j = X_j + Nh_j and
     * V_j = a_s X_j + Z_j, Z_j = b_w Y_j + Nv_j drawn as one Gaussian of the summed
     * variance. 3 complex deviates per bin instead of 4. */
    const double sn = sqrt(0.5 / dn);
    const double b2 = b_w * b_w;
    const rp_zig_table *z = &ws->zig;
    for (size_t j = 0; j < n; j++) {
      const double sx = sqrt(scale * dens[j]);
      const double sz = sqrt(b2 * scale * dens[j] + 0.5 / dn);
      const double xr = rp_signal_normal(z, rng), xi = rp_signal_normal(z, rng);
      const double nr = rp_signal_normal(z, rng), ni = rp_signal_normal(z, rng);
      const double zr = rp_signal_normal(z, rng), zi = rp_signal_normal(z, rng);
      const double complex x = sx * (xr + IU * xi);
      ws->x[j] = x + sn * (nr + IU * ni);
      ws->y[j] = a_s * x + sz * (zr + IU * zi);
    }
    fftw_execute_dft(plan, ws->x, ws->x);
    fftw_execute_dft(plan, ws->y, ws->y);
    for (size_t k = 0; k < m; k++) {
      if ((k & 63) == 0) ph = cexp(IU * TWO_PI * wrap_unit(fs * (double)k)); /* no drift */
      h[k] = ws->x[k] * ph;
      v[k] = ws->y[k] * ph;
      ph *= step;
    }
    return RP_OK;
  }
  fill_coefficients(&ws->zig, ws->x, dens, n, scale, rng);
  fftw_execute_dft(plan, ws->x, ws->x);
  if (rho < 1) {
    fill_coefficients(&ws->zig, ws->y, dens, n, scale, rng);
    fftw_execute_dft(plan, ws->y, ws->y);
  }
  const double sq_half = sqrt(0.5);
  for (size_t k = 0; k < m; k++) {
    if ((k & 63) == 0) ph = cexp(IU * TWO_PI * wrap_unit(fs * (double)k)); /* no drift */
    const double complex s = ws->x[k] * ph;
    const double complex w = rho < 1 ? ws->y[k] * ph : 0;
    const double nh_re = rp_signal_normal(&ws->zig, rng);
    const double nh_im = rp_signal_normal(&ws->zig, rng);
    const double nv_re = rp_signal_normal(&ws->zig, rng);
    const double nv_im = rp_signal_normal(&ws->zig, rng);
    h[k] = s + sq_half * (nh_re + IU * nh_im);
    v[k] = a_s * s + b_w * w + sq_half * (nv_re + IU * nv_im);
    ph *= step;
  }
  return RP_OK;
}

/* ---- staggered PRT ------------------------------------------------------------------ */

static size_t stagger_index(rp_iq_stagger st, size_t m) {
  return (m / 2) * (size_t)(st.k1 + st.k2) + ((m & 1) ? st.k1 : 0);
}

double rp_iq_stagger_time_s(const rp_iq_params *p, rp_iq_stagger st, size_t m) {
  return p->prt_s / (double)st.k1 * (double)stagger_index(st, m);
}

size_t rp_iq_stagger_span(const rp_iq_params *p, rp_iq_stagger st) {
  return stagger_index(st, p->n_pulses - 1) + 1;
}

rp_status rp_iq_synthesize_staggered(rp_iq_workspace *ws, const rp_iq_params *p,
                                     const rp_iq_spectrum *spec, rp_iq_stagger st,
                                     rp_rng *rng, double complex *h, double complex *v,
                                     rp_error *err) {
  if (!ws || !rng || !h || !v)
    return rp_error_set(err, RP_EINVAL, "staggered I/Q synthesis: NULL pointer");
  if (st.k1 < 1 || st.k2 <= st.k1 || st.k2 > 16)
    return rp_error_set(err, RP_EINVAL, "staggered PRT ratio %u/%u: need 1 <= k1 < k2 <= 16",
                        st.k1, st.k2);
  RP_TRY(rp_iq_params_check(p, spec, err));
  const size_t span = rp_iq_stagger_span(p, st);
  if (span > ws->max_pulses)
    return rp_error_set(err, RP_EINVAL, "staggered PRT: %zu pulses at %u/%u span %zu base "
                        "steps, more than the workspace's %zu", p->n_pulses, st.k1, st.k2,
                        span, ws->max_pulses);
  rp_iq_params q = *p;
  q.prt_s = p->prt_s / (double)st.k1;
  q.n_pulses = span;
  RP_TRY(rp_iq_synthesize(ws, &q, spec, rng, ws->h, ws->v, err));
  for (size_t m = 0; m < p->n_pulses; m++) {
    const size_t i = stagger_index(st, m);
    h[m] = ws->h[i];
    v[m] = ws->v[i];
  }
  return RP_OK;
}

/* ---- DSD spectrum ------------------------------------------------------------------- */

rp_status rp_iq_dsd_spectrum(const rp_table *t, const rp_dsd *dsd, double elevation_deg,
                             double u_radial_m_s, double turbulence_sd_m_s, double *weight,
                             double *mean_m_s, double *width_m_s, rp_iq_spectrum *out,
                             rp_error *err) {
  if (!t || !dsd || !weight || !mean_m_s || !width_m_s || !out)
    return rp_error_set(err, RP_EINVAL, "DSD Doppler spectrum: NULL pointer");
  if (t->n < 2 || !t->d_mm || !t->back_hh2_mm2 || !t->fall_speed_m_s)
    return rp_error_set(err, RP_EINVAL, "DSD Doppler spectrum: table has %zu diameters "
                        "(need >= 2 with backscatter and fall speeds)", t->n);
  if (bad(elevation_deg) || fabs(elevation_deg) > 90)
    return rp_error_set(err, RP_EINVAL, "elevation = %g deg outside [-90, 90]", elevation_deg);
  if (bad(u_radial_m_s))
    return rp_error_set(err, RP_EINVAL, "radial wind = %g m/s must be finite", u_radial_m_s);
  if (bad(turbulence_sd_m_s) || turbulence_sd_m_s < 0)
    return rp_error_set(err, RP_EINVAL, "turbulence SD = %g m/s must be >= 0 and finite",
                        turbulence_sd_m_s);
  const double el = elevation_deg * (M_PI / 180);
  const double ce = cos(el), se = sin(el);
  double wsum = 0;
  const size_t n = t->n;
  for (size_t i = 0; i < n; i++) {
    const double lo = i > 0 ? 0.5 * (t->d_mm[i] - t->d_mm[i - 1]) : 0;
    const double hi = i + 1 < n ? 0.5 * (t->d_mm[i + 1] - t->d_mm[i]) : 0;
    const double nd = rp_dsd_eval(dsd, t->d_mm[i]);
    const double w = nd * t->back_hh2_mm2[i] * (lo + hi);
    weight[i] = (isfinite(w) && w > 0) ? w : 0;
    mean_m_s[i] = u_radial_m_s * ce - t->fall_speed_m_s[i] * se;
    width_m_s[i] = turbulence_sd_m_s;
    wsum += weight[i];
  }
  if (!(wsum > 0))
    return rp_error_set(err, RP_EINVAL, "DSD Doppler spectrum: no backscatter from the DSD on "
                        "the table's diameters %g-%g mm", t->d_mm[0], t->d_mm[n - 1]);
  out->n = n;
  out->weight = weight;
  out->mean_m_s = mean_m_s;
  out->width_m_s = width_m_s;
  return RP_OK;
}
