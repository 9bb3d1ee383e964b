/* cmd_relate.c — `rainprint relate`: fit rain relations for one band from a seeded
 * ensemble of DSDs or from measured spectra, with skill on held-out samples. Parsing,
 * the table lookup and output only; the computing is in relate.h. */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli/cli.h"
#include "rainprint/plot.h"
#include "rainprint/relate.h"
#include "rainprint/shape.h"
#include "rainprint/table.h"
#include "rainprint/climate_file.h"
#include "rainprint/samples_csv.h"
#include "rainprint/spectrum.h"
#include "rainprint/table_file.h"

static const char relate_help[] =
    "Usage: rainprint relate [--ensemble SIZE --climate NAME --seed N | --spectra FILE.csv]\n"
    "                        [--band B | --frequency GHZ] [options]\n"
    "\n"
    "Fit rain relations for one radar band: R(Zh) (also as Zh = a R^b), Zh(R), R(KDP),\n"
    "R(Zh,ZDR), R(KDP,ZDR), AH(KDP), ADP(KDP), AH(Zh), Dm(ZDR). Each DSD gives R, Zh, ZDR,\n"
    "KDP, AH, ADP, Dm, D0, Nw, LWC; the power laws are fitted in log space on 3 of every 4\n"
    "samples (95 %% intervals) and scored on the held-out 4th (bias, RMSE, FSE, corr).\n"
    "Zh is linear (mm^6 m^-3), Zdr = 10^(ZDR/10) in the two-predictor relations, ZDR in dB\n"
    "in Dm(ZDR), KDP in deg/km, AH and ADP in dB/km (one way), R in mm/h.\n"
    "\n"
    "DSDs (one source):\n"
    "  --ensemble SIZE        members drawn from a climate (default %d; at least %d)\n"
    "  --climate NAME         built-in climate: maritime, continental, mixed (default)\n"
    "  --climate-file F.yaml  a climate of your own (examples: dsd-presets/climates/)\n"
    "  --seed N               seed of the draw (default 1; stored in the output)\n"
    "  --spectra FILE.csv     measured spectra instead, one DSD per row (spectrum CSV format)\n"
    "Quality filters for --spectra (removed rows are counted and reported):\n"
    "  --max-diameter MM      largest upper bin edge with drops (default %g; at most the\n"
    "                         table's 8 mm)\n"
    "  --min-nt M3            minimum total concentration Nt, m^-3 (default %g)\n"
    "  --min-rain-rate MM_H   minimum rain rate (default %g)\n"
    "Relations and thresholds:\n"
    "  --relations LIST       e.g. \"R(KDP),R(Zh,ZDR),AH(KDP)\" (case-sensitive; default all)\n"
    "  --min-zh DBZ           relations with Zh use samples with Zh >= DBZ (default %g)\n"
    "  --min-kdp DEG_KM       relations with KDP: KDP >= DEG_KM (default %g)\n"
    "  --min-zdr DB           relations with ZDR: ZDR >= DB (default %g)\n"
    "  --nonlinear            refine each fit by nonlinear least squares on the variable\n"
    "                         itself (fits the mean; default: log-space fit, the median)\n"
    "  --kw2 X                |K_w|^2 used to form Z (default 0.93)\n"
    "Outputs:\n"
    "  --json                 machine-readable output\n"
    "  --csv FILE             every sample with its DSD moments and radar variables\n"
    "  --plot FILE.png        each relation over its samples, and fitted vs true (1:1)\n"
    "                         (.svg and .pdf also work)\n"
    "Scattering (as for `rainprint drop`; one band, default C):\n"
    "  --band S|C|X|Ku|Ka --frequency GHZ --temperature C --shape MODEL --axis-ratio R\n"
    "  --canting-sd DEG --canting-model planar|3d --canting-approx --elevation DEG\n"
    "  --method tmatrix|rayleigh --help\n"
    "\n"
    "Caution: " RP_RELATE_CAUTION "\n"
    "\n"
    "Examples:\n"
    "  rainprint relate --band X --ensemble 20000 --climate maritime --seed 7\n"
    "  rainprint relate --band S --relations \"R(KDP),AH(KDP)\" --json\n"
    "  # in the source folder, with the tests' invented disdrometer record:\n"
    "  rainprint relate --band C --spectra tests/data/relate/spectra_brackenford.csv \\\n"
    "      --csv samples.csv --plot fits.png\n";

enum {
  OPT_ENSEMBLE = 1200, OPT_CLIMATE, OPT_CLIMATE_FILE, OPT_SEED, OPT_SPECTRA, OPT_RELATIONS,
  OPT_CSV, OPT_PLOT, OPT_NONLINEAR, OPT_MIN_ZH, OPT_MIN_KDP, OPT_MIN_ZDR, OPT_MIN_NT,
  OPT_MIN_RAIN, OPT_MAX_D, OPT_KW2
};

#define ENSEMBLE_MAX 2000000L
#define PLOT_MAX_POINTS 1500

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
  rp_table *table;
  rp_table_origin origin;
  rp_gate_plan *plan;
  rp_gate_fast *fast;
  rp_ensemble_member *members;
  rp_spectrum_set *set;
  rp_dsd *rows;
  rp_relate_sample *samples;
  size_t n, n_direct;
  rp_relate_quality_report rep;
  rp_climate climate;
  rp_relate_fit fits[RP_REL_COUNT];
  size_t n_fits;
} relate_state;

static int parse_nonneg(const char *opt, const char *arg, double *out) {
  if (rp_cli_parse_double("relate", opt, arg, out)) return -RP_EXIT_USAGE;
  if (*out < 0.0) {
    rp_cli_fail("relate", RP_EINVAL, "--%s %g must be >= 0", opt, *out);
    return -RP_EXIT_USAGE;
  }
  return 1;
}

/* 1 handled, 0 not ours, < 0 exit code (negated). */
static int relate_option(relate_args *a, int code, const char *arg) {
  switch (code) {
    case OPT_ENSEMBLE:
      if (rp_cli_parse_long("relate", "ensemble", arg, &a->ensemble)) return -RP_EXIT_USAGE;
      if (a->ensemble < 1 || a->ensemble > ENSEMBLE_MAX) {
        rp_cli_fail("relate", RP_EINVAL, "--ensemble %ld outside [1, %ld]", a->ensemble,
                    ENSEMBLE_MAX);
        return -RP_EXIT_USAGE;
      }
      a->have_ensemble = 1;
      return 1;
    case OPT_SEED:
      if (rp_cli_parse_long("relate", "seed", arg, &a->seed)) return -RP_EXIT_USAGE;
      if (a->seed < 0) {
        rp_cli_fail("relate", RP_EINVAL, "--seed %ld must be >= 0", a->seed);
        return -RP_EXIT_USAGE;
      }
      a->have_seed = 1;
      return 1;
    case OPT_CLIMATE: a->climate = arg; return 1;
    case OPT_CLIMATE_FILE: a->climate_file = arg; return 1;
    case OPT_SPECTRA: a->spectra = arg; return 1;
    case OPT_RELATIONS: a->relations = arg; return 1;
    case OPT_CSV: a->csv = arg; return 1;
    case OPT_PLOT: a->plot = arg; return 1;
    case OPT_NONLINEAR: a->opt.nonlinear = 1; return 1;
    case OPT_MIN_ZH:
      return rp_cli_parse_double("relate", "min-zh", arg, &a->opt.zh_min_dbz) ? -RP_EXIT_USAGE : 1;
    case OPT_MIN_KDP:
      return parse_nonneg("min-kdp", arg, &a->opt.kdp_min_deg_km);
    case OPT_MIN_ZDR:
      return rp_cli_parse_double("relate", "min-zdr", arg, &a->opt.zdr_min_db) ? -RP_EXIT_USAGE : 1;
    case OPT_MIN_NT: a->have_quality = 1; return parse_nonneg("min-nt", arg, &a->q.min_nt_m3);
    case OPT_MIN_RAIN:
      a->have_quality = 1;
      return parse_nonneg("min-rain-rate", arg, &a->q.min_rain_rate_mm_h);
    case OPT_MAX_D:
      a->have_quality = 1;
      if (rp_cli_parse_double("relate", "max-diameter", arg, &a->q.max_diameter_mm))
        return -RP_EXIT_USAGE;
      if (!(a->q.max_diameter_mm > 0.0)) {
        rp_cli_fail("relate", RP_EINVAL, "--max-diameter %g must be > 0", a->q.max_diameter_mm);
        return -RP_EXIT_USAGE;
      }
      return 1;
    case OPT_KW2:
      if (rp_cli_parse_double("relate", "kw2", arg, &a->kw2)) return -RP_EXIT_USAGE;
      if (!(a->kw2 > 0.0 && a->kw2 <= 1.0)) {
        rp_cli_fail("relate", RP_EDOM, "--kw2 %g outside (0, 1]", a->kw2);
        return -RP_EXIT_USAGE;
      }
      return 1;
    default: return 0;
  }
}

static int check_sources(const relate_args *a) {
  if (a->spectra != NULL) {
    if (a->have_ensemble || a->climate || a->climate_file || a->have_seed)
      return rp_cli_fail("relate", RP_EINVAL,
                         "--spectra cannot be combined with --ensemble, --climate, "
                         "--climate-file or --seed");
  } else if (a->have_quality) {
    return rp_cli_fail("relate", RP_EINVAL,
                       "--min-nt, --min-rain-rate and --max-diameter filter --spectra rows; "
                       "give --spectra FILE.csv");
  }
  if (a->climate && a->climate_file)
    return rp_cli_fail("relate", RP_EINVAL, "give either --climate or --climate-file, not both");
  return 0;
}

static void state_free(relate_state *st) {
  rp_gate_fast_free(st->fast);
  rp_gate_plan_free(st->plan);
  rp_table_free(st->table);
  rp_spectrum_free(st->set);
  free(st->rows);
  free(st->members);
  free(st->samples);
}

/* ---- computing (library calls) ------------------------------------------------------ */

static int compute(const relate_args *a, relate_state *st) {
  rp_error err = {0};
  if (rp_table_obtain(&a->s.cfg, rp_cli_tables_dir(), rp_cli_cache_dir(), &st->table, &st->origin,
                      &err) != RP_OK)
    return rp_cli_fail_err("relate", &err);
  if (rp_gate_plan_alloc(st->table, RP_DSD_DMIN_DEFAULT_MM, RP_DSD_DMAX_DEFAULT_MM, a->kw2,
                         &st->plan, &err) != RP_OK)
    return rp_cli_fail_err("relate", &err);
  rp_status s;
  if (a->spectra != NULL) {
    if (rp_spectrum_load(a->spectra, &st->set, &err) != RP_OK) return rp_cli_fail_err("relate", &err);
    st->samples = calloc(st->set->n_rows ? st->set->n_rows : 1, sizeof *st->samples);
    st->rows = calloc(st->set->n_rows ? st->set->n_rows : 1, sizeof *st->rows);
    if (st->samples == NULL || st->rows == NULL)
      return rp_cli_fail("relate", RP_ENOMEM, "out of memory");
    s = rp_spectrum_rows_dsd(st->set, st->rows, &err);
    if (s == RP_OK)
      s = rp_relate_spectra_eval(st->plan, st->rows, st->set->n_rows, &a->q, st->samples,
                                 &st->rep, &err);
    if (s != RP_OK) {
      rp_error_prefix(&err, "%s: ", a->spectra);
      return rp_cli_fail_err("relate", &err);
    }
    st->n = st->rep.n_kept;
  } else {
    if (a->climate_file != NULL)
      s = rp_climate_load_yaml(a->climate_file, &st->climate, &err);
    else
      s = rp_climate_from_name(a->climate ? a->climate : RP_CLIMATE_DEFAULT, &st->climate, &err);
    if (s != RP_OK) return rp_cli_fail_err("relate", &err);
    st->n = (size_t)a->ensemble;
    st->members = calloc(st->n, sizeof *st->members);
    st->samples = calloc(st->n, sizeof *st->samples);
    if (st->members == NULL || st->samples == NULL)
      return rp_cli_fail("relate", RP_ENOMEM, "out of memory for %zu members", st->n);
    if (rp_ensemble_draw(&st->climate, st->n, (unsigned long)a->seed, st->members, &err) != RP_OK)
      return rp_cli_fail_err("relate", &err);
    if (rp_gate_fast_alloc(st->plan, &st->fast, &err) != RP_OK) return rp_cli_fail_err("relate", &err);
    if (rp_relate_ensemble_eval(st->plan, st->fast, st->members, st->n, st->samples, &st->n_direct,
                                &err) != RP_OK)
      return rp_cli_fail_err("relate", &err);
  }
  if (rp_relate_fit_eval(st->samples, st->n, &a->opt, st->fits, &st->n_fits, &err) != RP_OK) {
    if (strstr(err.msg, "too few samples") != NULL)
      return rp_cli_fail("relate", err.status, "%s (lower --min-zh, --min-kdp or --min-zdr, or "
                         "give more samples)", err.msg);
    return rp_cli_fail_err("relate", &err);
  }
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

static int collect(const relate_state *st, const rp_relate_options *o, const rp_relate_fit *f,
                   panel_data *pd) {
  size_t n_pass = 0;
  for (size_t i = 0; i < st->n; i++) {
    double x1, x2, y;
    n_pass += (size_t)rp_relate_sample_values(f->id, &st->samples[i], o, &x1, &x2, &y);
  }
  const size_t stride = n_pass > PLOT_MAX_POINTS ? (n_pass + PLOT_MAX_POINTS - 1) / PLOT_MAX_POINTS : 1;
  const size_t cap = n_pass / stride + 2;
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
    if (k++ % stride != 0) continue;
    if (rp_fit_is_held_out(st->samples[i].index)) {
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

static int write_plot(const relate_args *a, const relate_state *st) {
  panel_data pd[RP_REL_COUNT];
  memset(pd, 0, sizeof pd);
  rp_plot_panel panels[RP_REL_COUNT + 1];
  rp_plot_series series[RP_REL_COUNT][2];
  rp_plot_series onetoone[RP_REL_COUNT];
  char titles[RP_REL_COUNT][96], xlabels[RP_REL_COUNT][64], ylabels[RP_REL_COUNT][64];
  size_t np = 0, n11 = 0;
  int rc = 0;
  for (size_t k = 0; k < st->n_fits && rc == 0; k++) {
    const rp_relate_fit *f = &st->fits[k];
    const rp_relate_info *in = rp_relate_info_get(f->id);
    if (collect(st, &a->opt, f, &pd[k]) != 0) {
      rc = rp_cli_fail("relate", RP_ENOMEM, "out of memory for the picture");
      break;
    }
    rp_plot_panel *p = &panels[np++];
    memset(p, 0, sizeof *p);
    p->log_x = p->log_y = 1;
    if (in->x2 == NULL) {
      snprintf(titles[k], sizeof titles[k], "%s: a = %.4g, b = %.4g", in->name, f->fit.a, f->fit.b);
      series[k][0] = (rp_plot_series){"fit samples", pd[k].x, pd[k].y, pd[k].n, RP_PLOT_MARKERS};
      series[k][1] = (rp_plot_series){"fitted", pd[k].cx, pd[k].cy, pd[k].nc, RP_PLOT_LINE};
      p->xlabel = axis_label(in->x1);
      p->ylabel = axis_label(in->y);
      p->n_series = 2;
    } else {
      snprintf(titles[k], sizeof titles[k], "%s: a = %.4g, b = %.4g, c = %.4g", in->name,
               f->fit.a, f->fit.b, f->fit.c);
      series[k][0] = (rp_plot_series){"held out", pd[k].ex, pd[k].ey, pd[k].ne, RP_PLOT_MARKERS};
      snprintf(xlabels[k], sizeof xlabels[k], "true %s", axis_label(in->y));
      snprintf(ylabels[k], sizeof ylabels[k], "fitted %s", axis_label(in->y));
      p->xlabel = xlabels[k];
      p->ylabel = ylabels[k];
      p->n_series = 1;
      p->equal_axes_with_diagonal = 1;
    }
    p->title = titles[k];
    p->series = series[k];
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
      onetoone[n11++] = (rp_plot_series){in->name, pd[k].ex, pd[k].ey, pd[k].ne, RP_PLOT_MARKERS};
    }
    char title11[64], xl[64], yl[64];
    snprintf(title11, sizeof title11, "held-out samples: fitted vs true %s", yvar);
    snprintf(xl, sizeof xl, "true %s", axis_label(yvar));
    snprintf(yl, sizeof yl, "fitted %s", axis_label(yvar));
    panels[np++] = (rp_plot_panel){title11, xl, yl, onetoone, n11, 1, 1, 1};
    const int ncols = np > 4 ? 3 : 2;
    const int nrows = (int)((np + (size_t)ncols - 1) / (size_t)ncols);
    rp_error err = {0};
    if (rp_plot_panels(a->plot, panels, np, ncols, 520 * ncols, 440 * nrows, &err) != RP_OK)
      rc = rp_cli_fail_err("relate", &err);
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
  static const struct option longopts[] = {
      RP_CLI_SCATTER_LONGOPTS,
      {"ensemble", required_argument, NULL, OPT_ENSEMBLE},
      {"climate", required_argument, NULL, OPT_CLIMATE},
      {"climate-file", required_argument, NULL, OPT_CLIMATE_FILE},
      {"seed", required_argument, NULL, OPT_SEED},
      {"spectra", required_argument, NULL, OPT_SPECTRA},
      {"relations", required_argument, NULL, OPT_RELATIONS},
      {"csv", required_argument, NULL, OPT_CSV},
      {"plot", required_argument, NULL, OPT_PLOT},
      {"nonlinear", no_argument, NULL, OPT_NONLINEAR},
      {"min-zh", required_argument, NULL, OPT_MIN_ZH},
      {"min-kdp", required_argument, NULL, OPT_MIN_KDP},
      {"min-zdr", required_argument, NULL, OPT_MIN_ZDR},
      {"min-nt", required_argument, NULL, OPT_MIN_NT},
      {"min-rain-rate", required_argument, NULL, OPT_MIN_RAIN},
      {"max-diameter", required_argument, NULL, OPT_MAX_D},
      {"kw2", required_argument, NULL, OPT_KW2},
      {0, 0, 0, 0}};
  relate_args a;
  memset(&a, 0, sizeof a);
  rp_cli_scatter_init(&a.s);
  a.ensemble = RP_ENSEMBLE_SIZE_DEFAULT;
  a.seed = 1;
  a.kw2 = RP_KW2_DEFAULT;
  rp_relate_options_default(&a.opt);
  rp_relate_quality_default(&a.q);
  int code;
  optind = 1;
  opterr = 0;
  while ((code = getopt_long(argc, argv, "", longopts, NULL)) != -1) {
    if (code == '?' || code == ':')
      return rp_cli_fail("relate", RP_EINVAL, "unknown or incomplete option '%s' (see --help)",
                         argv[optind - 1]);
    int h = relate_option(&a, code, optarg);
    if (h == 0) h = rp_cli_scatter_option("relate", &a.s, code, optarg);
    if (h < 0) return -h;
  }
  if (a.s.help) {
    printf(relate_help, RP_ENSEMBLE_SIZE_DEFAULT, RP_RELATE_MIN_MEMBERS, RP_RELATE_DMAX_DEFAULT_MM,
           RP_RELATE_NT_MIN_DEFAULT, RP_RELATE_RAIN_MIN_DEFAULT, RP_RELATE_ZH_MIN_DBZ_DEFAULT,
           RP_RELATE_KDP_MIN_DEFAULT, RP_RELATE_ZDR_MIN_DB_DEFAULT);
    return RP_EXIT_OK;
  }
  if (optind < argc) return rp_cli_fail("relate", RP_EINVAL, "unexpected argument '%s'", argv[optind]);
  int rc = check_sources(&a);
  if (rc) return rc;
  rc = rp_cli_scatter_finish("relate", &a.s);
  if (rc) return rc;
  if (a.s.cfg.method == RP_METHOD_MIE)
    return rp_cli_fail("relate", RP_EINVAL, "--method mie is for single drops; use tmatrix or rayleigh");
  if (a.relations != NULL) {
    rp_error err = {0};
    if (rp_relate_parse_list(a.relations, &a.opt.relations, &err) != RP_OK)
      return rp_cli_fail("relate", err.status, "--relations: %s", err.msg);
  }
  if (a.plot != NULL && rp_cli_check_plot_path("relate", a.plot)) return RP_EXIT_USAGE;
  if (a.csv != NULL && a.csv[0] == '\0')
    return rp_cli_fail("relate", RP_EINVAL, "--csv: empty file name");

  /* The CSV and the picture are written whole or not at all, together: the CSV goes to
   * a temporary file made before any work (a missing folder is reported at once) and is
   * renamed into place only after the picture has been written. */
  char csv_tmp[4096] = "";
  if (a.csv != NULL) {
    const int fd = rp_cli_temp_create("relate", "csv", a.csv, csv_tmp, sizeof csv_tmp);
    if (fd < 0) return RP_EXIT_USAGE;
    close(fd);
  }
  relate_state st;
  memset(&st, 0, sizeof st);
  rc = compute(&a, &st);
  if (rc == 0 && a.csv != NULL) {
    rp_error err = {0};
    if (rp_relate_samples_save_csv(csv_tmp, st.samples, st.n,
                                   st.set ? (const char *const *)st.set->labels : NULL,
                                   &err) != RP_OK)
      rc = rp_cli_fail_err("relate", &err);
  }
  if (rc == 0 && a.plot != NULL) rc = write_plot(&a, &st);
  if (a.csv != NULL) {
    if (rc == 0)
      rc = rp_cli_temp_commit("relate", "csv", csv_tmp, a.csv);
    else
      unlink(csv_tmp);
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
