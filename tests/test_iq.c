/* test_iq.c — I/Q synthesis of one gate: statistics of the samples against the input
 * spectrum and polarimetric parameters, no wrap-around bias, determinism across thread
 * counts, DSD-built spectra, and every error status.
 *
 * Statistical checks use Monte-Carlo averages with tolerances of 4-5 standard errors
 * measured from the same samples (false alarm below ~1e-4 per check), unless stated. */
#include "rp_test.h"

#include <complex.h>
#include <omp.h>
#include <string.h>

#include <gsl/gsl_cdf.h>

#include "rainprint/fallspeed.h"
#include "rainprint/iq.h"
#include "rainprint/pulse_estimators.h"
#include "signal/signal_internal.h"

/* A C-band-like demo gate: lambda 53 mm, T_s 1 ms -> v_a = 13.25 m/s. */
static rp_iq_params base_params(void) {
  rp_iq_params p = {35.0, 1.5, 0.97, 40.0, 4.0, 2.0, 20.0, 64, 1e-3, 53.0};
  return p;
}

static void test_nyquist_is_lambda_over_4T(void **state) {
  (void)state;
  /* v_a = lambda / (4 T_s) (Doviak & Zrnić 1993, ch. 3; from memory): 0.1 m / 4 ms */
  assert_close(rp_iq_nyquist_m_s(1e-3, 100.0), 25.0, 1e-15, 0);
}

/* Mean of x*(m) y(m+k) over realisations and pulses: the lag-k covariance estimate, with
 * its standard error from the spread of the per-realisation means. */
typedef struct {
  double complex mean;
  double se;
} lag_stat;

static lag_stat lag_average(const rp_iq_params *p, const rp_iq_spectrum *spec, size_t nreal,
                            int chan_x, int chan_y, long k, uint64_t seed) {
  rp_error err = {0};
  rp_iq_workspace *ws = rp_iq_workspace_alloc(p->n_pulses, &err);
  assert_non_null(ws);
  const size_t m = p->n_pulses;
  double complex *h = malloc(m * sizeof *h), *v = malloc(m * sizeof *v);
  double complex s = 0;
  double s2 = 0;
  for (size_t j = 0; j < nreal; j++) {
    rp_rng rng;
    rp_rng_init(&rng, seed, rp_rng_key(RP_RNG_TEST, 1, j, 0));
    assert_int_equal(rp_iq_synthesize(ws, p, spec, &rng, h, v, &err), RP_OK);
    const double complex *x = chan_x ? v : h, *y = chan_y ? v : h;
    double complex a = 0;
    for (size_t i = 0; i + (size_t)k < m; i++) a += conj(x[i]) * y[i + (size_t)k];
    a /= (double)(m - (size_t)k);
    s += a;
    s2 += creal(a) * creal(a) + cimag(a) * cimag(a);
  }
  lag_stat out;
  out.mean = s / (double)nreal;
  const double var = s2 / (double)nreal - creal(out.mean * conj(out.mean));
  out.se = sqrt(var / (double)nreal);
  free(h);
  free(v);
  rp_iq_workspace_free(ws);
  return out;
}

static void test_powers_follow_snr_and_zdr(void **state) {
  (void)state;
  rp_iq_params p = base_params();
  const double sh = pow(10.0, p.snr_db / 10), sv = sh * pow(10.0, -p.zdr_db / 10);
  lag_stat a = lag_average(&p, NULL, 2000, 0, 0, 0, 11);
  lag_stat b = lag_average(&p, NULL, 2000, 1, 1, 0, 11);
  /* E|h|^2 = S_h + 1, E|v|^2 = S_v + 1 (noise power 1): within 5 standard errors */
  assert_close(creal(a.mean), sh + 1, 0, 5 * a.se);
  assert_close(creal(b.mean), sv + 1, 0, 5 * b.se);
}

static void test_hv_correlation_and_phidp_sign(void **state) {
  (void)state;
  /* <h v*> = rho sqrt(S_h S_v) e^{+i PhiDP}: PhiDP = arg <H V*>, the sign of
   * delta_hv = arg <f_hh f_vv*> (gate.h), positive for oblate rain. Both synthesis paths:
   * width 2 m/s (length N = M, noise in the spectral domain) and 0.1 m/s (N = 256 > M,
   * noise in the time domain); V power too (5 standard errors). */
  const double widths[2] = {2.0, 0.1};
  for (int i = 0; i < 2; i++) {
    rp_iq_params p = base_params();
    p.snr_db = 10;
    p.width_m_s = widths[i];
    lag_stat c = lag_average(&p, NULL, 2000, 1, 0, 0, 12); /* mean of v* h = <h v*> */
    lag_stat b = lag_average(&p, NULL, 2000, 1, 1, 0, 12);
    const double sh = pow(10.0, p.snr_db / 10), sv = sh * pow(10.0, -p.zdr_db / 10);
    const double complex expect =
        p.rhohv * sqrt(sh * sv) * cexp(CMPLX(0, p.phidp_deg * M_PI / 180));
    assert_close(creal(c.mean), creal(expect), 0, 5 * c.se);
    assert_close(cimag(c.mean), cimag(expect), 0, 5 * c.se);
    assert_close(creal(b.mean), sv + 1, 0, 5 * b.se);
    assert_true(carg(c.mean) > 0);
  }
}

static void test_lag1_correlation_has_no_wraparound_bias(void **state) {
  (void)state;
  /* A narrow spectrum where a length-M periodic series would be badly biased:
   * sigma_n = w/(2 v_a) = 0.02, r(M) = exp(-2 pi^2 0.02^2 16^2) = 0.13, so an N = M = 16
   * series would have lag-1 correlation r(1) + r(15) + r(17) ~ r(1) + 0.17. */
  rp_iq_params p = base_params();
  p.n_pulses = 16;
  p.snr_db = 30;
  const double va = rp_iq_nyquist_m_s(p.prt_s, p.wavelength_mm);
  p.width_m_s = 0.02 * 2 * va;
  p.velocity_m_s = 3.3;
  const double sh = pow(10.0, p.snr_db / 10);
  for (long k = 1; k <= 15; k += 14) {
    lag_stat a = lag_average(&p, NULL, 10000, 0, 0, k, 13);
    const double complex expect = sh * rp_iq_autocorr(&p, NULL, k);
    /* each part within 5 standard errors of the Gaussian spectrum's autocorrelation;
     * the periodic-series bias would be ~0.17 S = 170, vs se ~ 20 */
    assert_close(creal(a.mean), creal(expect), 0, 5 * a.se);
    assert_close(cimag(a.mean), cimag(expect), 0, 5 * a.se);
    assert_true(5 * a.se < 0.1 * sh);  /* the test can see the 0.17 S bias */
  }
}

static void test_autocorr_is_gaussian_spectrum_transform(void **state) {
  (void)state;
  /* r(k) = exp(2 pi i f k - 2 pi^2 sigma^2 k^2) for a Gaussian spectrum (Fourier pair of
   * a Gaussian, Doviak & Zrnić 1993 sec. 6.4; exact identity) */
  rp_iq_params p = base_params();
  const double va = rp_iq_nyquist_m_s(p.prt_s, p.wavelength_mm);
  const double f = p.velocity_m_s / (2 * va), s = p.width_m_s / (2 * va);
  for (long k = -3; k <= 3; k++) {
    const double complex r = rp_iq_autocorr(&p, NULL, k);
    const double complex e = exp(-2 * M_PI * M_PI * s * s * (double)(k * k)) *
                             cexp(CMPLX(0, 2 * M_PI * f * (double)k));
    assert_close(creal(r), creal(e), 1e-12, 1e-14);
    assert_close(cimag(r), cimag(e), 1e-12, 1e-14);
  }
}

static void test_average_spectrum_matches_input_chisquare(void **state) {
  (void)state;
  /* With velocity on a bin (4 bins of 2 v_a / M) and a width for which the synthesis
   * length N equals M, the DFT coefficients of the M samples are independent complex
   * Gaussians with mean power S D(f_k) + 1 (rp_iq_true_spectrum), so R-averaged
   * periodograms P_k give sum_k R (avg_k / E_k - 1)^2 ~ chi^2 with M degrees of freedom
   * (large R). Accept between the 0.0005 and 0.9995 quantiles (GSL gsl_cdf_chisq_*inv). */
  rp_iq_params p = base_params();
  const double va = rp_iq_nyquist_m_s(p.prt_s, p.wavelength_mm);
  const size_t m = p.n_pulses;
  p.velocity_m_s = 4 * 2 * va / (double)m;
  p.width_m_s = 2.0;  /* sigma_n = 0.075: N sigma_n = 4.8 > 0.8366 for N = M = 64 */
  const size_t nreal = 3000;
  rp_error err = {0};
  rp_iq_workspace *ws = rp_iq_workspace_alloc(m, &err);
  double complex *h = malloc(m * sizeof *h), *v = malloc(m * sizeof *v);
  double *pg = malloc(m * sizeof *pg), *avg = calloc(m, sizeof *avg), *tru = malloc(m * sizeof *tru);
  rp_pulse_estimates est;
  for (size_t j = 0; j < nreal; j++) {
    rp_rng rng;
    rp_rng_init(&rng, 21, rp_rng_key(RP_RNG_TEST, 2, j, 0));
    assert_int_equal(rp_iq_synthesize(ws, &p, NULL, &rng, h, v, &err), RP_OK);
    assert_int_equal(rp_pulse_estimate(ws, &p, h, v, RP_WINDOW_RECT, &est, pg, &err), RP_OK);
    for (size_t k = 0; k < m; k++) avg[k] += pg[k] / (double)nreal;
  }
  rp_iq_true_spectrum(&p, NULL, tru);
  double chi2 = 0;
  for (size_t k = 0; k < m; k++) chi2 += (double)nreal * pow(avg[k] / tru[k] - 1, 2);
  const double lo = gsl_cdf_chisq_Pinv(0.0005, (double)m), hi = gsl_cdf_chisq_Qinv(0.0005, (double)m);
  print_message("chi2 = %.1f for %zu bins (accept %.1f-%.1f)\n", chi2, m, lo, hi);
  assert_true(chi2 > lo && chi2 < hi);
  /* the input spectrum peaks where the velocity is: bin 4 */
  size_t k0 = 0;
  for (size_t k = 0; k < m; k++) if (tru[k] > tru[k0]) k0 = k;
  assert_int_equal(k0, 4);
  assert_close(rp_iq_bin_velocity_m_s(&p, k0), p.velocity_m_s, 1e-12, 0);
  /* bins fold into [-v_a, v_a): bin M/2 is -v_a, bin M-1 is -2 v_a / M */
  assert_close(rp_iq_bin_velocity_m_s(&p, m / 2), -va, 1e-12, 0);
  assert_close(rp_iq_bin_velocity_m_s(&p, m - 1), -2 * va / (double)m, 1e-12, 0);
  free(h); free(v); free(pg); free(avg); free(tru);
  rp_iq_workspace_free(ws);
}

static void test_zero_width_is_a_coherent_line(void **state) {
  (void)state;
  /* width 0: the signal is one complex amplitude times e^{i 4 pi v T m / lambda}, so
   * h(m+1)/h(m) = e^{i pi v / v_a} exactly without noise (SNR 120 dB: noise 1e-6 of the
   * amplitude; tolerance 1e-5) */
  rp_iq_params p = base_params();
  p.width_m_s = 0;
  p.snr_db = 120;
  p.velocity_m_s = -5.0;
  rp_error err = {0};
  rp_iq_workspace *ws = rp_iq_workspace_alloc(p.n_pulses, &err);
  double complex h[64], v[64];
  rp_rng rng;
  rp_rng_init(&rng, 5, rp_rng_key(RP_RNG_TEST, 3, 0, 0));
  assert_int_equal(rp_iq_synthesize(ws, &p, NULL, &rng, h, v, &err), RP_OK);
  const double va = rp_iq_nyquist_m_s(p.prt_s, p.wavelength_mm);
  for (size_t k = 0; k + 1 < 64; k++) {
    const double complex q = h[k + 1] / h[k];
    assert_close(carg(q), M_PI * p.velocity_m_s / va, 0, 1e-5);
    assert_close(cabs(q), 1.0, 0, 1e-5);
  }
  rp_iq_workspace_free(ws);
}

static void test_same_seed_same_samples_any_thread_count(void **state) {
  (void)state;
  /* 1100 realisations: more than two of the ensemble's 512-realisation chunks */
  rp_iq_params p = base_params();
  const size_t nreal = 1100, m = p.n_pulses;
  double complex *h1 = malloc(nreal * m * sizeof *h1), *v1 = malloc(nreal * m * sizeof *v1);
  double complex *h2 = malloc(nreal * m * sizeof *h2), *v2 = malloc(nreal * m * sizeof *v2);
  double pg1[64], pg2[64];
  rp_pulse_estimates *e1 = malloc(nreal * sizeof *e1), *e2 = malloc(nreal * sizeof *e2);
  rp_pulse_summary s1[RP_PULSE_N_KEYS], s2[RP_PULSE_N_KEYS];
  rp_pulse_ensemble_out o1 = {0}, o2 = {0};
  o1.h = h1; o1.v = v1; o1.mean_periodogram = pg1; o1.each = e1;
  o2.h = h2; o2.v = v2; o2.mean_periodogram = pg2; o2.each = e2;
  rp_error err = {0};
  const int saved = omp_get_max_threads();
  omp_set_num_threads(1);
  assert_int_equal(rp_pulse_ensemble(&p, NULL, RP_WINDOW_HANN, nreal, 99, s1, &o1, &err), RP_OK);
  omp_set_num_threads(2);
  assert_int_equal(rp_pulse_ensemble(&p, NULL, RP_WINDOW_HANN, nreal, 99, s2, &o2, &err), RP_OK);
  omp_set_num_threads(saved);
  assert_memory_equal(h1, h2, nreal * m * sizeof *h1);
  assert_memory_equal(v1, v2, nreal * m * sizeof *v1);
  assert_memory_equal(s1, s2, sizeof s1);
  assert_memory_equal(pg1, pg2, sizeof pg1);
  assert_memory_equal(e1, e2, nreal * sizeof *e1);
  /* and a different seed gives different samples */
  assert_int_equal(rp_pulse_ensemble(&p, NULL, RP_WINDOW_HANN, nreal, 100, s2, &o2, &err), RP_OK);
  assert_true(memcmp(h1, h2, nreal * m * sizeof *h1) != 0);
  free(h1); free(v1); free(h2); free(v2); free(e1); free(e2);
}

static void test_parameter_errors_name_the_quantity(void **state) {
  (void)state;
  rp_error err = {0};
  rp_iq_params p = base_params();
  assert_int_equal(rp_iq_params_check(&p, NULL, &err), RP_OK);
  rp_iq_params q;
#define EXPECT(field, value, status, word)                         \
  q = base_params();                                               \
  q.field = value;                                                 \
  rp_error_clear(&err);                                            \
  assert_int_equal(rp_iq_params_check(&q, NULL, &err), status);    \
  assert_non_null(strstr(err.msg, word));
  EXPECT(n_pulses, 1, RP_EINVAL, "M = 1");
  EXPECT(n_pulses, RP_IQ_MAX_PULSES + 1, RP_EINVAL, "pulses");
  EXPECT(width_m_s, -0.1, RP_EINVAL, "width");
  EXPECT(rhohv, 1.01, RP_EINVAL, "rhoHV");
  EXPECT(rhohv, -0.01, RP_EINVAL, "rhoHV");
  EXPECT(snr_db, NAN, RP_EINVAL, "SNR");
  EXPECT(snr_db, 500, RP_EDOM, "SNR");
  EXPECT(snr_db, -101, RP_EDOM, "SNR");
  EXPECT(zdr_db, 40, RP_EDOM, "ZDR");
  EXPECT(zdr_db, INFINITY, RP_EINVAL, "ZDR");
  EXPECT(prt_s, 0, RP_EINVAL, "PRT");
  EXPECT(wavelength_mm, NAN, RP_EINVAL, "wavelength");
  EXPECT(velocity_m_s, NAN, RP_EINVAL, "velocity");
  EXPECT(phidp_deg, INFINITY, RP_EINVAL, "PhiDP");
  EXPECT(zh_dbz, NAN, RP_EINVAL, "Zh");
  /* a PRT whose Nyquist velocity (53 mm / (4 * 8 ms) = 1.66 m/s) is below the width */
  EXPECT(prt_s, 8e-3, RP_EDOM, "Nyquist");
#undef EXPECT
  assert_int_equal(rp_iq_params_check(NULL, NULL, &err), RP_EINVAL);
  /* spectra */
  double w[2] = {1, -1}, mu[2] = {0, 1}, sd[2] = {1, 1};
  rp_iq_spectrum spec = {2, w, mu, sd};
  assert_int_equal(rp_iq_params_check(&p, &spec, &err), RP_EINVAL);
  assert_non_null(strstr(err.msg, "weight"));
  w[1] = 0; w[0] = 0;
  assert_int_equal(rp_iq_params_check(&p, &spec, &err), RP_EINVAL);
  w[0] = 1; sd[1] = 50;
  assert_int_equal(rp_iq_params_check(&p, &spec, &err), RP_EDOM);
  sd[1] = -1;
  assert_int_equal(rp_iq_params_check(&p, &spec, &err), RP_EINVAL);
  sd[1] = 1; mu[1] = NAN;
  assert_int_equal(rp_iq_params_check(&p, &spec, &err), RP_EINVAL);
  spec.n = 0;
  assert_int_equal(rp_iq_params_check(&p, &spec, &err), RP_EINVAL);
}

static void test_workspace_and_synthesis_errors(void **state) {
  (void)state;
  rp_error err = {0};
  assert_null(rp_iq_workspace_alloc(1, &err));
  assert_int_equal(err.status, RP_EINVAL);
  rp_iq_workspace_free(NULL);
  assert_int_equal(rp_iq_workspace_max_pulses(NULL), 0);
  rp_iq_workspace *ws = rp_iq_workspace_alloc(32, &err);
  assert_non_null(ws);
  assert_int_equal(rp_iq_workspace_max_pulses(ws), 32);
  rp_iq_params p = base_params();  /* M = 64 > 32 */
  double complex h[64], v[64];
  rp_rng rng;
  rp_rng_init(&rng, 1, 2);
  assert_int_equal(rp_iq_synthesize(ws, &p, NULL, &rng, h, v, &err), RP_EINVAL);
  assert_non_null(strstr(err.msg, "exceeds"));
  p.n_pulses = 32;
  assert_int_equal(rp_iq_synthesize(ws, &p, NULL, NULL, h, v, &err), RP_EINVAL);
  assert_int_equal(rp_iq_synthesize(NULL, &p, NULL, &rng, h, v, &err), RP_EINVAL);
  p.rhohv = 2;
  assert_int_equal(rp_iq_synthesize(ws, &p, NULL, &rng, h, v, &err), RP_EINVAL);
  rp_iq_workspace_free(ws);
}

/* A small table by hand: Rayleigh-like |f|^2 ∝ D^6 and Atlas-type fall speeds. */
static rp_table *toy_table(void) {
  rp_table *t = rp_table_alloc(60);
  for (size_t i = 0; i < t->n; i++) {
    t->d_mm[i] = 0.1 * (double)(i + 1);
    t->back_hh2_mm2[i] = 1e-6 * pow(t->d_mm[i], 6);
    rp_error err = {0};
    assert_int_equal(rp_fallspeed_eval(RP_FALL_ATLAS, t->d_mm[i], &t->fall_speed_m_s[i], &err), RP_OK);
  }
  return t;
}

static void test_dsd_spectrum_projects_fall_speed_and_wind(void **state) {
  (void)state;
  rp_table *t = toy_table();
  rp_dsd d;
  rp_error err = {0};
  assert_int_equal(rp_dsd_marshall_palmer(&d, 10.0, &err), RP_OK);
  double w[60], mu[60], sd[60];
  rp_iq_spectrum spec;
  /* elevation 30 deg, radial wind +6 m/s: v_r = 6 cos 30 - v_fall sin 30 (+ away) */
  assert_int_equal(rp_iq_dsd_spectrum(t, &d, 30.0, 6.0, 0.5, w, mu, sd, &spec, &err), RP_OK);
  assert_int_equal(spec.n, 60);
  for (size_t i = 0; i < 60; i++) {
    assert_close(mu[i], 6 * cos(M_PI / 6) - t->fall_speed_m_s[i] * 0.5, 1e-12, 1e-12);
    assert_close(sd[i], 0.5, 0, 0);
    const double dd = (i == 0 || i == 59) ? 0.05 : 0.1; /* trapezoid weights */
    assert_close(w[i], rp_dsd_eval(&d, t->d_mm[i]) * t->back_hh2_mm2[i] * dd, 1e-12, 0);
  }
  /* vertically pointing, no wind: every drop approaches (negative) */
  assert_int_equal(rp_iq_dsd_spectrum(t, &d, 90.0, 0.0, 0.3, w, mu, sd, &spec, &err), RP_OK);
  double mean, width;
  rp_iq_params p = base_params();
  p.prt_s = 0.5e-3;  /* v_a = 26.5 m/s: the whole fall-speed spectrum within Nyquist */
  rp_iq_spectrum_moments(&p, &spec, &mean, &width);
  assert_true(mean < -3 && mean > -9.65);
  assert_true(width > 0.3);
  /* the synthesised lag-1 products average to S r(1) of the DSD spectrum (5 s.e.) */
  const double sh = pow(10.0, p.snr_db / 10);
  lag_stat a = lag_average(&p, &spec, 2000, 0, 0, 1, 32);
  const double complex e = sh * rp_iq_autocorr(&p, &spec, 1);
  assert_close(creal(a.mean), creal(e), 0, 5 * a.se);
  assert_close(cimag(a.mean), cimag(e), 0, 5 * a.se);
  /* The pulse-pair mean: for this skewed spectrum arg of the estimate is biased by
   * O(1/M) (measured 0.10, 0.038, 0.014, 0.004 m/s for M = 16, 64, 256, 1024 with 8000
   * realisations); at M = 256 within 0.014 + 4 s.e. (s.e. 0.0066 for 1000). */
  p.n_pulses = 256;
  rp_pulse_summary s[RP_PULSE_N_KEYS];
  assert_int_equal(rp_pulse_ensemble(&p, &spec, RP_WINDOW_HANN, 1000, 3, s, NULL, &err), RP_OK);
  assert_close(s[RP_PULSE_VELOCITY_PP].bias, 0, 0, 0.014 + 4 * s[RP_PULSE_VELOCITY_PP].sd / sqrt(1000.0));
  assert_close(s[RP_PULSE_VELOCITY_PP].truth, mean, 1e-12, 0);
  /* errors */
  assert_int_equal(rp_iq_dsd_spectrum(t, &d, 95.0, 0, 0.3, w, mu, sd, &spec, &err), RP_EINVAL);
  assert_int_equal(rp_iq_dsd_spectrum(t, &d, 10.0, 0, -0.3, w, mu, sd, &spec, &err), RP_EINVAL);
  assert_int_equal(rp_iq_dsd_spectrum(t, &d, 10.0, NAN, 0.3, w, mu, sd, &spec, &err), RP_EINVAL);
  assert_int_equal(rp_iq_dsd_spectrum(NULL, &d, 10.0, 0, 0.3, w, mu, sd, &spec, &err), RP_EINVAL);
  assert_int_equal(rp_dsd_set_truncation(&d, 7.0, 8.0, &err), RP_OK); /* beyond the table */
  assert_int_equal(rp_iq_dsd_spectrum(t, &d, 10.0, 0, 0.3, w, mu, sd, &spec, &err), RP_EINVAL);
  assert_non_null(strstr(err.msg, "no backscatter"));
  rp_table_free(t);
}

static void test_mixture_spectrum_synthesis_matches_autocorr(void **state) {
  (void)state;
  /* two components, one straddling +-v_a: lag-1 average matches r(1) (5 standard errors) */
  rp_iq_params p = base_params();
  double w[2] = {1, 0.5}, mu[2] = {-3, 12.5}, sd[2] = {1.0, 1.5};
  rp_iq_spectrum spec = {2, w, mu, sd};
  const double sh = pow(10.0, p.snr_db / 10);
  lag_stat a = lag_average(&p, &spec, 3000, 0, 0, 1, 31);
  const double complex e = sh * rp_iq_autocorr(&p, &spec, 1);
  assert_close(creal(a.mean), creal(e), 0, 5 * a.se);
  assert_close(cimag(a.mean), cimag(e), 0, 5 * a.se);
}

static int cmp_double(const void *a, const void *b) {
  const double x = *(const double *)a, y = *(const double *)b;
  return (x > y) - (x < y);
}

static void test_ziggurat_deviates_are_standard_normal(void **state) {
  (void)state;
  /* 10^6 deviates: mean, variance and fourth moment within 5 standard errors of 0, 1, 3
   * (s.e. sqrt(1/n), sqrt(2/n), sqrt(96/n)); the share beyond the base layer's r =
   * 3.4426 (drawn by the tail method) within 5 s.e. of 2 Q(r) (GSL gsl_cdf_ugaussian_Q);
   * Kolmogorov-Smirnov distance against GSL's normal CDF on the first 10^5 below the
   * alpha = 0.001 critical value 1.949 / sqrt(n) (asymptotic Kolmogorov distribution;
   * from memory). */
  rp_zig_table z;
  rp_signal_zig_setup(&z);
  const size_t n = 1000000, nks = 100000;
  double *x = malloc(n * sizeof *x);
  rp_rng rng;
  rp_rng_init(&rng, 77, rp_rng_key(RP_RNG_TEST, 9, 0, 0));
  double s1 = 0, s2 = 0, s4 = 0;
  size_t tail = 0;
  for (size_t i = 0; i < n; i++) {
    x[i] = rp_signal_normal(&z, &rng);
    s1 += x[i];
    s2 += x[i] * x[i];
    s4 += x[i] * x[i] * x[i] * x[i];
    tail += fabs(x[i]) > 3.442619855899;
  }
  const double dn = (double)n;
  assert_close(s1 / dn, 0, 0, 5 * sqrt(1 / dn));
  assert_close(s2 / dn, 1, 0, 5 * sqrt(2 / dn));
  assert_close(s4 / dn, 3, 0, 5 * sqrt(96 / dn));
  const double pt = 2 * gsl_cdf_ugaussian_Q(3.442619855899);
  assert_close((double)tail / dn, pt, 0, 5 * sqrt(pt / dn));
  qsort(x, nks, sizeof *x, cmp_double);
  double d = 0;
  for (size_t i = 0; i < nks; i++) {
    const double f = gsl_cdf_ugaussian_P(x[i]);
    d = fmax(d, fmax(fabs(f - (double)i / (double)nks), fabs(f - (double)(i + 1) / (double)nks)));
  }
  print_message("KS distance %.5f (critical %.5f), tail share %.3g (expected %.3g)\n", d,
                1.949 / sqrt((double)nks), (double)tail / dn, pt);
  assert_true(d < 1.949 / sqrt((double)nks));
  /* the layers close at the top: x[127] > 0 and the areas sum to the density's */
  assert_true(z.x[127] > 0 && z.x[127] < 0.3);
  free(x);
}

int main(void) {
  rp_test_init();
  const struct CMUnitTest tests[] = {
      cmocka_unit_test(test_nyquist_is_lambda_over_4T),
      cmocka_unit_test(test_ziggurat_deviates_are_standard_normal),
      cmocka_unit_test(test_powers_follow_snr_and_zdr),
      cmocka_unit_test(test_hv_correlation_and_phidp_sign),
      cmocka_unit_test(test_lag1_correlation_has_no_wraparound_bias),
      cmocka_unit_test(test_autocorr_is_gaussian_spectrum_transform),
      cmocka_unit_test(test_average_spectrum_matches_input_chisquare),
      cmocka_unit_test(test_zero_width_is_a_coherent_line),
      cmocka_unit_test(test_same_seed_same_samples_any_thread_count),
      cmocka_unit_test(test_parameter_errors_name_the_quantity),
      cmocka_unit_test(test_workspace_and_synthesis_errors),
      cmocka_unit_test(test_dsd_spectrum_projects_fall_speed_and_wind),
      cmocka_unit_test(test_mixture_spectrum_synthesis_matches_autocorr),
  };
  return cmocka_run_group_tests(tests, NULL, NULL);
}
