/* cmd_relate.c — `rainprint relate`: fit rain relations for one band from a seeded
 * ensemble of DSDs or from measured spectra, with skill on held-out samples. Parsing and
 * output only: the whole pipeline is one library call (rp_relate_run on a radar model
 * whose tables come from the store: shipped, cached, computed). */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli/cli.h"
#include "cli/progress.h"
#include "rainprint/names.h"
#include "rainprint/radar_model.h"
#include "rainprint/figure.h"
#include "rainprint/relate.h"
#include "rainprint/shape.h"
#include "rainprint/table.h"
#include "rainprint/climate_file.h"
#include "rainprint/samples_csv.h"
#include "rainprint/spectrum.h"
#include "rainprint/table_file.h"

#define RP_STR(x) #x
#define RP_XSTR(x) RP_STR(x)

#define ENSEMBLE_MAX 2000000L

static rp_status climate_resolve(const char *text, int *value, rp_error *err) {
  size_t n = 0;
  const char *const *names = rp_climate_names(&n);
  return rp_names_find(names, n, NULL, 0, "climate", text, value, err);
}

static const rp_opts_spec relate_source_opts[] = {
    RP_OPTS_LONG_ROW("ensemble", "SIZE", "members drawn from a climate", RP_RELATE_MIN_MEMBERS,
                     ENSEMBLE_MAX, RP_OPTS_RANGED, RP_XSTR(RP_ENSEMBLE_SIZE_DEFAULT)),
    RP_OPTS_ENUM_FN_ROW("climate", "NAME", "built-in climate", climate_resolve, rp_climate_names,
                        RP_CLIMATE_DEFAULT),
    RP_OPTS_STRING_ROW("climate-file", "F.yaml",
                       "a climate of your own (examples: dsd-presets/climates/)"),
    RP_OPTS_LONG_ROW("seed", "N", "seed of the draw (stored in the output)", 0, 0,
                     RP_OPTS_RANGED | RP_OPTS_NO_HI, "1"),
    RP_OPTS_STRING_ROW("spectra", "FILE.csv",
                       "measured spectra instead, one DSD per row (spectrum CSV format)"),
    RP_OPTS_DOUBLE_ROW("max-diameter", "MM",
                       "--spectra filter: largest upper bin edge with drops, at most the table's "
                       "8 mm", 0.0, RP_TABLE_DMAX_DEFAULT_MM, RP_OPTS_RANGED | RP_OPTS_LO_OPEN,
                       RP_XSTR(RP_RELATE_DMAX_DEFAULT_MM)),
    RP_OPTS_DOUBLE_ROW("min-nt", "M3", "--spectra filter: minimum total concentration Nt, m^-3",
                       0.0, 0, RP_OPTS_RANGED | RP_OPTS_NO_HI, RP_XSTR(RP_RELATE_NT_MIN_DEFAULT)),
    RP_OPTS_DOUBLE_ROW("min-rain-rate", "MM_H", "--spectra filter: minimum rain rate", 0.0, 0,
                       RP_OPTS_RANGED | RP_OPTS_NO_HI, RP_XSTR(RP_RELATE_RAIN_MIN_DEFAULT)),
    RP_OPTS_END};

static const rp_opts_spec relate_fit_opts[] = {
    RP_OPTS_STRING_ROW("relations", "LIST",
                       "e.g. \"R(KDP),R(Zh,ZDR),AH(KDP)\" (case-sensitive; default all)"),
    RP_OPTS_DOUBLE_ROW("min-zh", "DBZ", "relations with Zh use samples with Zh >= DBZ", -50.0,
                       80.0, RP_OPTS_RANGED, RP_XSTR(RP_RELATE_ZH_MIN_DBZ_DEFAULT)),
    RP_OPTS_DOUBLE_ROW("min-kdp", "DEG_KM", "relations with KDP: KDP >= DEG_KM", 0.0, 100.0,
                       RP_OPTS_RANGED, RP_XSTR(RP_RELATE_KDP_MIN_DEFAULT)),
    RP_OPTS_DOUBLE_ROW("min-zdr", "DB", "relations with ZDR: ZDR >= DB", -10.0, 10.0,
                       RP_OPTS_RANGED, RP_XSTR(RP_RELATE_ZDR_MIN_DB_DEFAULT)),
    RP_OPTS_FLAG_ROW("nonlinear", "refine each fit by nonlinear least squares on the variable "
                     "itself (fits the mean; default: log-space fit, the median)"),
    RP_OPTS_DOUBLE_ROW("kw2", "X", "|K_w|^2 used to form Z", 0.0, 1.0,
                       RP_OPTS_RANGED | RP_OPTS_LO_OPEN, "0.93"),
    RP_OPTS_FLAG_ROW("json", "machine-readable output (JSON on stdout)"),
    RP_OPTS_STRING_ROW("csv", "FILE", "every sample with its DSD moments and radar variables"),
    RP_OPTS_STRING_ROW("plot", "FILE.png",
                       "each relation over its samples, and fitted vs true (1:1); .svg and .pdf "
                       "also work"),
    RP_OPTS_END};

static const rp_opts_command relate_cmd = {
    .cmd = "relate",
    .usage = "relate [--ensemble SIZE --climate NAME --seed N | --spectra FILE.csv]\n"
             "                        [--band B | --frequency GHZ] [options]",
    .about =
        "Fit rain relations for one radar band (default C): R(Zh) (also as Zh = a R^b), Zh(R),\n"
        "R(KDP), R(Zh,ZDR), R(KDP,ZDR), AH(KDP), ADP(KDP), AH(Zh), Dm(ZDR). Each DSD gives R, Zh,\n"
        "ZDR, KDP, AH, ADP, Dm, D0, Nw, LWC; the power laws are fitted in log space on 3 of\n"
        "every 4 samples (95 % intervals) and scored on the held-out 4th (bias, RMSE, FSE,\n"
        "corr). Zh is linear (mm^6 m^-3), Zdr = 10^(ZDR/10) in the two-predictor relations,\n"
        "ZDR in dB in Dm(ZDR), KDP in deg/km, AH and ADP in dB/km (one way), R in mm/h.",
    .examples = "  rainprint relate --band X --ensemble 20000 --climate maritime --seed 7\n"
                "  rainprint relate --band S --relations \"R(KDP),AH(KDP)\" --json",
    .tables = {relate_source_opts, relate_fit_opts, rp_cli_band_opts, rp_cli_scatter_opts},
    .titles = {"DSDs (one source) and --spectra quality filters", "Relations and outputs",
               "Band", "Scattering"},
    .notes = "Caution: " RP_RELATE_CAUTION,
};

#define ENSEMBLE_MAX 2000000L
#define PLOT_MAX_POINTS 1500 /* markers per held-out series */

typedef struct {
  rp_cli_scatter s;
  long ensemble;
  int have_ensemble, have_seed;
  long seed;
  const char *climate, *climate_file, *spectra, *relations, *csv, *plot;
  rp_relate_options opt;
  rp_relate_quality q;
  int have_quality;
  double kw2;
} relate_args;

typedef struct {
  rp_table_store *store;
  rp_radar_model *model;
  rp_relate_result *res;
  rp_table_origin origin;
  rp_spectrum_set *set;
  rp_dsd *rows;
  const rp_relate_sample *samples; /* borrowed from res */
  size_t n, n_direct;
  rp_relate_quality_report rep;
  rp_climate climate;
  const rp_relate_fit *fits;       /* borrowed from res */
  size_t n_fits;
} relate_state;

/* Options into a. 0 or an exit code. */
static int read_args(const rp_opts *o, relate_args *a) {
  int rc;
  if (rp_opts_given(o, "spectra") &&
      (rc = rp_opts_exclusive(o, "spectra", "ensemble", (const char *)NULL)) != 0)
    return rc;
  const char *const ens_only[] = {"climate", "climate-file", "seed"};
  for (size_t i = 0; i < 3; i++)
    if (rp_opts_given(o, "spectra") && rp_opts_given(o, ens_only[i]))
      return rp_cli_fail("relate", RP_EINVAL, "--%s is for an ensemble; --spectra gives the DSDs",
                         ens_only[i]);
  const char *const spectra_only[] = {"max-diameter", "min-nt", "min-rain-rate"};
  for (size_t i = 0; i < 3; i++)
    if ((rc = rp_opts_requires(o, spectra_only[i], "spectra"))) return rc;
  if ((rc = rp_opts_exclusive(o, "climate", "climate-file", (const char *)NULL))) return rc;
  a->ensemble = rp_opts_long(o, "ensemble", RP_ENSEMBLE_SIZE_DEFAULT);
  a->have_ensemble = rp_opts_given(o, "ensemble");
  a->seed = rp_opts_long(o, "seed", 1);
  a->have_seed = rp_opts_given(o, "seed");
  if (rp_opts_given(o, "climate")) {
    size_t n = 0;
    a->climate = rp_climate_names(&n)[rp_opts_enum(o, "climate", 0)];
  }
  a->climate_file = rp_opts_string(o, "climate-file", NULL);
  a->spectra = rp_opts_string(o, "spectra", NULL);
  a->relations = rp_opts_string(o, "relations", NULL);
  a->csv = rp_opts_string(o, "csv", NULL);
  a->plot = rp_opts_string(o, "plot", NULL);
  a->opt.nonlinear = rp_opts_given(o, "nonlinear");
  a->opt.zh_min_dbz = rp_opts_double(o, "min-zh", a->opt.zh_min_dbz);
  a->opt.kdp_min_deg_km = rp_opts_double(o, "min-kdp", a->opt.kdp_min_deg_km);
  a->opt.zdr_min_db = rp_opts_double(o, "min-zdr", a->opt.zdr_min_db);
  a->q.max_diameter_mm = rp_opts_double(o, "max-diameter", a->q.max_diameter_mm);
  a->q.min_nt_m3 = rp_opts_double(o, "min-nt", a->q.min_nt_m3);
  a->q.min_rain_rate_mm_h = rp_opts_double(o, "min-rain-rate", a->q.min_rain_rate_mm_h);
  a->kw2 = rp_opts_double(o, "kw2", RP_KW2_DEFAULT);
  return 0;
}

static void state_free(relate_state *st) {
  rp_relate_result_free(st->res);
  rp_radar_model_free(st->model);
  rp_table_store_free(st->store);
  rp_spectrum_free(st->set);
  free(st->rows);
}

/* ---- computing (library calls) ------------------------------------------------------ */

/* The library's progress (fraction done) on the terminal's bar (progress.h). */
static void progress_step(void *ctx, double fraction) {
  rp_cli_progress_step(ctx, (size_t)lround(100.0 * fraction));
}

static int compute(const relate_args *a, relate_state *st) {
  rp_error err = {0};
  rp_radar_config rc;
  rp_radar_config_default(&rc);
  rc.scatter = a->s.cfg;
  rc.n_bands = 1;
  rc.freq_ghz[0] = a->s.cfg.freq_ghz;
  rc.kw2 = a->kw2;
  st->store = rp_table_store_alloc(rp_cli_tables_dir(), rp_cli_cache_dir());
  if (st->store == NULL) return rp_cli_fail("relate", RP_ENOMEM, "out of memory (table store)");
  rc.source = rp_table_store_source(st->store);
  if (rp_radar_model_alloc(&rc, &st->model, &err) != RP_OK) return rp_cli_fail_err("relate", &err);
  rp_relate_request req;
  rp_relate_request_default(&req);
  req.options = a->opt;
  if (a->spectra != NULL) {
    if (rp_spectrum_load(a->spectra, &st->set, &err) != RP_OK) return rp_cli_fail_err("relate", &err);
    st->rows = calloc(st->set->n_rows ? st->set->n_rows : 1, sizeof *st->rows);
    if (st->rows == NULL) return rp_cli_fail("relate", RP_ENOMEM, "out of memory");
    for (size_t r = 0; r < st->set->n_rows; r++)  /* rows numbered from 1 in messages */
      if (rp_spectrum_row_dsd(st->set, r, &st->rows[r], &err) != RP_OK)
        return rp_cli_fail("relate", err.status, "%s: data row %zu: %s", a->spectra, r + 1,
                           err.msg);
    req.source = RP_RELATE_FROM_SPECTRA;
    req.rows = st->rows;
    req.n_rows = st->set->n_rows;
    req.quality = a->q;
  } else {
    rp_status s;
    if (a->climate_file != NULL)
      s = rp_climate_load_yaml(a->climate_file, &st->climate, &err);
    else
      s = rp_climate_from_name(a->climate ? a->climate : RP_CLIMATE_DEFAULT, &st->climate, &err);
    if (s != RP_OK) return rp_cli_fail_err("relate", &err);
    req.source = RP_RELATE_FROM_ENSEMBLE;
    req.climate = &st->climate;
    req.n_members = (size_t)a->ensemble;
    req.seed = (unsigned long)a->seed;
  }
  rp_cli_progress bar;
  rp_cli_progress_start(&bar, "relate", "% done", 100);
  req.progress = progress_step;
  req.progress_ctx = &bar;
  const rp_status s = rp_relate_run(st->model, 0, &req, &st->res, &err);
  rp_cli_progress_end(&bar);
  if (s == RP_ESAMPLES)
    return rp_cli_fail("relate", s, "%s (lower --min-zh, --min-kdp or --min-zdr, or give more "
                       "samples)", err.msg);
  if (s != RP_OK) {
    if (a->spectra != NULL) rp_error_prefix(&err, "%s: ", a->spectra);
    return rp_cli_fail_err("relate", &err);
  }
  st->samples = st->res->samples;
  st->n = st->res->n_samples;
  st->n_direct = st->res->n_direct;
  st->rep = st->res->report;
  st->fits = st->res->fits;
  st->n_fits = st->res->n_fits;
  st->origin = st->res->origin;
  return 0;
}

/* ---- picture ------------------------------------------------------------------------ */

static const char *axis_label(const char *var) {
  if (strcmp(var, "R") == 0) return "R (mm h#u-1#d)";
  if (strcmp(var, "Zh") == 0) return "Z#dh#u (mm#u6#d m#u-3#d)";
  if (strcmp(var, "KDP") == 0) return "K#dDP#u (° km#u-1#d)";
  if (strcmp(var, "AH") == 0) return "A#dH#u (dB km#u-1#d)";
  if (strcmp(var, "ADP") == 0) return "A#dDP#u (dB km#u-1#d)";
  if (strcmp(var, "Dm") == 0) return "D#dm#u (mm)";
  if (strcmp(var, "ZDR") == 0) return "Z#dDR#u (dB)";
  return var;
}

typedef struct {
  double *x, *y;   /* scatter of the fit samples (thinned) */
  double *cx, *cy; /* fitted curve */
  double *ex, *ey; /* held-out: true (x), fitted (y) */
  size_t n, nc, ne;
} panel_data;

#define CURVE_POINTS 100

/* The samples of relation f that pass its thresholds: every fit sample (a density
 * picture draws them all), the held-out ones thinned to about PLOT_MAX_POINTS for the
 * marker panels, and the fitted curve over the fit samples' range. */
static int collect(const relate_state *st, const rp_relate_options *o, const rp_relate_fit *f,
                   panel_data *pd) {
  size_t n_pass = 0;
  for (size_t i = 0; i < st->n; i++) {
    double x1, x2, y;
    n_pass += (size_t)rp_relate_sample_values(f->id, &st->samples[i], o, &x1, &x2, &y);
  }
  const size_t stride = n_pass > PLOT_MAX_POINTS ? (n_pass + PLOT_MAX_POINTS - 1) / PLOT_MAX_POINTS : 1;
  const size_t cap = n_pass + 2;
  pd->x = malloc(cap * sizeof(double));
  pd->y = malloc(cap * sizeof(double));
  pd->ex = malloc(cap * sizeof(double));
  pd->ey = malloc(cap * sizeof(double));
  pd->cx = malloc(CURVE_POINTS * sizeof(double));
  pd->cy = malloc(CURVE_POINTS * sizeof(double));
  if (!pd->x || !pd->y || !pd->ex || !pd->ey || !pd->cx || !pd->cy) return -1;
  size_t k = 0;
  double xmin = HUGE_VAL, xmax = 0.0;
  for (size_t i = 0; i < st->n; i++) {
    double x1, x2, y;
    if (!rp_relate_sample_values(f->id, &st->samples[i], o, &x1, &x2, &y)) continue;
    xmin = fmin(xmin, x1);
    xmax = fmax(xmax, x1);
    if (rp_fit_is_held_out(st->samples[i].index)) {
      if (k++ % stride != 0) continue;
      pd->ex[pd->ne] = y;
      pd->ey[pd->ne++] = rp_fit_power_eval(&f->fit, x1, x2);
    } else {
      pd->x[pd->n] = x1;
      pd->y[pd->n++] = y;
    }
  }
  if (n_pass > 0 && xmax > xmin) {
    for (size_t j = 0; j < CURVE_POINTS; j++) {
      const double t = (double)j / (CURVE_POINTS - 1);
      pd->cx[j] = xmin * pow(xmax / xmin, t);
      pd->cy[j] = rp_fit_power_eval(&f->fit, pd->cx[j], (double)NAN);
    }
    pd->nc = CURVE_POINTS;
  }
  return 0;
}

/* The picture, drawn to a checked temporary file beside the destination (tmp); the
 * caller commits it after the CSV. */
static int write_plot(const relate_args *a, const relate_state *st, char *tmp, size_t tmp_len) {
  panel_data pd[RP_REL_COUNT];
  memset(pd, 0, sizeof pd);
  rp_figure_panel panels[RP_REL_COUNT + 1];
  rp_figure_series series[RP_REL_COUNT][2];
  rp_figure_series onetoone[RP_REL_COUNT];
  char titles[RP_REL_COUNT][96], subs[RP_REL_COUNT][96], xlabels[RP_REL_COUNT][64],
      ylabels[RP_REL_COUNT][64];
  memset(panels, 0, sizeof panels);
  size_t np = 0, n11 = 0;
  int rc = 0;
  for (size_t k = 0; k < st->n_fits && rc == 0; k++) {
    const rp_relate_fit *f = &st->fits[k];
    const rp_relate_info *in = rp_relate_info_get(f->id);
    if (collect(st, &a->opt, f, &pd[k]) != 0) {
      rc = rp_cli_fail("relate", RP_ENOMEM, "out of memory for the picture");
      break;
    }
    rp_figure_panel *p = &panels[np++];
    p->kind = RP_FIGURE_SCATTER; /* the first series becomes a density when large */
    p->xy.log_x = p->xy.log_y = 1;
    snprintf(subs[k], sizeof subs[k], "n_fit %zu, held out %zu: bias %.1f %%, FSE %.1f %%",
             f->fit.n_fit, f->n_held, f->skill.bias_pct, f->skill.fse_pct);
    p->subtitle = subs[k];
    if (in->x2 == NULL) {
      snprintf(titles[k], sizeof titles[k], "%s: a = %.4g, b = %.4g", in->name, f->fit.a, f->fit.b);
      series[k][0] = (rp_figure_series){"fit samples", pd[k].x, pd[k].y, pd[k].n, RP_FIGURE_STYLE_MARKERS};
      series[k][1] = (rp_figure_series){"fitted", pd[k].cx, pd[k].cy, pd[k].nc, RP_FIGURE_STYLE_LINE};
      p->xlabel = axis_label(in->x1);
      p->ylabel = axis_label(in->y);
      p->xy.n_series = 2;
    } else {
      snprintf(titles[k], sizeof titles[k], "%s: a = %.4g, b = %.4g, c = %.4g", in->name,
               f->fit.a, f->fit.b, f->fit.c);
      series[k][0] = (rp_figure_series){"held out", pd[k].ex, pd[k].ey, pd[k].ne, RP_FIGURE_STYLE_MARKERS};
      snprintf(xlabels[k], sizeof xlabels[k], "true %s", axis_label(in->y));
      snprintf(ylabels[k], sizeof ylabels[k], "fitted %s", axis_label(in->y));
      p->xlabel = xlabels[k];
      p->ylabel = ylabels[k];
      p->xy.n_series = 1;
      p->xy.one_to_one = 1;
    }
    p->title = titles[k];
    p->xy.series = series[k];
  }
  if (rc == 0) {
    /* 1:1 panel of fitted vs true on the held-out samples: every relation for R if any
     * is selected, else the first relation. */
    const char *yvar = NULL;
    for (size_t k = 0; k < st->n_fits && !yvar; k++)
      if (strcmp(rp_relate_info_get(st->fits[k].id)->y, "R") == 0) yvar = "R";
    if (!yvar) yvar = rp_relate_info_get(st->fits[0].id)->y;
    for (size_t k = 0; k < st->n_fits; k++) {
      const rp_relate_info *in = rp_relate_info_get(st->fits[k].id);
      if (strcmp(in->y, yvar) != 0) continue;
      onetoone[n11++] = (rp_figure_series){in->name, pd[k].ex, pd[k].ey, pd[k].ne, RP_FIGURE_STYLE_MARKERS};
    }
    char title11[64], xl[64], yl[64];
    snprintf(title11, sizeof title11, "held-out samples: fitted vs true %s", yvar);
    snprintf(xl, sizeof xl, "true %s", axis_label(yvar));
    snprintf(yl, sizeof yl, "fitted %s", axis_label(yvar));
    rp_figure_panel *p = &panels[np++];
    p->kind = RP_FIGURE_LINES;
    p->title = title11;
    p->xlabel = xl;
    p->ylabel = yl;
    p->xy.series = onetoone;
    p->xy.n_series = n11;
    p->xy.log_x = p->xy.log_y = 1;
    p->xy.one_to_one = 1;
    /* the figure says what it shows: band, frequency, temperature and where the DSDs came from */
    const rp_drop_config *c = &a->s.cfg;
    const char *b = rp_band_of_frequency(c->freq_ghz);
    char title[200], source[200], subtitle[520];
    if (b)
      snprintf(title, sizeof title, "Rain relations at %s band (%.4g GHz), %.3g °C", b, c->freq_ghz, c->temp_c);
    else
      snprintf(title, sizeof title, "Rain relations at %.4g GHz, %.3g °C", c->freq_ghz, c->temp_c);
    if (a->spectra)
      snprintf(source, sizeof source, "%zu disdrometer spectra from %s", st->n,
               strrchr(a->spectra, '/') ? strrchr(a->spectra, '/') + 1 : a->spectra);
    else
      snprintf(source, sizeof source, "%zu DSDs of climate '%s' (seed %ld)", st->n, st->climate.name,
               a->seed);
    snprintf(subtitle, sizeof subtitle, "%s; shape %s, %s canting SD %.3g°; fits on 3 of 4 samples, "
             "skill on the 4th; validate against local gauges before use", source,
             c->axis_ratio_fixed > 0.0 ? "fixed" : rp_shape_name(c->shape),
             rp_canting_model_name(c->canting_model), c->canting_sd_deg);
    const int ncols = np > 4 ? 3 : 2;
    const int nrows = (int)((np + (size_t)ncols - 1) / (size_t)ncols);
    rp_figure fig = {title, subtitle, panels, np, ncols, 520 * ncols, 440 * nrows + 60};
    rp_error err = {0};
    if (rp_figure_draw_temp(a->plot, &fig, tmp, tmp_len, &err) != RP_OK)
      rc = rp_cli_fail("relate", err.status, "--plot: %s", err.msg);
  }
  for (size_t k = 0; k < RP_REL_COUNT; k++) {
    free(pd[k].x); free(pd[k].y); free(pd[k].cx); free(pd[k].cy); free(pd[k].ex); free(pd[k].ey);
  }
  return rc;
}

/* ---- text and JSON ------------------------------------------------------------------ */

static void threshold_line(const rp_relate_options *o) {
  printf("Thresholds: Zh >= %g dBZ (relations with Zh), KDP >= %g deg/km (with KDP), "
         "ZDR >= %g dB (with ZDR)\n", o->zh_min_dbz, o->kdp_min_deg_km, o->zdr_min_db);
}

static const char *band_text(const relate_args *a, char *buf, size_t n) {
  const char *b = rp_band_of_frequency(a->s.cfg.freq_ghz);
  if (b)
    snprintf(buf, n, "%s band (%.4g GHz)", b, a->s.cfg.freq_ghz);
  else
    snprintf(buf, n, "%.4g GHz", a->s.cfg.freq_ghz);
  return buf;
}

static const char *shape_text(const rp_drop_config *c) {
  return c->axis_ratio_fixed > 0.0 ? "fixed" : rp_shape_name(c->shape);
}

static void print_text(const relate_args *a, const relate_state *st) {
  const rp_drop_config *c = &a->s.cfg;
  char buf[64];
  printf("Rain relations at %s, %.1f C, shape %s, %s canting SD %.1f deg, elevation %.1f deg, "
         "%s, |Kw|^2 %.3f (table: %s)\n", band_text(a, buf, sizeof buf), c->temp_c, shape_text(c),
         rp_canting_model_name(c->canting_model), c->canting_sd_deg, c->elevation_deg,
         rp_method_name(c->method), a->kw2, rp_table_origin_name(st->origin));
  if (a->spectra) {
    const rp_relate_quality_report *r = &st->rep;
    printf("Samples: %zu of %zu spectra rows in %s (removed: %zu empty, %zu with drops beyond "
           "%g mm, %zu with Nt < %g m^-3, %zu with R < %g mm/h)\n", r->n_kept, r->n_rows,
           a->spectra, r->n_empty, r->n_large_drop, a->q.max_diameter_mm, r->n_low_nt,
           a->q.min_nt_m3, r->n_low_rain, a->q.min_rain_rate_mm_h);
  } else {
    printf("Samples: %zu members of climate '%s' (seed %ld), %zu integrated directly, the rest "
           "by the fast path\n", st->n, st->climate.name, a->seed, st->n_direct);
  }
  printf("Fitted on 3 of every 4 samples, skill on the held-out 4th; rain rate with Atlas et al. "
         "(1973) fall speeds\n");
  threshold_line(&a->opt);
  printf("Fit: %s\n\n", a->opt.nonlinear ? "nonlinear least squares on the variable itself (mean)"
                                         : "least squares in log space (median)");
  printf("%-11s %-18s %-34s %-26s %-24s %6s %7s %7s %6s\n", "relation", "form", "a [95% CI]",
         "b [95% CI]", "c [95% CI]", "n_fit", "bias%", "FSE%", "corr");
  for (size_t k = 0; k < st->n_fits; k++) {
    const rp_relate_fit *f = &st->fits[k];
    const rp_relate_info *in = rp_relate_info_get(f->id);
    char ca[64], cb[64], cc[64];
    snprintf(ca, sizeof ca, "%.4g [%.4g, %.4g]", f->fit.a, f->fit.a_ci[0], f->fit.a_ci[1]);
    snprintf(cb, sizeof cb, "%.4f [%.4f, %.4f]", f->fit.b, f->fit.b_ci[0], f->fit.b_ci[1]);
    if (in->x2)
      snprintf(cc, sizeof cc, "%.3f [%.3f, %.3f]", f->fit.c, f->fit.c_ci[0], f->fit.c_ci[1]);
    else
      snprintf(cc, sizeof cc, "-");
    printf("%-11s %-18s %-34s %-26s %-24s %6zu %7.1f %7.1f %6.3f\n", in->name, in->form, ca, cb, cc,
           f->fit.n_fit, f->skill.bias_pct, f->skill.fse_pct, f->skill.corr);
  }
  for (size_t k = 0; k < st->n_fits; k++) {
    const rp_relate_fit *f = &st->fits[k];
    if (f->id == RP_REL_R_ZH)
      printf("\nR(Zh) inverted: Zh = %.4g R^%.4f (for a direct fit of Zh on R see Zh(R))\n",
             f->z_alpha, f->z_beta);
  }
  printf("\nUnits: R mm/h, Zh mm^6 m^-3 (linear), Zdr = 10^(ZDR/10), ZDR dB in Dm(ZDR), KDP "
         "deg/km, AH and ADP dB/km one way, Dm mm.\n");
  printf("Caution: %s\n", RP_RELATE_CAUTION);
}

static json_t *ci_json(const double ci[2]) {
  return json_pack("[o, o]", rp_json_real(ci[0]), rp_json_real(ci[1]));
}

static json_t *fit_json(const rp_relate_fit *f, const rp_relate_options *o) {
  const rp_relate_info *in = rp_relate_info_get(f->id);
  json_t *r = json_object();
  json_object_set_new(r, "name", json_string(in->name));
  json_object_set_new(r, "form", json_string(in->form));
  json_object_set_new(r, "a", rp_json_real(f->fit.a));
  json_object_set_new(r, "b", rp_json_real(f->fit.b));
  if (in->x2) json_object_set_new(r, "c", rp_json_real(f->fit.c));
  json_object_set_new(r, "a_ci95", ci_json(f->fit.a_ci));
  json_object_set_new(r, "b_ci95", ci_json(f->fit.b_ci));
  if (in->x2) json_object_set_new(r, "c_ci95", ci_json(f->fit.c_ci));
  json_object_set_new(r, "n_fit", json_integer((json_int_t)f->fit.n_fit));
  json_object_set_new(r, "n_held_out", json_integer((json_int_t)f->n_held));
  json_object_set_new(r, "n_below_threshold", json_integer((json_int_t)f->n_below));
  json_object_set_new(r, "bias_pct", rp_json_real(f->skill.bias_pct));
  json_object_set_new(r, "rmse", rp_json_real(f->skill.rmse));
  json_object_set_new(r, "fse_pct", rp_json_real(f->skill.fse_pct));
  json_object_set_new(r, "corr", rp_json_real(f->skill.corr));
  json_object_set_new(r, "resid_sd", rp_json_real(f->fit.resid_sd));
  json_object_set_new(r, "fit", json_string(f->fit.nonlinear ? "nonlinear" : "log-space"));
  json_t *u = json_object();
  json_object_set_new(u, in->y, json_string(in->y_units));
  json_object_set_new(u, in->x1, json_string(in->x1_units));
  if (in->x2) json_object_set_new(u, in->x2, json_string(in->x2_units));
  json_object_set_new(r, "units", u);
  json_t *th = json_object();
  const int zh = strstr(in->name, "Zh") != NULL, kdp = strstr(in->name, "KDP") != NULL,
            zdr = strstr(in->name, "ZDR") != NULL;
  if (zh) json_object_set_new(th, "zh_min_dbz", rp_json_real(o->zh_min_dbz));
  if (kdp) json_object_set_new(th, "kdp_min_deg_km", rp_json_real(o->kdp_min_deg_km));
  if (zdr) json_object_set_new(th, "zdr_min_db", rp_json_real(o->zdr_min_db));
  json_object_set_new(r, "thresholds", th);
  if (f->id == RP_REL_R_ZH) {
    json_object_set_new(r, "z_form", json_string("Zh = a R^b"));
    json_object_set_new(r, "z_a", rp_json_real(f->z_alpha));
    json_object_set_new(r, "z_b", rp_json_real(f->z_beta));
    json_object_set_new(r, "z_method", json_string("inverted R(Zh) fit; Zh(R) is the direct fit"));
  }
  return r;
}

static json_t *build_json(const relate_args *a, const relate_state *st) {
  const rp_drop_config *c = &a->s.cfg;
  const char *b = rp_cli_scatter_band(&a->s);
  json_t *o = json_object();
  json_object_set_new(o, "band", b ? json_string(b) : json_null());
  json_object_set_new(o, "frequency_ghz", rp_json_real(c->freq_ghz));
  json_object_set_new(o, "temperature_c", rp_json_real(c->temp_c));
  json_object_set_new(o, "samples", json_integer((json_int_t)st->n));
  json_object_set_new(o, "seed", a->spectra ? json_null() : json_integer((json_int_t)a->seed));
  json_object_set_new(o, "source", json_string(a->spectra ? "spectra" : "ensemble"));
  if (a->spectra) {
    const rp_relate_quality_report *r = &st->rep;
    json_object_set_new(o, "spectra_file", rp_json_text(a->spectra));
    json_object_set_new(o, "quality", json_pack("{s:o, s:o, s:o, s:I, s:I, s:I, s:I, s:I, s:I}",
        "max_diameter_mm", rp_json_real(a->q.max_diameter_mm),
        "min_nt_m3", rp_json_real(a->q.min_nt_m3),
        "min_rain_rate_mm_h", rp_json_real(a->q.min_rain_rate_mm_h),
        "rows", (json_int_t)r->n_rows, "removed_empty", (json_int_t)r->n_empty,
        "removed_large_drop", (json_int_t)r->n_large_drop,
        "removed_low_nt", (json_int_t)r->n_low_nt, "removed_low_rain_rate",
        (json_int_t)r->n_low_rain, "kept", (json_int_t)r->n_kept));
  } else {
    json_object_set_new(o, "climate", json_string(st->climate.name));
    if (a->climate_file) json_object_set_new(o, "climate_file", rp_json_text(a->climate_file));
    json_object_set_new(o, "members_direct", json_integer((json_int_t)st->n_direct));
  }
  json_object_set_new(o, "shape_model", json_string(shape_text(c)));
  json_object_set_new(o, "canting_model", json_string(rp_canting_model_name(c->canting_model)));
  json_object_set_new(o, "canting_sd_deg", rp_json_real(c->canting_sd_deg));
  json_object_set_new(o, "elevation_deg", rp_json_real(c->elevation_deg));
  json_object_set_new(o, "method", json_string(rp_method_name(c->method)));
  json_object_set_new(o, "kw2", rp_json_real(a->kw2));
  json_object_set_new(o, "table", json_string(rp_table_origin_name(st->origin)));
  json_object_set_new(o, "fall_speed_model", json_string(rp_fallspeed_name(RP_RELATE_FALL_MODEL)));
  json_object_set_new(o, "split", json_string("samples with index mod 4 = 3 held out for skill"));
  json_object_set_new(o, "thresholds", json_pack("{s:o, s:o, s:o}",
      "zh_min_dbz", rp_json_real(a->opt.zh_min_dbz),
      "kdp_min_deg_km", rp_json_real(a->opt.kdp_min_deg_km),
      "zdr_min_db", rp_json_real(a->opt.zdr_min_db)));
  json_t *rels = json_array();
  for (size_t k = 0; k < st->n_fits; k++) json_array_append_new(rels, fit_json(&st->fits[k], &a->opt));
  json_object_set_new(o, "relations", rels);
  json_object_set_new(o, "caution", json_string(RP_RELATE_CAUTION));
  return o;
}

/* ---- entry -------------------------------------------------------------------------- */

int rp_cmd_relate(int argc, char **argv) {
  rp_opts o;
  int rc = rp_opts_parse(&relate_cmd, argc, argv, &o);
  if (rc != RP_OPTS_GO_ON) return rc;
  relate_args a;
  memset(&a, 0, sizeof a);
  rp_relate_options_default(&a.opt);
  rp_relate_quality_default(&a.q);
  if ((rc = read_args(&o, &a))) return rc;
  if ((rc = rp_cli_scatter_from_opts(&o, &a.s))) return rc;
  a.s.json = rp_opts_given(&o, "json");
  if (a.s.cfg.method == RP_METHOD_MIE)
    return rp_cli_fail("relate", RP_EINVAL, "--method mie is for single drops; use tmatrix or rayleigh");
  if (a.relations != NULL) {
    rp_error err = {0};
    if (rp_relate_parse_list(a.relations, &a.opt.relations, &err) != RP_OK)
      return rp_cli_fail("relate", err.status, "--relations: %s", err.msg);
  }
  if ((rc = rp_cli_check_outputs("relate", a.csv, a.plot))) return rc;

  /* The picture is drawn and checked in a temporary file first; then the CSV (the data)
   * is written whole and renamed, and the picture renamed last: a failure before leaves
   * both old outputs, a kill between the renames new data beside the old picture, never
   * a picture of samples that were not written. */
  relate_state st;
  memset(&st, 0, sizeof st);
  rc = compute(&a, &st);
  char plot_tmp[4096] = "";
  if (rc == 0 && a.plot != NULL) rc = write_plot(&a, &st, plot_tmp, sizeof plot_tmp);
  if (rc == 0 && a.csv != NULL) {
    rp_error err = {0};
    if (rp_relate_samples_save_csv(a.csv, st.samples, st.n,
                                   st.set ? (const char *const *)st.set->labels : NULL,
                                   &err) != RP_OK)
      rc = rp_cli_fail_err("relate", &err);
  }
  if (plot_tmp[0]) {
    rp_error err = {0};
    if (rc != 0)
      rp_figure_discard(plot_tmp);
    else if (rp_figure_commit(plot_tmp, a.plot, &err) != RP_OK)
      rc = rp_cli_fail("relate", err.status, "--plot: %s", err.msg);
  }
  if (rc == 0) {
    if (a.s.json)
      rc = rp_json_print(build_json(&a, &st));
    else
      print_text(&a, &st);
  }
  state_free(&st);
  return rc;
}
