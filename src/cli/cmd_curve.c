/* cmd_curve.c — `rainprint curve`: one parameter of the rain (D0, Dm, mu, Nw, the
 * Marshall–Palmer rain rate) or of the scattering (temperature, elevation, canting
 * spread) varied over a range, the others held at a base; the radar variables at each
 * value and band as CSV or JSON, and optionally a picture (one panel per variable, one
 * line per band).
 *
 * Method: no numerics here. Each value builds a DSD with the library's parameter
 * substitution (dsd_vary.h: rp_dsd_with_param; formulas in docs/method.md §7) or a
 * scattering configuration, and goes through the radar model (gate_run.h over
 * radar_model.h), whose cache obtains each configuration's table once. Columns, JSON keys
 * and picture labels come from the table of fields (field.h).
 *
 * Invariants: every value is checked (DSD built, configuration checked) before anything
 * is computed, and everything is computed before anything is written; the CSV file and
 * the picture are written whole or not at all (temporary file in the destination
 * folder, then rename; the CSV's temporary file is removed if the picture fails). */
#include <errno.h>
#include <math.h>
#include <stddef.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli/cli.h"
#include "cli/gate_run.h"
#include "cli/progress.h"
#include "rainprint/dsd_vary.h"
#include "rainprint/field.h"
#include "rainprint/figure.h"
#include "rainprint/shape.h"

#define CMD "curve"
#define STEPS_DEFAULT 25
#define STEPS_MAX 1000

/* ---- what can be varied ------------------------------------------------------------ */

typedef enum {
  V_D0, V_DM, V_MU, V_NW, V_RAIN_RATE, V_TEMPERATURE, V_ELEVATION, V_CANTING_SD, N_VARY
} vary_kind;

typedef struct {
  const char *name;   /* --vary NAME */
  const char *column; /* first CSV column, unit in the name */
  const char *unit;   /* for messages and JSON ("" = dimensionless) */
  const char *xlabel; /* picture axis label (PLplot escapes) */
  int dsd_code;       /* RP_OPT_* of the DSD option it replaces, or 0 for scattering */
} vary_info;

static const vary_info VARY[N_VARY] = {
    [V_D0] = {"d0", "d0_mm", "mm", "median volume diameter D#d0#u (mm)", RP_OPT_D0},
    [V_DM] = {"dm", "dm_mm", "mm", "mass-weighted mean diameter D#dm#u (mm)", RP_OPT_DM},
    [V_MU] = {"mu", "mu", "", "shape parameter #gm", RP_OPT_MU},
    [V_NW] = {"nw", "nw_m3_mm", "m^-3 mm^-1", "normalised intercept N#dw#u (m#u-3#d mm#u-1#d)",
              RP_OPT_NW},
    [V_RAIN_RATE] = {"rain-rate", "rain_rate_mm_h", "mm/h",
                     "Marshall–Palmer rain rate R (mm h#u-1#d)", RP_OPT_RAIN_RATE},
    [V_TEMPERATURE] = {"temperature", "temperature_c", "C", "water temperature (°C)", 0},
    [V_ELEVATION] = {"elevation", "elevation_deg", "deg", "beam elevation (°)", 0},
    [V_CANTING_SD] = {"canting-sd", "canting_sd_deg", "deg",
                      "canting angle standard deviation (°)", 0},
};

/* ---- what can be drawn: fields of the table of fields (field.h) --------------------- */

/* --variables names: the radar fields' short names and the DSD's rain rate. */
static const char *const PLOT_NAMES[] = {"zh", "zv",  "zdr", "kdp", "rhohv",    "delta",
                                         "ldr", "ah", "av",  "adp", "rain-rate"};
#define N_PLOTVAR (sizeof PLOT_NAMES / sizeof PLOT_NAMES[0])

static const char *const VARY_NAMES[N_VARY] = {"d0", "dm", "mu", "nw", "rain-rate",
                                                "temperature", "elevation", "canting-sd"};

static const rp_opts_spec curve_opts_table[] = {
    RP_OPTS_ENUM_ROW("vary", "NAME",
                     "what to vary (required). The value replaces the base's; d0, dm and nw "
                     "need a normalised-gamma base, mu a gamma or normalised gamma, rain-rate "
                     "marshall-palmer, the scattering ones any base; a varied DSD parameter "
                     "need not be given with --dsd", VARY_NAMES, NULL),
    RP_OPTS_DOUBLE_ROW("from", "X", "first value, in the parameter's unit (mm, m^-3 mm^-1, "
                       "mm/h, C, deg)", 0, 0, 0, NULL),
    RP_OPTS_DOUBLE_ROW("to", "Y", "last value, greater than --from", 0, 0, 0, NULL),
    RP_OPTS_LONG_ROW("steps", "N", "number of values, ends included", 2, STEPS_MAX,
                     RP_OPTS_RANGED, "25"),
    RP_OPTS_FLAG_ROW("log", "logarithmic spacing (--from > 0), for nw and rain-rate; the "
                     "picture then has a log x axis"),
    RP_OPTS_STRING_ROW("csv", "FILE", "write the CSV to FILE (default: CSV on stdout); columns: "
                       "the varied value with its unit, band, frequency_ghz, the radar "
                       "variables (zh_dbz ... adp_db_km), then the DSD's own moments "
                       "dsd_rain_rate_mm_h, dsd_lwc_g_m3, dsd_dm_mm, dsd_d0_mm, dsd_nw_m3_mm"),
    RP_OPTS_STRING_ROW("plot", "FILE", "picture, format from the extension: .png, .svg or .pdf"),
    RP_OPTS_LIST_ROW("variables", "LIST", "what the picture shows (default zh,zdr,kdp,ah)",
                     PLOT_NAMES),
    RP_OPTS_FLAG_ROW("json", "JSON on stdout instead of the CSV (docs/guide.md)"),
    RP_OPTS_END};

static const rp_opts_command curve_cmd = {
    .cmd = CMD,
    .usage = "curve --vary NAME --from X --to Y [--steps N] [--log]\n"
             "         (--preset NAME | --dsd MODEL ... | --spectrum FILE.csv)\n"
             "         [--band S,C,X | --frequency GHZ] [--csv FILE] [--plot FILE.png]\n"
             "         [--variables LIST] [--json] [scattering options]",
    .about = "Vary one parameter of the rain or of the scattering over a range, hold the rest at\n"
             "a base, and give the radar variables at every value and band (default S,C,X): a\n"
             "CSV (one row per value and band) or JSON, and optionally a picture (one panel per\n"
             "variable, one line per band). A progress bar shows on a terminal.",
    .examples = "  rainprint curve --preset gentle-stratiform --vary d0 --from 0.5 --to 3 \\\n"
                "      --plot zdr_vs_d0.png --variables zdr,kdp,ah --csv zdr_vs_d0.csv\n"
                "  rainprint curve --dsd marshall-palmer --vary rain-rate --from 1 --to 100 --log \\\n"
                "      --band X --json",
    .tables = {curve_opts_table, rp_cli_dsd_opts, rp_cli_bands_opts, rp_cli_scatter_opts},
    .titles = {"What to vary and output", "Base DSD (one of --preset, --dsd, --spectrum)", "Bands",
               "Scattering"},
};

/* ---- options ------------------------------------------------------------------------ */

typedef struct {
  vary_kind vary;
  int log;
  double from, to;
  long steps;
  const char *csv_path, *plot_path;
  rp_field_id vars[N_PLOTVAR];
  int n_vars;
} curve_opts;

/* Bit of a DSD parameter option in rp_cli_dsd.given (as cli_dsd.c). */
static unsigned given_bit(int code) { return 1u << (code - RP_OPT_N0); }

/* ---- the values and the base -------------------------------------------------------- */

static void fill_values(const curve_opts *c, double *x) {
  const size_t n = (size_t)c->steps;
  for (size_t i = 0; i < n; i++) {
    const double t = (double)i / (double)(n - 1);
    x[i] = c->log ? exp(log(c->from) + t * (log(c->to) - log(c->from)))
                  : c->from + t * (c->to - c->from);
  }
  x[0] = c->from; /* the ends exactly as given, free of round-off */
  x[n - 1] = c->to;
}

static int is_normalized(rp_dsd_model m) {
  return m == RP_DSD_NORMALIZED_GAMMA_D0 || m == RP_DSD_NORMALIZED_GAMMA_DM;
}

/* The library's parameter of a DSD variation (V_D0..V_RAIN_RATE in the same order). */
static rp_dsd_param dsd_param(vary_kind v) { return (rp_dsd_param)((int)v - (int)V_D0); }

/* Does the base DSD take the varied parameter? 0 or an exit code after a message. */
static int check_base(vary_kind v, const rp_cli_dsd_built *b) {
  if (VARY[v].dsd_code == 0) return 0;
  rp_error err = {0};
  if (rp_dsd_param_check_base(dsd_param(v), &b->dsd, &err) == RP_OK) return 0;
  return rp_cli_fail(CMD, err.status, "--vary %s: %s ('%s')", VARY[v].name, err.msg, b->label);
}

/* The base DSD with the varied parameter set to x, truncated as the base. */
static rp_status make_dsd(vary_kind v, const rp_dsd *base, double x, rp_dsd *out, rp_error *err) {
  if (VARY[v].dsd_code == 0) {
    *out = *base;
    return RP_OK;
  }
  return rp_dsd_with_param(base, dsd_param(v), x, out, err);
}

/* The field of a scattering configuration that v varies, or NULL for a DSD parameter. */
static double *scatter_field(vary_kind v, rp_drop_config *cfg) {
  switch (v) {
    case V_TEMPERATURE: return &cfg->temp_c;
    case V_ELEVATION: return &cfg->elevation_deg;
    case V_CANTING_SD: return &cfg->canting_sd_deg;
    default: return NULL;
  }
}

/* The scattering configuration of the request with the varied parameter set to x. */
static void set_scatter(vary_kind v, double x, rp_drop_config *cfg) {
  double *f = scatter_field(v, cfg);
  if (f != NULL) *f = x;
}

/* ---- output -------------------------------------------------------------------------- */

/* CSV columns / JSON keys: the radar fields' keys, then these DSD moments prefixed "dsd_". */
static const rp_field_id MOMENT_FIELDS[] = {RP_FIELD_RAIN_RATE, RP_FIELD_LWC, RP_FIELD_DM,
                                            RP_FIELD_D0, RP_FIELD_NW};
#define N_MOMENT_COLUMNS (sizeof MOMENT_FIELDS / sizeof MOMENT_FIELDS[0])

static const char *moment_column(size_t k, char *buf, size_t n) {
  snprintf(buf, n, "dsd_%s", rp_field_get(MOMENT_FIELDS[k])->key);
  return buf;
}

static const char *band_name(const rp_gate_request *req, int b, char *buf, size_t n) {
  if (req->band[b] != NULL) return req->band[b];
  snprintf(buf, n, "%.4g GHz", req->freq_ghz[b]);
  return buf;
}

/* Non-finite numbers are written as empty fields (none are expected: every field of a
 * gate result is finite for a DSD with drops). */
static void csv_number(FILE *f, double x) {
  if (isfinite(x))
    fprintf(f, ",%.10g", x);
  else
    fputc(',', f);
}

static void write_csv(FILE *f, const curve_opts *c, const rp_gate_request *req, const double *x,
                      const rp_gate_run_result *res) {
  char col[48];
  fprintf(f, "%s,band,frequency_ghz", VARY[c->vary].column);
  for (int id = RP_FIELD_FIRST_RADAR; id <= RP_FIELD_LAST_RADAR; id++)
    fprintf(f, ",%s", rp_field_get((rp_field_id)id)->key);
  for (size_t k = 0; k < N_MOMENT_COLUMNS; k++) fprintf(f, ",%s", moment_column(k, col, sizeof col));
  fputc('\n', f);
  char buf[32];
  for (size_t i = 0; i < (size_t)c->steps; i++) {
    for (int b = 0; b < req->n_bands; b++) {
      fprintf(f, "%.10g,%s", x[i], band_name(req, b, buf, sizeof buf));
      csv_number(f, req->freq_ghz[b]);
      for (int id = RP_FIELD_FIRST_RADAR; id <= RP_FIELD_LAST_RADAR; id++)
        csv_number(f, rp_field_value((rp_field_id)id, &res[i].r[b], NULL));
      for (size_t k = 0; k < N_MOMENT_COLUMNS; k++)
        csv_number(f, rp_field_value(MOMENT_FIELDS[k], NULL, &res[i].moments));
      fputc('\n', f);
    }
  }
}

/* A temporary file next to path, opened for writing with the permissions a new file
 * would get. NULL (message printed) when it cannot be created. */
static FILE *open_temp(const char *path, char *tmp, size_t n) {
  const int fd = rp_cli_temp_create(CMD, "csv", path, tmp, n);
  if (fd < 0) return NULL;
  FILE *f = fdopen(fd, "w");
  if (f == NULL) {
    rp_cli_fail(CMD, RP_EIO, "--csv: cannot open '%s': %s", tmp, strerror(errno));
    close(fd);
    unlink(tmp);
  }
  return f;
}

/* Close the temporary file; 0 or an exit code (the file is removed on failure). */
static int close_temp(FILE *f, const char *tmp, const char *path) {
  const int bad = ferror(f) | fflush(f) | fsync(fileno(f));
  const int err_no = errno;
  if (fclose(f) != 0 || bad) {
    unlink(tmp);
    return rp_cli_write_failed(CMD, "--csv", path, err_no);
  }
  return 0;
}

/* The band in JSON: its letter, or null for an explicit --frequency (as in every
 * command's JSON; the CSV writes "9.4 GHz" there instead). */
static json_t *band_json(const rp_gate_request *req, int b) {
  return req->band[b] != NULL ? json_string(req->band[b]) : json_null();
}

static json_t *curve_json(const curve_opts *c, const rp_gate_request *req,
                          const rp_cli_dsd_built *base, const double *x,
                          const rp_gate_run_result *res) {
  json_t *values = json_array(), *bands = json_array(), *rows = json_array();
  for (size_t i = 0; i < (size_t)c->steps; i++) json_array_append_new(values, rp_json_real(x[i]));
  for (int b = 0; b < req->n_bands; b++)
    json_array_append_new(bands, json_pack("{s:o, s:o}", "band", band_json(req, b),
                                           "frequency_ghz", rp_json_real(req->freq_ghz[b])));
  char col[48];
  for (size_t i = 0; i < (size_t)c->steps; i++) {
    for (int b = 0; b < req->n_bands; b++) {
      json_t *r = json_object();
      json_object_set_new(r, VARY[c->vary].column, rp_json_real(x[i]));
      json_object_set_new(r, "band", band_json(req, b));
      json_object_set_new(r, "frequency_ghz", rp_json_real(req->freq_ghz[b]));
      for (int id = RP_FIELD_FIRST_RADAR; id <= RP_FIELD_LAST_RADAR; id++)
        json_object_set_new(r, rp_field_get((rp_field_id)id)->key,
                            rp_json_real(rp_field_value((rp_field_id)id, &res[i].r[b], NULL)));
      for (size_t k = 0; k < N_MOMENT_COLUMNS; k++)
        json_object_set_new(r, moment_column(k, col, sizeof col),
                            rp_json_real(rp_field_value(MOMENT_FIELDS[k], NULL, &res[i].moments)));
      json_object_set_new(r, "table", json_string(rp_table_origin_name(res[i].origin[b])));
      json_array_append_new(rows, r);
    }
  }
  const rp_drop_config *g = &req->cfg;
  json_t *scatter = json_object();
  json_object_set_new(scatter, "temperature_c", rp_json_real(g->temp_c));
  json_object_set_new(scatter, "shape_model",
                      json_string(g->axis_ratio_fixed > 0.0 ? "fixed" : rp_shape_name(g->shape)));
  if (g->axis_ratio_fixed > 0.0)
    json_object_set_new(scatter, "axis_ratio", rp_json_real(g->axis_ratio_fixed));
  json_object_set_new(scatter, "canting_sd_deg", rp_json_real(g->canting_sd_deg));
  json_object_set_new(scatter, "canting_model",
                      json_string(rp_canting_model_name(g->canting_model)));
  json_object_set_new(scatter, "elevation_deg", rp_json_real(g->elevation_deg));
  json_object_set_new(scatter, "method", json_string(rp_method_name(g->method)));
  json_object_set_new(scatter, "kw2", rp_json_real(req->kw2));
  /* The varied one has no single value: see "values". */
  if (VARY[c->vary].dsd_code == 0) json_object_set_new(scatter, VARY[c->vary].column, json_null());
  json_t *dsd = json_object();
  json_object_set_new(dsd, "label", rp_json_text(base->label));
  json_object_set_new(dsd, "model", json_string(rp_dsd_model_name(base->dsd.model)));
  json_object_set_new(dsd, "dmin_mm", rp_json_real(base->dsd.dmin_mm));
  json_object_set_new(dsd, "dmax_mm", rp_json_real(base->dsd.dmax_mm));
  json_object_set_new(dsd, "fall_speed_height_km",
                      req->correct_fall_speed ? rp_json_real(req->height_km) : json_null());
  return json_pack("{s:s, s:s, s:s, s:b, s:o, s:o, s:o, s:o, s:o}", "vary", VARY[c->vary].name,
                   "column", VARY[c->vary].column, "unit", VARY[c->vary].unit, "log", c->log,
                   "base_dsd", dsd, "scattering", scatter, "values", values, "bands", bands,
                   "rows", rows);
}

/* Title of the picture's first panel: what the base is. */
static void base_title(const curve_opts *c, const rp_gate_request *req,
                       const rp_cli_dsd_built *base, char *buf, size_t n) {
  const rp_dsd *d = &base->dsd;
  char dsd_txt[160] = "";
  const vary_kind v = c->vary;
  if (is_normalized(d->model)) {
    const int dm_form = d->model == RP_DSD_NORMALIZED_GAMMA_DM;
    char nw[40] = "", dx[40] = "", mu[40] = "";
    if (v != V_NW) snprintf(nw, sizeof nw, ", N#dw#u %.4g", d->nw_m3_mm);
    if (v != V_D0 && v != V_DM)
      snprintf(dx, sizeof dx, ", D#d%s#u %.3g mm", dm_form ? "m" : "0",
               dm_form ? d->dm_mm : d->d0_mm);
    if (v != V_MU) snprintf(mu, sizeof mu, ", #gm %.3g", d->mu);
    snprintf(dsd_txt, sizeof dsd_txt, "%s%s%s", nw, dx, mu);
  } else if (d->model == RP_DSD_GAMMA && v != V_MU) {
    snprintf(dsd_txt, sizeof dsd_txt, ", #gm %.3g", d->mu);
  } else if (d->model == RP_DSD_MARSHALL_PALMER && v != V_RAIN_RATE) {
    snprintf(dsd_txt, sizeof dsd_txt, ", R %.3g mm h#u-1#d", d->rain_rate_mm_h);
  }
  char temp[32] = "";
  if (v != V_TEMPERATURE) snprintf(temp, sizeof temp, ", %.3g °C", req->cfg.temp_c);
  char inner[192];
  snprintf(inner, sizeof inner, "%s%s", dsd_txt, temp);
  if (inner[0] != '\0')
    snprintf(buf, n, "%s (%s)", base->label, inner + 2); /* without the leading ", " */
  else
    snprintf(buf, n, "%s", base->label);
}

/* The picture, drawn to a checked temporary file beside the destination (tmp); the
 * caller commits it after the CSV (see emit). */
static int write_plot(const curve_opts *c, const rp_gate_request *req,
                      const rp_cli_dsd_built *base, const double *x,
                      const rp_gate_run_result *res, char *tmp, size_t tmp_len) {
  const size_t n = (size_t)c->steps, nb = (size_t)req->n_bands;
  const size_t nv = (size_t)c->n_vars;
  double *y = malloc(nv * nb * n * sizeof *y);
  rp_figure_series *series = malloc(nv * nb * sizeof *series);
  rp_figure_panel *panels = calloc(nv, sizeof *panels);
  char(*labels)[32] = malloc(nb * sizeof *labels);
  if (y == NULL || series == NULL || panels == NULL || labels == NULL) {
    free(y);
    free(series);
    free(panels);
    free(labels);
    return rp_cli_fail(CMD, RP_ENOMEM, "out of memory for the picture");
  }
  char base_txt[352], title[420], subtitle[420], bands[160] = "";
  base_title(c, req, base, base_txt, sizeof base_txt);
  for (size_t b = 0; b < nb; b++) {
    if (req->band[b] != NULL)
      snprintf(labels[b], sizeof labels[b], "%s band", req->band[b]);
    else
      snprintf(labels[b], sizeof labels[b], "%.4g GHz", req->freq_ghz[b]);
    const size_t used = strlen(bands);
    snprintf(bands + used, sizeof bands - used, "%s%s (%.4g GHz)", b ? ", " : "",
             req->band[b] ? req->band[b] : "f", req->freq_ghz[b]);
  }
  const rp_drop_config *g = &req->cfg;
  snprintf(title, sizeof title, "%s against %s", base_txt, VARY[c->vary].name);
  snprintf(subtitle, sizeof subtitle,
           "%s; shape %s, %s canting SD %.3g°, elevation %.3g°, %s, |K#dw#u|#u2#d %.3g; "
           "rainprint curve", bands,
           g->axis_ratio_fixed > 0.0 ? "fixed" : rp_shape_name(g->shape),
           rp_canting_model_name(g->canting_model), g->canting_sd_deg, g->elevation_deg,
           rp_method_name(g->method), req->kw2);
  for (size_t p = 0; p < nv; p++) {
    const rp_field_id pv = c->vars[p];
    const rp_field_desc *fd = rp_field_get(pv);
    const int dsd_field = fd->source == RP_FIELD_OF_MOMENTS;
    /* A DSD quantity (the rain rate) does not depend on the band: one line. */
    const size_t ns = dsd_field ? 1 : nb;
    int all_positive = 1;
    for (size_t b = 0; b < ns; b++) {
      double *yy = y + (p * nb + b) * n;
      for (size_t i = 0; i < n; i++) {
        yy[i] = rp_field_value(pv, &res[i].r[b], &res[i].moments);
        /* the LDR floor stands for "no cross-polar power": missing, not data */
        if (pv == RP_FIELD_LDR && !(yy[i] > RP_LDR_FLOOR_DB)) yy[i] = (double)NAN;
        if (isfinite(yy[i]) && !(yy[i] > 0.0)) all_positive = 0;
      }
      rp_figure_series *sr = &series[p * nb + b];
      sr->label = dsd_field ? "all bands" : labels[b];
      sr->x = x;
      sr->y = yy;
      sr->n = n;
      sr->style = n <= 30 ? RP_FIGURE_STYLE_LINE_MARKERS : RP_FIGURE_STYLE_LINE;
    }
    rp_figure_panel *pan = &panels[p];
    pan->kind = RP_FIGURE_LINES;
    pan->title = fd->long_name;
    pan->xlabel = VARY[c->vary].xlabel;
    pan->ylabel = fd->plot_label;
    pan->xy.series = &series[p * nb];
    pan->xy.n_series = ns;
    pan->xy.log_x = c->log;
    pan->xy.log_y = c->log && fd->extensive && all_positive;
  }
  /* Up to 3 panels side by side; 4 as 2 x 2; more in rows of 3. */
  const int ncols = nv <= 3 ? (int)nv : (nv == 4 ? 2 : 3);
  const int nrows = (int)((nv + (size_t)ncols - 1) / (size_t)ncols);
  rp_figure fig = {title, subtitle, panels, nv, ncols, 560 * ncols, 480 * nrows + 60};
  rp_error err = {0};
  const rp_status st = rp_figure_draw_temp(c->plot_path, &fig, tmp, tmp_len, &err);
  free(y);
  free(series);
  free(panels);
  free(labels);
  if (st != RP_OK) return rp_cli_fail(CMD, st, "--plot: %s", err.msg);
  return 0;
}

/* ---- the command ----------------------------------------------------------------------- */

/* Options into c; everything about the range and the outputs that can be checked before
 * building. 0 or an exit code. */
static int read_opts(const rp_opts *o, curve_opts *c) {
  int rc;
  if ((rc = rp_opts_required(o, "vary"))) return rc;
  c->vary = (vary_kind)rp_opts_enum(o, "vary", 0);
  /* the varied parameter takes the range's values: a fixed value of it is a contradiction */
  if (VARY[c->vary].dsd_code == 0 && rp_opts_given(o, VARY[c->vary].name))
    return rp_cli_fail(CMD, RP_EINVAL, "--vary %s takes its values from --from/--to: drop "
                       "--%s %s", VARY[c->vary].name, VARY[c->vary].name,
                       rp_opts_get(o, VARY[c->vary].name)->text);
  if (!rp_opts_given(o, "from") || !rp_opts_given(o, "to"))
    return rp_cli_fail(CMD, RP_EINVAL, "--vary %s needs --from and --to", VARY[c->vary].name);
  c->from = rp_opts_double(o, "from", 0.0);
  c->to = rp_opts_double(o, "to", 0.0);
  c->steps = rp_opts_long(o, "steps", STEPS_DEFAULT);
  c->log = rp_opts_given(o, "log");
  c->csv_path = rp_opts_string(o, "csv", NULL);
  c->plot_path = rp_opts_string(o, "plot", NULL);
  if (!(c->from < c->to))
    return rp_cli_fail(CMD, RP_EINVAL, "bad range: --from %g must be less than --to %g", c->from,
                       c->to);
  if (c->log && !(c->from > 0.0))
    return rp_cli_fail(CMD, RP_EINVAL, "--log needs --from > 0 (got %g)", c->from);
  if (c->plot_path != NULL && rp_cli_check_plot_path(CMD, c->plot_path)) return RP_EXIT_USAGE;
  if ((rc = rp_opts_requires(o, "variables", "plot"))) return rc;
  const rp_opts_value *v = rp_opts_get(o, "variables");
  static const char *const defaults[] = {"zh", "zdr", "kdp", "ah"};
  const size_t n = v->given ? v->n_items : 4;
  c->n_vars = 0;
  for (size_t i = 0; i < n; i++) {
    const int id = rp_field_find(v->given ? v->items[i] : defaults[i]);
    if (id < 0) return rp_cli_fail(CMD, RP_EINVAL, "--variables: no field '%s'", v->items[i]);
    c->vars[c->n_vars++] = (rp_field_id)id;
  }
  return rp_cli_check_outputs(CMD, c->csv_path, c->plot_path);
}

/* A varied DSD parameter that the model takes but the user did not give: the first
 * value stands in for it, so that the base can be built (it is replaced anyway). */
static void stand_in(const curve_opts *c, rp_cli_dsd *o) {
  const int code = VARY[c->vary].dsd_code;
  if (code == 0 || o->model == NULL || (o->given & given_bit(code))) return;
  if (c->vary == V_D0 || c->vary == V_DM) {
    if (strcmp(o->model, "normalized-gamma") != 0 ||
        (o->given & (given_bit(RP_OPT_D0) | given_bit(RP_OPT_DM))))
      return;
  } else if (c->vary == V_NW) {
    if (strcmp(o->model, "normalized-gamma") != 0) return;
  } else if (c->vary == V_MU) {
    if (strcmp(o->model, "normalized-gamma") != 0 && strcmp(o->model, "gamma") != 0) return;
  } else if (c->vary == V_RAIN_RATE) {
    if (strcmp(o->model, "marshall-palmer") != 0) return;
  }
  switch (code) {
    case RP_OPT_D0: o->d0 = c->from; break;
    case RP_OPT_DM: o->dm = c->from; break;
    case RP_OPT_MU: o->mu = c->from; break;
    case RP_OPT_NW: o->nw = c->from; break;
    default: o->rain_rate = c->from; break;
  }
  o->given |= given_bit(code);
}

static int compute(const curve_opts *c, const rp_gate_request *req, const rp_cli_dsd_built *base,
                   const double *x, rp_gate_run_result *res) {
  const size_t n = (size_t)c->steps;
  rp_dsd *dsds = malloc(n * sizeof *dsds);
  if (dsds == NULL) return rp_cli_fail(CMD, RP_ENOMEM, "out of memory for %zu values", n);
  const vary_info *vi = &VARY[c->vary];
  int rc = 0;
  /* Check every value first: bad input is reported before any work is done. */
  for (size_t i = 0; i < n && rc == 0; i++) {
    rp_error err = {0};
    rp_status s = make_dsd(c->vary, &base->dsd, x[i], &dsds[i], &err);
    if (s == RP_OK && vi->dsd_code == 0) {
      rp_drop_config cfg = req->cfg;
      set_scatter(c->vary, x[i], &cfg);
      s = rp_drop_config_check(&cfg, &err);
    }
    if (s != RP_OK)
      rc = rp_cli_fail(CMD, s, "--vary %s at %g%s%s: %s", vi->name, x[i], vi->unit[0] ? " " : "",
                       vi->unit, err.msg);
  }
  rp_gate_session session = {0};
  rp_cli_progress bar;
  rp_cli_progress_start(&bar, CMD, "values", n);
  for (size_t i = 0; i < n && rc == 0; i++) {
    rp_gate_request r = *req;
    r.dsd_label = base->label;
    set_scatter(c->vary, x[i], &r.cfg);
    char where[96];
    snprintf(where, sizeof where, "%s at %s = %g", CMD, vi->column, x[i]);
    rc = rp_gate_run(where, &session, &r, &dsds[i], &res[i]);
    rp_cli_progress_step(&bar, i + 1);
  }
  rp_cli_progress_end(&bar);
  rp_gate_session_close(&session);
  free(dsds);
  return rc;
}

static int emit(const curve_opts *c, const rp_gate_request *req, const rp_cli_dsd_built *base,
                const double *x, const rp_gate_run_result *res, int json) {
  char tmp[4096];
  FILE *f = NULL;
  int rc = 0;
  if (c->csv_path != NULL) {
    if ((f = open_temp(c->csv_path, tmp, sizeof tmp)) == NULL) return RP_EXIT_USAGE;
    write_csv(f, c, req, x, res);
    if ((rc = close_temp(f, tmp, c->csv_path))) return rc;
  }
  /* Both outputs are complete in temporary files before either is renamed; then the CSV
   * (the data) is renamed first and the picture of it last, so a kill between the two
   * renames leaves new data beside the old picture, never a picture of data that was not
   * written. A failure before the renames leaves both old outputs as they were. */
  char plot_tmp[4096] = "";
  if (c->plot_path != NULL &&
      (rc = write_plot(c, req, base, x, res, plot_tmp, sizeof plot_tmp))) {
    if (c->csv_path != NULL) unlink(tmp);
    return rc;
  }
  if (c->csv_path != NULL && (rc = rp_cli_temp_commit(CMD, "csv", tmp, c->csv_path))) {
    if (plot_tmp[0]) rp_figure_discard(plot_tmp);
    return rc;
  }
  if (plot_tmp[0]) {
    rp_error err = {0};
    if (rp_figure_commit(plot_tmp, c->plot_path, &err) != RP_OK)
      return rp_cli_fail(CMD, err.status, "--plot: %s", err.msg);
  }
  if (json) return rp_json_print(curve_json(c, req, base, x, res));
  if (c->csv_path == NULL) {
    write_csv(stdout, c, req, x, res); /* a failed write is caught in main() */
    return 0;
  }
  char buf[32];
  printf("%s from %g to %g (%ld values%s) at", VARY[c->vary].column, c->from, c->to, c->steps,
         c->log ? ", log spacing" : "");
  for (int b = 0; b < req->n_bands; b++)
    printf("%s %s", b ? "," : "", band_name(req, b, buf, sizeof buf));
  printf(": %ld rows written to %s", c->steps * req->n_bands, c->csv_path);
  if (c->plot_path != NULL) printf(", picture %s", c->plot_path);
  printf("\n");
  return 0;
}

int rp_cmd_curve(int argc, char **argv) {
  rp_opts o;
  int rc = rp_opts_parse(&curve_cmd, argc, argv, &o);
  if (rc != RP_OPTS_GO_ON) return rc;
  curve_opts c;
  memset(&c, 0, sizeof c);
  if ((rc = read_opts(&o, &c))) return rc;
  rp_cli_dsd d;
  if ((rc = rp_cli_dsd_from_opts(&o, &d))) return rc;
  rp_cli_scatter s;
  rp_cli_scatter_init(&s);
  rp_gate_request req;
  memset(&req, 0, sizeof req);
  req.n_bands = rp_cli_bands_from_opts(&o, "S,C,X", req.freq_ghz, req.band, RP_GATE_MAX_BANDS);
  if (req.n_bands < 0) return -req.n_bands;
  /* The varied scattering parameter replaces the base's, so the base is checked with
   * the default value in its place; every varied value is checked in compute(). */
  rp_drop_config def;
  rp_drop_config_default(&def);
  if ((rc = rp_cli_scatter_apply(&o, &s))) {
    /* a bad value of the varied parameter's own option is reported as it is */
    return rc;
  }
  double *field = scatter_field(c.vary, &s.cfg);
  if (field != NULL) *field = *scatter_field(c.vary, &def);
  if ((rc = rp_cli_scatter_finish(CMD, &s))) return rc;
  if (s.cfg.method == RP_METHOD_MIE)
    return rp_cli_fail(CMD, RP_EINVAL, "--method mie is for single drops; use tmatrix or rayleigh");
  req.cfg = s.cfg;
  req.kw2 = d.kw2;
  req.correct_fall_speed = !isnan(d.height_km);
  req.height_km = d.height_km;

  stand_in(&c, &d);
  rp_cli_dsd_built base;
  rc = rp_cli_dsd_build(CMD, &d, &base);
  if (rc == 0) rc = check_base(c.vary, &base);
  const size_t n = (size_t)c.steps;
  double *x = NULL;
  rp_gate_run_result *res = NULL;
  if (rc == 0) {
    x = malloc(n * sizeof *x);
    res = malloc(n * sizeof *res);
    if (x == NULL || res == NULL)
      rc = rp_cli_fail(CMD, RP_ENOMEM, "out of memory for %zu values", n);
  }
  if (rc == 0) {
    fill_values(&c, x);
    rc = compute(&c, &req, &base, x, res);
  }
  if (rc == 0) rc = emit(&c, &req, &base, x, res, rp_opts_given(&o, "json"));
  free(x);
  free(res);
  rp_cli_dsd_release(&base);
  return rc;
}
