/* cmd_pulses.c — `rainprint pulses`: synthesise I/Q pulses of one gate many times and
 * summarise what the estimators make of them (truth, mean, bias, SD, theoretical SD).
 *
 * The spectrum is a Gaussian (--velocity, --width) or, with a DSD (the options `gate`
 * takes), the fall-speed spectrum of the drops at the beam's elevation weighted by their
 * backscatter, shifted by the radial wind (--velocity) and broadened by turbulence
 * (--width); Zh, ZDR and rhoHV then come from the DSD's radar variables and the phase is
 * --phidp plus the DSD's delta_hv. No numerics here: src/signal/ synthesises and
 * estimates (docs/method.md, I/Q pulses). */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "cli/gate_run.h"
#include "rainprint/figure.h"
#include "rainprint/iq.h"
#include "rainprint/iq_file.h"
#include "rainprint/output_set.h"
#include "rainprint/pulse_estimators.h"

#define CMD "pulses"
#define REALISATIONS_MAX 1000000L

static const char *const window_names[] = {"rect", "hann"};

static const rp_opts_spec pulse_opts[] = {
    RP_OPTS_DOUBLE_ROW("velocity", "MS", "mean radial velocity, positive away from the radar "
                       "(with a DSD: the radial wind)", -1000.0, 1000.0, RP_OPTS_RANGED, "0"),
    RP_OPTS_DOUBLE_ROW("width", "MS", "spectrum width, standard deviation (with a DSD: the "
                       "turbulence broadening)", 0.0, 100.0, RP_OPTS_RANGED, "1"),
    RP_OPTS_DOUBLE_ROW("snr", "DB", "signal-to-noise ratio of the H channel", RP_IQ_SNR_MIN_DB,
                       RP_IQ_SNR_MAX_DB, RP_OPTS_RANGED, "20"),
    RP_OPTS_LONG_ROW("pulses", "M", "pulses per gate", 2, RP_IQ_MAX_PULSES, RP_OPTS_RANGED, "64"),
    RP_OPTS_DOUBLE_ROW("prt", "S", "pulse repetition time", 0.0, 1.0,
                       RP_OPTS_RANGED | RP_OPTS_LO_OPEN, NULL),
    RP_OPTS_DOUBLE_ROW("nyquist", "MS", "Nyquist velocity instead of --prt (PRT = "
                       "wavelength / (4 v_a))", 0.0, 1000.0, RP_OPTS_RANGED | RP_OPTS_LO_OPEN,
                       "16"),
    RP_OPTS_DOUBLE_ROW("zh", "DBZ", "reflectivity of the gate (without a DSD)", -100.0, 100.0,
                       RP_OPTS_RANGED, "30"),
    RP_OPTS_DOUBLE_ROW("zdr", "DB", "differential reflectivity (without a DSD)",
                       -RP_IQ_ZDR_MAX_DB, RP_IQ_ZDR_MAX_DB, RP_OPTS_RANGED, "1"),
    RP_OPTS_DOUBLE_ROW("rhohv", "X", "co-polar correlation coefficient (without a DSD)", 0.0,
                       1.0, RP_OPTS_RANGED, "0.98"),
    RP_OPTS_DOUBLE_ROW("phidp", "DEG", "differential phase (with a DSD: added to its "
                       "delta_hv)", -3600.0, 3600.0, RP_OPTS_RANGED, "30 (0 with a DSD)"),
    RP_OPTS_ENUM_ROW("window", "W", "window of the periodogram (spectral moments)",
                     window_names, "hann"),
    RP_OPTS_LONG_ROW("realisations", "N", "independent gates synthesised", 1, REALISATIONS_MAX,
                     RP_OPTS_RANGED, "2000"),
    RP_OPTS_LONG_ROW("seed", "S", "seed of the random streams (stored in the output)", 0,
                     2147483647L, RP_OPTS_RANGED, "1"),
    RP_OPTS_STRING_ROW("out", "FILE.nc", "keep the I/Q samples of every realisation (netCDF)"),
    RP_OPTS_STRING_ROW("plot", "FILE.png", "true and averaged estimated Doppler spectrum, and "
                       "one series of H and V (.png, .svg or .pdf)"),
    RP_OPTS_FLAG_ROW("json", "machine-readable output"),
    RP_OPTS_END};

static const rp_opts_command pulses_cmd = {
    .cmd = CMD,
    .usage = "pulses [--velocity MS --width MS | --preset NAME | --dsd MODEL ...] [options]",
    .about = "Synthesise dual-polarisation I/Q pulses of one gate (Zrnic 1975: random spectral\n"
             "coefficients, inverse FFT) many times, estimate power, pulse-pair velocity,\n"
             "spectrum width (lag 0/1 and lag 1/2), ZDR, noise-corrected rhoHV, PhiDP and the\n"
             "spectral moments of a windowed periodogram from each, and print for every\n"
             "estimate the true value, the mean, the bias, the standard deviation and the\n"
             "theoretical standard deviation (first-order error propagation, Doviak & Zrnic\n"
             "1993 ch. 6). Velocities are positive away from the radar and fold at the\n"
             "Nyquist velocity lambda / (4 PRT).",
    .examples = "  rainprint pulses --velocity 5 --width 2 --snr 5 --pulses 32 --band C\n"
                "  rainprint pulses --preset maritime-downpour --elevation 10 --pulses 64 --json",
    .tables = {pulse_opts, rp_cli_band_opts, rp_cli_scatter_opts, rp_cli_dsd_opts},
    .titles = {"Pulses", "Band", "Scattering (with a DSD)", "DSD (optional; as for `rainprint gate`)"},
    .notes = "Output: --json prints one object keyed by estimate (velocity_pp, width_r0r1,\n"
             "width_r1r2, zdr, rhohv, phidp, power, zh, velocity_spectral, width_spectral),\n"
             "each with truth, mean, bias, sd, sd_theory, units and n; and the inputs.",
};

typedef struct {
  rp_iq_params p;
  int have_dsd;
  double temp_c, elevation_deg;
  /* DSD spectrum: one component per table diameter (arrays owned here) */
  double *w, *m, *s;
  rp_iq_spectrum spec;
  char dsd_label[128];
  const char *band;
  double freq_ghz, nyquist_ms;
  rp_pulse_window window;
  size_t n;
  unsigned long seed;
} pulses_job;

static void job_free(pulses_job *j) {
  free(j->w);
  free(j->m);
  free(j->s);
}

static int any_dsd_option(const rp_opts *o) {
  return rp_opts_given(o, "preset") || rp_opts_given(o, "dsd") || rp_opts_given(o, "spectrum");
}

/* The DSD's radar variables at the band and its drop spectrum from the model's table. */
static int dsd_inputs(const rp_opts *o, const rp_cli_scatter *sc, pulses_job *j) {
  rp_cli_dsd d;
  rp_cli_dsd_init(&d);
  int rc = rp_cli_dsd_from_opts(o, &d);
  if (rc) return rc;
  rp_cli_dsd_built built;
  if ((rc = rp_cli_dsd_build(CMD, &d, &built))) {
    rp_cli_dsd_release(&built);
    return rc;
  }
  snprintf(j->dsd_label, sizeof j->dsd_label, "%s", built.label);
  rp_gate_request req;
  memset(&req, 0, sizeof req);
  req.cfg = sc->cfg;
  req.n_bands = 1;
  req.freq_ghz[0] = sc->cfg.freq_ghz;
  req.band[0] = j->band;
  req.kw2 = d.kw2;
  rp_gate_session session;
  memset(&session, 0, sizeof session);
  rp_gate_run_result res;
  rc = rp_gate_run(CMD, &session, &req, &built.dsd, &res);
  rp_radar_entry en;
  rp_error err = {0};
  if (rc == 0 &&
      rp_radar_model_entry(session.model, 0, sc->cfg.temp_c, sc->cfg.elevation_deg, &en, &err) !=
          RP_OK)
    rc = rp_cli_fail_err(CMD, &err);
  if (rc == 0) {
    const size_t nd = en.table->n;
    j->w = malloc(nd * sizeof *j->w);
    j->m = malloc(nd * sizeof *j->m);
    j->s = malloc(nd * sizeof *j->s);
    if (!j->w || !j->m || !j->s)
      rc = rp_cli_fail(CMD, RP_ENOMEM, "out of memory for the drop spectrum");
    else if (rp_iq_dsd_spectrum(en.table, &built.dsd, sc->cfg.elevation_deg, j->p.velocity_m_s,
                                j->p.width_m_s, j->w, j->m, j->s, &j->spec, &err) != RP_OK)
      rc = rp_cli_fail_err(CMD, &err);
  }
  if (rc == 0) {
    const rp_gate_result *g = &res.r[0];
    j->p.zh_dbz = g->zh_dbz;
    j->p.zdr_db = g->zdr_db;
    j->p.rhohv = fmin(g->rhohv, 1.0);
    j->p.phidp_deg = rp_opts_double(o, "phidp", 0.0) + g->delta_hv_deg;
  }
  rp_gate_session_close(&session);
  rp_cli_dsd_release(&built);
  return rc;
}

static int build_job(const rp_opts *o, pulses_job *j) {
  memset(j, 0, sizeof *j);
  rp_cli_scatter sc;
  rp_cli_scatter_init(&sc);
  int rc = rp_cli_scatter_from_opts(o, &sc);
  if (rc) return rc;
  if ((rc = rp_opts_exclusive(o, "prt", "nyquist", (const char *)NULL))) return rc;
  j->have_dsd = any_dsd_option(o);
  if (j->have_dsd) {
    const char *const own[] = {"zh", "zdr", "rhohv"};
    for (size_t k = 0; k < 3; k++)
      if (rp_opts_given(o, own[k]))
        return rp_cli_fail(CMD, RP_EINVAL, "--%s comes from the DSD when one is given (drop "
                           "--preset/--dsd/--spectrum, or --%s)", own[k], own[k]);
  } else {
    const char *const scat[] = {"temperature", "shape", "axis-ratio", "canting-sd",
                                "canting-model", "canting-approx", "elevation", "method",
                                "kw2", "height", "dmin", "dmax"};
    for (size_t k = 0; k < sizeof scat / sizeof scat[0]; k++)
      if (rp_opts_given(o, scat[k]))
        return rp_cli_fail(CMD, RP_EINVAL, "--%s goes with a DSD (--preset, --dsd or "
                           "--spectrum); a Gaussian spectrum takes --zh, --zdr, --rhohv, "
                           "--phidp", scat[k]);
  }
  j->band = rp_cli_scatter_band(&sc);
  j->freq_ghz = sc.cfg.freq_ghz;
  j->temp_c = sc.cfg.temp_c;
  j->elevation_deg = sc.cfg.elevation_deg;
  rp_iq_params *p = &j->p;
  p->wavelength_mm = rp_wavelength_mm(j->freq_ghz);
  p->prt_s = rp_opts_given(o, "prt") ? rp_opts_double(o, "prt", 0.0)
                                     : p->wavelength_mm * 1e-3 /
                                           (4.0 * rp_opts_double(o, "nyquist", 16.0));
  j->nyquist_ms = rp_iq_nyquist_m_s(p->prt_s, p->wavelength_mm);
  p->velocity_m_s = rp_opts_double(o, "velocity", 0.0);
  p->width_m_s = rp_opts_double(o, "width", 1.0);
  p->snr_db = rp_opts_double(o, "snr", 20.0);
  p->n_pulses = (size_t)rp_opts_long(o, "pulses", 64);
  p->zh_dbz = rp_opts_double(o, "zh", 30.0);
  p->zdr_db = rp_opts_double(o, "zdr", 1.0);
  p->rhohv = rp_opts_double(o, "rhohv", 0.98);
  p->phidp_deg = rp_opts_double(o, "phidp", 30.0);
  j->window = rp_opts_enum(o, "window", 1) == 0 ? RP_WINDOW_RECT : RP_WINDOW_HANN;
  j->n = (size_t)rp_opts_long(o, "realisations", 2000);
  j->seed = (unsigned long)rp_opts_long(o, "seed", 1);
  if (!j->have_dsd && p->width_m_s > j->nyquist_ms)
    return rp_cli_fail(CMD, RP_EDOM, "--width %g m/s is larger than the Nyquist velocity "
                       "%.4g m/s of this PRT and wavelength: raise --nyquist or lower --width",
                       p->width_m_s, j->nyquist_ms);
  if (j->have_dsd && (rc = dsd_inputs(o, &sc, j))) return rc;
  rp_error err = {0};
  if (rp_iq_params_check(p, j->have_dsd ? &j->spec : NULL, &err) != RP_OK)
    return rp_cli_fail_err(CMD, &err);
  return 0;
}

/* ---- output ---------------------------------------------------------------------------- */

static void print_text(const pulses_job *j, const rp_pulse_summary *s) {
  const rp_iq_params *p = &j->p;
  char band[48];
  if (j->band)
    snprintf(band, sizeof band, "%s band (%.4g GHz)", j->band, j->freq_ghz);
  else
    snprintf(band, sizeof band, "%.4g GHz", j->freq_ghz);
  printf("Pulses: %s, wavelength %.2f mm, PRT %.4g ms (Nyquist %.3f m/s), M = %zu pulses, "
         "SNR %.2f dB\n", band, p->wavelength_mm, 1e3 * p->prt_s, j->nyquist_ms, p->n_pulses,
         p->snr_db);
  if (j->have_dsd)
    printf("Spectrum of the drops of %s at elevation %.1f deg, %.1f C (radial wind %.3g m/s, "
           "turbulence %.3g m/s)\n", j->dsd_label, j->elevation_deg, j->temp_c, p->velocity_m_s,
           p->width_m_s);
  else
    printf("Gaussian spectrum: velocity %.3g m/s, width %.3g m/s\n", p->velocity_m_s,
           p->width_m_s);
  printf("Zh %.2f dBZ, ZDR %.3f dB, rhoHV %.4f, PhiDP %.2f deg; %zu realisations, seed %lu, "
         "%s window\n\n", p->zh_dbz, p->zdr_db, p->rhohv, p->phidp_deg, j->n, j->seed,
         j->window == RP_WINDOW_HANN ? "Hann" : "rectangular");
  printf("%-18s %-7s %11s %11s %11s %11s %11s %7s\n", "estimate", "units", "truth", "mean",
         "bias", "sd", "sd_theory", "n");
  for (int k = 0; k < RP_PULSE_N_KEYS; k++) {
    const rp_pulse_summary *e = &s[k];
    printf("%-18s %-7s %11.5g %11.5g %11.4g %11.4g %11.4g %7zu\n", rp_pulse_key_name((rp_pulse_key)k),
           rp_pulse_key_units((rp_pulse_key)k), e->truth, e->mean, e->bias, e->sd, e->sd_theory,
           e->n_valid);
  }
  printf("\n(sd_theory: first-order error propagation for a Gaussian-shaped signal; it does not "
         "hold at very low SNR, few pulses or widths near the Nyquist velocity; nan where no "
         "published formula exists.)\n");
}

static json_t *build_json(const pulses_job *j, const rp_pulse_summary *s) {
  const rp_iq_params *p = &j->p;
  json_t *o = json_object();
  for (int k = 0; k < RP_PULSE_N_KEYS; k++) {
    const rp_pulse_summary *e = &s[k];
    json_object_set_new(o, rp_pulse_key_name((rp_pulse_key)k),
                        json_pack("{s:o, s:o, s:o, s:o, s:o, s:s, s:I}", "truth",
                                  rp_json_real(e->truth), "mean", rp_json_real(e->mean), "bias",
                                  rp_json_real(e->bias), "sd", rp_json_real(e->sd), "sd_theory",
                                  rp_json_real(e->sd_theory), "units",
                                  rp_pulse_key_units((rp_pulse_key)k), "n",
                                  (json_int_t)e->n_valid));
  }
  json_t *in = json_object();
  json_object_set_new(in, "band", j->band ? json_string(j->band) : json_null());
  json_object_set_new(in, "frequency_ghz", rp_json_real(j->freq_ghz));
  json_object_set_new(in, "wavelength_mm", rp_json_real(p->wavelength_mm));
  json_object_set_new(in, "prt_s", rp_json_real(p->prt_s));
  json_object_set_new(in, "nyquist_ms", rp_json_real(j->nyquist_ms));
  json_object_set_new(in, "pulses", json_integer((json_int_t)p->n_pulses));
  json_object_set_new(in, "snr_db", rp_json_real(p->snr_db));
  json_object_set_new(in, "velocity_ms", rp_json_real(p->velocity_m_s));
  json_object_set_new(in, "width_ms", rp_json_real(p->width_m_s));
  json_object_set_new(in, "zh_dbz", rp_json_real(p->zh_dbz));
  json_object_set_new(in, "zdr_db", rp_json_real(p->zdr_db));
  json_object_set_new(in, "rhohv", rp_json_real(p->rhohv));
  json_object_set_new(in, "phidp_deg", rp_json_real(p->phidp_deg));
  json_object_set_new(in, "spectrum", json_string(j->have_dsd ? "dsd" : "gaussian"));
  json_object_set_new(in, "dsd", j->have_dsd ? rp_json_text(j->dsd_label) : json_null());
  json_object_set_new(in, "elevation_deg", j->have_dsd ? rp_json_real(j->elevation_deg) : json_null());
  json_object_set_new(in, "window", json_string(j->window == RP_WINDOW_HANN ? "hann" : "rect"));
  json_object_set_new(in, "realisations", json_integer((json_int_t)j->n));
  json_object_set_new(in, "seed", json_integer((json_int_t)j->seed));
  json_object_set_new(o, "inputs", in);
  return o;
}

/* Bins in increasing velocity (the periodogram's are 0, +, ..., -): the order of k. */
static void velocity_order(const rp_iq_params *p, double *v, size_t *order) {
  const size_t m = p->n_pulses;
  for (size_t k = 0; k < m; k++) v[k] = rp_iq_bin_velocity_m_s(p, k);
  for (size_t i = 0; i < m; i++) order[i] = i;
  for (size_t i = 1; i < m; i++) /* insertion sort: M is small */
    for (size_t k = i; k > 0 && v[order[k]] < v[order[k - 1]]; k--) {
      const size_t t = order[k];
      order[k] = order[k - 1];
      order[k - 1] = t;
    }
}

static int draw_plot(const pulses_job *j, const char *path, const double *mean_pg,
                     const double *true_sp, const double *expect_pg, const double complex *h,
                     const double complex *v, char *tmp, size_t tmp_len) {
  const size_t m = j->p.n_pulses;
  double *buf = malloc(12 * m * sizeof *buf);
  size_t *order = malloc(m * sizeof *order);
  if (buf == NULL || order == NULL) {
    free(buf);
    free(order);
    return rp_cli_fail(CMD, RP_ENOMEM, "out of memory for the picture");
  }
  double *vel = buf, *xs = buf + m, *y1 = buf + 2 * m, *y2 = buf + 3 * m, *y3 = buf + 4 * m;
  double *t = buf + 5 * m, *hr = buf + 6 * m, *hi = buf + 7 * m, *vr = buf + 8 * m,
         *vi = buf + 9 * m;
  velocity_order(&j->p, vel, order);
  for (size_t i = 0; i < m; i++) {
    const size_t k = order[i];
    xs[i] = vel[k];
    y1[i] = 10.0 * log10(true_sp[k]);
    y2[i] = 10.0 * log10(expect_pg[k]);
    y3[i] = 10.0 * log10(mean_pg[k]);
    t[i] = (double)i;
    hr[i] = creal(h[i]);
    hi[i] = cimag(h[i]);
    vr[i] = creal(v[i]);
    vi[i] = cimag(v[i]);
  }
  const rp_figure_series spec_series[3] = {
      {"model spectrum + noise", xs, y1, m, RP_FIGURE_STYLE_LINE},
      {"expected periodogram", xs, y2, m, RP_FIGURE_STYLE_LINE},
      {"mean estimated periodogram", xs, y3, m, RP_FIGURE_STYLE_MARKERS}};
  const rp_figure_series time_series[4] = {{"Re H", t, hr, m, RP_FIGURE_STYLE_LINE},
                                           {"Im H", t, hi, m, RP_FIGURE_STYLE_LINE},
                                           {"Re V", t, vr, m, RP_FIGURE_STYLE_LINE},
                                           {"Im V", t, vi, m, RP_FIGURE_STYLE_LINE}};
  char sub1[160], title[320];
  snprintf(sub1, sizeof sub1, "%zu realisations, %s window, noise floor 0 dB per bin", j->n,
           j->window == RP_WINDOW_HANN ? "Hann" : "rectangular");
  rp_figure_panel panels[2];
  memset(panels, 0, sizeof panels);
  panels[0].kind = RP_FIGURE_LINES;
  panels[0].title = "Doppler spectrum of H";
  panels[0].subtitle = sub1;
  panels[0].xlabel = "radial velocity (m s#u-1#d, + away)";
  panels[0].ylabel = "power per bin (dB above noise)";
  panels[0].xy.series = spec_series;
  panels[0].xy.n_series = 3;
  panels[1].kind = RP_FIGURE_LINES;
  panels[1].title = "one realisation";
  panels[1].subtitle = "samples normalised to unit noise power per channel";
  panels[1].xlabel = "pulse number";
  panels[1].ylabel = "I/Q sample";
  panels[1].xy.series = time_series;
  panels[1].xy.n_series = 4;
  char bandtxt[48];
  if (j->band)
    snprintf(bandtxt, sizeof bandtxt, "%s band, %.4g GHz", j->band, j->freq_ghz);
  else
    snprintf(bandtxt, sizeof bandtxt, "%.4g GHz", j->freq_ghz);
  snprintf(title, sizeof title, "%s: M = %zu pulses, SNR %.3g dB, v_a %.3g m/s%s%s", bandtxt,
           j->p.n_pulses, j->p.snr_db, j->nyquist_ms, j->have_dsd ? ", drops of " : "",
           j->have_dsd ? j->dsd_label : "");
  rp_figure fig = {title, "synthetic I/Q (rainprint pulses)", panels, 2, 2, 1300, 560};
  rp_error err = {0};
  const rp_status st = rp_figure_draw_temp(path, &fig, tmp, tmp_len, &err);
  free(buf);
  free(order);
  if (st != RP_OK) return rp_cli_fail(CMD, st, "--plot: %s", err.msg);
  return 0;
}

int rp_cmd_pulses(int argc, char **argv) {
  rp_opts o;
  int rc = rp_opts_parse(&pulses_cmd, argc, argv, &o);
  if (rc != RP_OPTS_GO_ON) return rc;
  const int json = rp_opts_given(&o, "json");
  const char *out = rp_opts_string(&o, "out", NULL), *plot = rp_opts_string(&o, "plot", NULL);
  if ((rc = rp_cli_check_output(CMD, "out", out))) return rc;
  if ((rc = rp_cli_check_outputs(CMD, NULL, plot))) return rc;
  pulses_job j;
  if ((rc = build_job(&o, &j))) {
    job_free(&j);
    return rc;
  }
  const size_t m = j.p.n_pulses;
  rp_pulse_summary s[RP_PULSE_N_KEYS];
  double *mean_pg = NULL, *true_sp = NULL, *expect_pg = NULL;
  double complex *h = NULL, *v = NULL;
  const int keep_all = out != NULL;
  const size_t n_kept = keep_all ? j.n : 1;
  if (plot != NULL || keep_all) {
    mean_pg = malloc(m * sizeof *mean_pg);
    true_sp = malloc(m * sizeof *true_sp);
    expect_pg = malloc(m * sizeof *expect_pg);
    if (n_kept > SIZE_MAX / m / sizeof(double complex) / 2)
      rc = rp_cli_fail(CMD, RP_EINVAL, "--realisations %zu x --pulses %zu samples are too "
                       "many to keep", j.n, m);
    else {
      h = malloc(n_kept * m * sizeof *h);
      v = malloc(n_kept * m * sizeof *v);
    }
    if (rc == 0 && (!mean_pg || !true_sp || !expect_pg || !h || !v))
      rc = rp_cli_fail(CMD, RP_ENOMEM, "out of memory for %zu x %zu samples", n_kept, m);
  }
  rp_error err = {0};
  if (rc == 0) {
    /* the samples of every realisation for --out; for the picture the first one is enough,
     * so only one realisation's samples are asked for then */
    rp_pulse_ensemble_out eo = {mean_pg, true_sp, expect_pg, keep_all ? h : NULL,
                                keep_all ? v : NULL, NULL};
    const rp_iq_spectrum *spec = j.have_dsd ? &j.spec : NULL;
    if (rp_pulse_ensemble(&j.p, spec, j.window, j.n, j.seed, s, &eo, &err) != RP_OK)
      rc = rp_cli_fail_err(CMD, &err);
    if (rc == 0 && plot != NULL && !keep_all) {
      rp_pulse_ensemble_out one = {NULL, NULL, NULL, h, v, NULL};
      rp_pulse_summary s1[RP_PULSE_N_KEYS];
      if (rp_pulse_ensemble(&j.p, spec, j.window, 1, j.seed, s1, &one, &err) != RP_OK)
        rc = rp_cli_fail_err(CMD, &err);
    }
  }
  /* The picture is drawn and checked first; the samples file is written whole; the
   * picture is renamed into place last (a kill in between leaves a new file beside the
   * old picture, never a picture of samples that were not written). */
  char tmp[4096] = "";
  if (rc == 0 && plot != NULL) rc = draw_plot(&j, plot, mean_pg, true_sp, expect_pg, h, v, tmp, sizeof tmp);
  if (rc == 0 && out != NULL &&
      rp_iq_save(out, &j.p, j.have_dsd ? &j.spec : NULL, j.seed, j.n, h, v, NULL, &err) != RP_OK)
    rc = rp_cli_fail_err(CMD, &err);
  if (plot != NULL && tmp[0] != '\0') {
    if (rc == 0 && rp_figure_commit(tmp, plot, &err) != RP_OK)
      rc = rp_cli_fail(CMD, err.status, "--plot: %s", err.msg);
    else if (rc != 0)
      rp_figure_discard(tmp);
  }
  if (rc == 0) {
    if (json)
      rc = rp_json_print(build_json(&j, s));
    else
      print_text(&j, s);
  }
  free(mean_pg);
  free(true_sp);
  free(expect_pg);
  free(h);
  free(v);
  job_free(&j);
  return rc;
}
