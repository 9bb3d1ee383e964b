/* cmd_curve.c — `rainprint curve`: one parameter of the rain (D0, Dm, mu, Nw, the
 * Marshall–Palmer rain rate) or of the scattering (temperature, elevation, canting
 * spread) varied over a range, the others held at a base; the radar variables at each
 * value and band as CSV or JSON, and optionally a picture (one panel per variable, one
 * line per band).
 *
 * Method: no numerics here. Each value builds a DSD with the library constructors
 * (rp_dsd_normalized_gamma_d0/_dm, rp_dsd_gamma, rp_dsd_marshall_palmer; formulas in
 * docs/method.md §7) or a scattering configuration, and goes through
 * rp_gate_run (gate integrator, docs/method.md §8), which keeps the tables of
 * the process so each configuration's table is obtained once.
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
#include "rainprint/plot.h"
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

/* ---- what can be drawn ------------------------------------------------------------- */

typedef enum {
  P_ZH, P_ZV, P_ZDR, P_KDP, P_RHOHV, P_DELTA, P_LDR, P_AH, P_ADP, P_RAIN_RATE, N_PLOTVAR
} plot_var;

typedef struct {
  const char *name, *ylabel, *title;
  size_t offset;  /* into rp_gate_result (unused for rain-rate) */
  int extensive;  /* linear in N(D): log y axis with --log when all values are > 0 */
} plotvar_info;

static const plotvar_info PVAR[N_PLOTVAR] = {
    [P_ZH] = {"zh", "Z#dH#u (dBZ)", "horizontal reflectivity", offsetof(rp_gate_result, zh_dbz), 0},
    [P_ZV] = {"zv", "Z#dV#u (dBZ)", "vertical reflectivity", offsetof(rp_gate_result, zv_dbz), 0},
    [P_ZDR] = {"zdr", "Z#dDR#u (dB)", "differential reflectivity",
               offsetof(rp_gate_result, zdr_db), 0},
    [P_KDP] = {"kdp", "K#dDP#u (° km#u-1#d)", "specific differential phase",
               offsetof(rp_gate_result, kdp_deg_km), 1},
    [P_RHOHV] = {"rhohv", "#gr#dhv#u", "co-polar correlation coefficient",
                 offsetof(rp_gate_result, rhohv), 0},
    [P_DELTA] = {"delta", "#gd#dhv#u (°)", "backscatter differential phase",
                 offsetof(rp_gate_result, delta_hv_deg), 0},
    [P_LDR] = {"ldr", "LDR (dB)", "linear depolarisation ratio",
               offsetof(rp_gate_result, ldr_db), 0},
    [P_AH] = {"ah", "A#dH#u (dB km#u-1#d)", "specific attenuation (one way)",
              offsetof(rp_gate_result, ah_db_km), 1},
    [P_ADP] = {"adp", "A#dDP#u (dB km#u-1#d)", "specific differential attenuation (one way)",
               offsetof(rp_gate_result, adp_db_km), 1},
    [P_RAIN_RATE] = {"rain-rate", "R (mm h#u-1#d)", "rain rate of the DSD", 0, 1},
};

static const char curve_help[] =
    "Usage: rainprint curve --vary NAME --from X --to Y [--steps N] [--log]\n"
    "                       (--preset NAME | --dsd MODEL ... | --spectrum FILE.csv)\n"
    "                       [--band S,C,X | --frequency GHZ] [--csv FILE] [--plot FILE.png]\n"
    "                       [--variables LIST] [--json] [scattering options]\n"
    "\n"
    "Vary one parameter of the rain or of the scattering over a range, hold the rest at\n"
    "a base, and give the radar variables at every value and band: a CSV (one row per\n"
    "value and band) or JSON, and optionally a picture (one panel per variable, one line\n"
    "per band).\n"
    "\n"
    "What to vary:\n"
    "  --vary NAME            d0, dm, mu, nw (base: a normalised gamma; mu also works\n"
    "                         for --dsd gamma), rain-rate (base: marshall-palmer),\n"
    "                         temperature, elevation, canting-sd (any base)\n"
    "                         The value replaces the base's (a preset's too); a DSD\n"
    "                         parameter that is varied need not be given with --dsd.\n"
    "  --from X --to Y        the range, X < Y, in the parameter's unit (mm, m^-3 mm^-1,\n"
    "                         mm/h, C, deg)\n"
    "  --steps N              number of values, ends included (default 25; 2..1000)\n"
    "  --log                  logarithmic spacing (X > 0), useful for nw and rain-rate;\n"
    "                         the picture then has a log x axis\n"
    "\n"
    "Output:\n"
    "  --csv FILE             write the CSV to FILE (default: CSV on stdout). Columns:\n"
    "                         <varied>_<unit>, band, frequency_ghz, zh_dbz, zv_dbz,\n"
    "                         zdr_db, kdp_deg_km, rhohv, delta_hv_deg, ldr_db, ah_db_km,\n"
    "                         av_db_km, adp_db_km, then the DSD's own moments\n"
    "                         dsd_rain_rate_mm_h, dsd_lwc_g_m3, dsd_dm_mm, dsd_d0_mm,\n"
    "                         dsd_nw_m3_mm\n"
    "  --plot FILE            picture, format from the extension: .png, .svg or .pdf\n"
    "  --variables LIST       what the picture shows (default zh,zdr,kdp,ah): zh, zv, zdr,\n"
    "                         kdp, rhohv, delta, ldr, ah, adp, rain-rate\n"
    "  --json                 JSON on stdout instead of the CSV (docs/guide.md)\n"
    "\n"
    "%s"
    "Scattering options: as for `rainprint gate` (--band takes a list, default S,C,X):\n"
    "  --band S,C,X --frequency GHZ --temperature C --shape MODEL --axis-ratio R\n"
    "  --canting-sd DEG --canting-model planar|3d --canting-approx --elevation DEG\n"
    "  --method tmatrix|rayleigh --help\n"
    "\n"
    "Examples:\n"
    "  rainprint curve --preset gentle-stratiform --vary d0 --from 0.5 --to 3 \\\n"
    "      --plot zdr_vs_d0.png --variables zdr,kdp,ah --csv zdr_vs_d0.csv\n"
    "  rainprint curve --dsd marshall-palmer --vary rain-rate --from 1 --to 100 --log \\\n"
    "      --band X --json\n";

/* ---- options ------------------------------------------------------------------------ */

enum {
  OPT_VARY = 1200, OPT_FROM, OPT_TO, OPT_STEPS, OPT_LOG, OPT_CSV, OPT_PLOT, OPT_VARIABLES
};

typedef struct {
  vary_kind vary;
  int have_vary, have_from, have_to, log;
  double from, to;
  long steps;
  const char *csv_path, *plot_path, *variables;
  int vars[N_PLOTVAR];
  int n_vars;
} curve_opts;

/* Bit of a DSD parameter option in rp_cli_dsd.given (as cli_dsd.c). */
static unsigned given_bit(int code) { return 1u << (code - RP_OPT_N0); }

static int parse_vary(const char *arg, curve_opts *c) {
  for (int k = 0; k < N_VARY; k++) {
    if (strcmp(arg, VARY[k].name) == 0) {
      c->vary = (vary_kind)k;
      c->have_vary = 1;
      return 0;
    }
  }
  return rp_cli_fail(CMD, RP_EINVAL,
                     "--vary: unknown parameter '%s' (expected d0, dm, mu, nw, rain-rate, "
                     "temperature, elevation or canting-sd)",
                     arg);
}

static int parse_variables(const char *text, curve_opts *c) {
  c->n_vars = 0;
  const char *p = text;
  while (1) {
    const char *comma = strchr(p, ',');
    const size_t len = comma ? (size_t)(comma - p) : strlen(p);
    int found = -1;
    for (int k = 0; k < N_PLOTVAR; k++)
      if (strlen(PVAR[k].name) == len && strncmp(p, PVAR[k].name, len) == 0) found = k;
    if (found < 0)
      return rp_cli_fail(CMD, RP_EINVAL,
                         "--variables: unknown variable '%.*s' in '%s' (expected a list of zh, "
                         "zv, zdr, kdp, rhohv, delta, ldr, ah, adp, rain-rate)",
                         (int)len, p, text);
    for (int j = 0; j < c->n_vars; j++)
      if (c->vars[j] == found)
        return rp_cli_fail(CMD, RP_EINVAL, "--variables: '%s' appears twice in '%s'",
                           PVAR[found].name, text);
    c->vars[c->n_vars++] = found;
    if (comma == NULL) break;
    p = comma + 1;
  }
  return 0;
}

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

/* Does the base DSD take the varied parameter? 0 or an exit code after a message. */
static int check_base(vary_kind v, const rp_cli_dsd_built *b) {
  const rp_dsd_model m = b->dsd.model;
  const char *need = NULL;
  switch (v) {
    case V_D0: case V_DM: case V_NW:
      if (!is_normalized(m)) need = "a normalised gamma (--dsd normalized-gamma or such a preset)";
      break;
    case V_MU:
      if (!is_normalized(m) && m != RP_DSD_GAMMA)
        need = "a gamma or normalised gamma (--dsd gamma, --dsd normalized-gamma or such a preset)";
      break;
    case V_RAIN_RATE:
      if (m != RP_DSD_MARSHALL_PALMER)
        need = "marshall-palmer (--dsd marshall-palmer or such a preset)";
      break;
    default:
      break;
  }
  if (need == NULL) return 0;
  return rp_cli_fail(CMD, RP_EINVAL, "--vary %s needs a base DSD that is %s; '%s' is %s",
                     VARY[v].name, need, b->label, rp_dsd_model_name(m));
}

/* The base DSD with the varied parameter set to x, truncated as the base. */
static rp_status make_dsd(vary_kind v, const rp_dsd *base, double x, rp_dsd *out, rp_error *err) {
  rp_status s;
  const int dm_form = base->model == RP_DSD_NORMALIZED_GAMMA_DM;
  switch (v) {
    case V_D0: s = rp_dsd_normalized_gamma_d0(out, base->nw_m3_mm, x, base->mu, err); break;
    case V_DM: s = rp_dsd_normalized_gamma_dm(out, base->nw_m3_mm, x, base->mu, err); break;
    case V_NW:
      s = dm_form ? rp_dsd_normalized_gamma_dm(out, x, base->dm_mm, base->mu, err)
                  : rp_dsd_normalized_gamma_d0(out, x, base->d0_mm, base->mu, err);
      break;
    case V_MU:
      if (base->model == RP_DSD_GAMMA)
        s = rp_dsd_gamma(out, base->n0, x, base->lambda_per_mm, err);
      else
        s = dm_form ? rp_dsd_normalized_gamma_dm(out, base->nw_m3_mm, base->dm_mm, x, err)
                    : rp_dsd_normalized_gamma_d0(out, base->nw_m3_mm, base->d0_mm, x, err);
      break;
    case V_RAIN_RATE: s = rp_dsd_marshall_palmer(out, x, err); break;
    default: *out = *base; return RP_OK;
  }
  if (s != RP_OK) return s;
  return rp_dsd_set_truncation(out, base->dmin_mm, base->dmax_mm, err);
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

static const char *const RESULT_COLUMNS[] = {
    "zh_dbz", "zv_dbz", "zdr_db", "kdp_deg_km", "rhohv", "delta_hv_deg", "ldr_db",
    "ah_db_km", "av_db_km", "adp_db_km"};
static const size_t RESULT_OFFSETS[] = {
    offsetof(rp_gate_result, zh_dbz), offsetof(rp_gate_result, zv_dbz),
    offsetof(rp_gate_result, zdr_db), offsetof(rp_gate_result, kdp_deg_km),
    offsetof(rp_gate_result, rhohv), offsetof(rp_gate_result, delta_hv_deg),
    offsetof(rp_gate_result, ldr_db), offsetof(rp_gate_result, ah_db_km),
    offsetof(rp_gate_result, av_db_km), offsetof(rp_gate_result, adp_db_km)};
#define N_RESULT_COLUMNS (sizeof RESULT_COLUMNS / sizeof RESULT_COLUMNS[0])
static const char *const MOMENT_COLUMNS[] = {"dsd_rain_rate_mm_h", "dsd_lwc_g_m3", "dsd_dm_mm",
                                             "dsd_d0_mm", "dsd_nw_m3_mm"};
#define N_MOMENT_COLUMNS (sizeof MOMENT_COLUMNS / sizeof MOMENT_COLUMNS[0])

static double result_field(const rp_gate_result *r, size_t offset) {
  double x;
  memcpy(&x, (const char *)r + offset, sizeof x);
  return x;
}

static void moment_fields(const rp_dsd_moments *m, double out[N_MOMENT_COLUMNS]) {
  out[0] = m->rain_rate_mm_h;
  out[1] = m->lwc_g_m3;
  out[2] = m->dm_mm;
  out[3] = m->d0_mm;
  out[4] = m->nw_m3_mm;
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
  fprintf(f, "%s,band,frequency_ghz", VARY[c->vary].column);
  for (size_t k = 0; k < N_RESULT_COLUMNS; k++) fprintf(f, ",%s", RESULT_COLUMNS[k]);
  for (size_t k = 0; k < N_MOMENT_COLUMNS; k++) fprintf(f, ",%s", MOMENT_COLUMNS[k]);
  fputc('\n', f);
  char buf[32];
  for (size_t i = 0; i < (size_t)c->steps; i++) {
    double mom[N_MOMENT_COLUMNS];
    moment_fields(&res[i].moments, mom);
    for (int b = 0; b < req->n_bands; b++) {
      fprintf(f, "%.10g,%s", x[i], band_name(req, b, buf, sizeof buf));
      csv_number(f, req->freq_ghz[b]);
      for (size_t k = 0; k < N_RESULT_COLUMNS; k++)
        csv_number(f, result_field(&res[i].r[b], RESULT_OFFSETS[k]));
      for (size_t k = 0; k < N_MOMENT_COLUMNS; k++) csv_number(f, mom[k]);
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
    return rp_cli_fail(CMD, RP_EIO, "--csv: could not write '%s': %s", path, strerror(err_no));
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
  for (size_t i = 0; i < (size_t)c->steps; i++) {
    double mom[N_MOMENT_COLUMNS];
    moment_fields(&res[i].moments, mom);
    for (int b = 0; b < req->n_bands; b++) {
      json_t *r = json_object();
      json_object_set_new(r, VARY[c->vary].column, rp_json_real(x[i]));
      json_object_set_new(r, "band", band_json(req, b));
      json_object_set_new(r, "frequency_ghz", rp_json_real(req->freq_ghz[b]));
      for (size_t k = 0; k < N_RESULT_COLUMNS; k++)
        json_object_set_new(r, RESULT_COLUMNS[k],
                            rp_json_real(result_field(&res[i].r[b], RESULT_OFFSETS[k])));
      for (size_t k = 0; k < N_MOMENT_COLUMNS; k++)
        json_object_set_new(r, MOMENT_COLUMNS[k], rp_json_real(mom[k]));
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

static int write_plot(const curve_opts *c, const rp_gate_request *req,
                      const rp_cli_dsd_built *base, const double *x,
                      const rp_gate_run_result *res) {
  const size_t n = (size_t)c->steps, nb = (size_t)req->n_bands;
  const size_t nv = (size_t)c->n_vars;
  double *y = malloc(nv * nb * n * sizeof *y);
  rp_plot_series *series = malloc(nv * nb * sizeof *series);
  rp_plot_panel *panels = calloc(nv, sizeof *panels);
  char(*labels)[32] = malloc(nb * sizeof *labels);
  if (y == NULL || series == NULL || panels == NULL || labels == NULL) {
    free(y);
    free(series);
    free(panels);
    free(labels);
    return rp_cli_fail(CMD, RP_ENOMEM, "out of memory for the picture");
  }
  char base_txt[352], title[420];
  base_title(c, req, base, base_txt, sizeof base_txt);
  for (size_t b = 0; b < nb; b++) {
    if (req->band[b] != NULL)
      snprintf(labels[b], sizeof labels[b], "%s band", req->band[b]);
    else
      snprintf(labels[b], sizeof labels[b], "%.4g GHz", req->freq_ghz[b]);
  }
  for (size_t p = 0; p < nv; p++) {
    const plot_var pv = (plot_var)c->vars[p];
    /* The DSD's rain rate does not depend on the band: one line. */
    const size_t ns = pv == P_RAIN_RATE ? 1 : nb;
    int all_positive = 1;
    for (size_t b = 0; b < ns; b++) {
      double *yy = y + (p * nb + b) * n;
      for (size_t i = 0; i < n; i++) {
        yy[i] = pv == P_RAIN_RATE ? res[i].moments.rain_rate_mm_h
                                  : result_field(&res[i].r[b], PVAR[pv].offset);
        if (!(yy[i] > 0.0)) all_positive = 0;
      }
      rp_plot_series *s = &series[p * nb + b];
      s->label = pv == P_RAIN_RATE ? "all bands" : labels[b];
      s->x = x;
      s->y = yy;
      s->n = n;
      s->style = n <= 30 ? RP_PLOT_LINE_MARKERS : RP_PLOT_LINE;
    }
    rp_plot_panel *pan = &panels[p];
    if (p == 0) snprintf(title, sizeof title, "%s: %s", base_txt, PVAR[pv].title);
    pan->title = p == 0 ? title : PVAR[pv].title;
    pan->xlabel = VARY[c->vary].xlabel;
    pan->ylabel = PVAR[pv].ylabel;
    pan->series = &series[p * nb];
    pan->n_series = ns;
    pan->log_x = c->log;
    pan->log_y = c->log && PVAR[pv].extensive && all_positive;
  }
  /* Up to 3 panels side by side; 4 as 2 x 2; more in rows of 3. */
  const int ncols = nv <= 3 ? (int)nv : (nv == 4 ? 2 : 3);
  const int nrows = (int)((nv + (size_t)ncols - 1) / (size_t)ncols);
  rp_error err = {0};
  const rp_status s =
      rp_plot_panels(c->plot_path, panels, nv, ncols, 560 * ncols, 480 * nrows, &err);
  free(y);
  free(series);
  free(panels);
  free(labels);
  if (s != RP_OK) return rp_cli_fail(CMD, s, "--plot: %s", err.msg);
  return 0;
}

/* ---- the command ----------------------------------------------------------------------- */

static int parse(int argc, char **argv, curve_opts *c, rp_cli_scatter *s, rp_cli_dsd *o,
                 const char **band_list) {
  static const struct option longopts[] = {
      RP_CLI_SCATTER_LONGOPTS,
      RP_CLI_DSD_LONGOPTS,
      {"vary", required_argument, NULL, OPT_VARY},
      {"from", required_argument, NULL, OPT_FROM},
      {"to", required_argument, NULL, OPT_TO},
      {"steps", required_argument, NULL, OPT_STEPS},
      {"log", no_argument, NULL, OPT_LOG},
      {"csv", required_argument, NULL, OPT_CSV},
      {"plot", required_argument, NULL, OPT_PLOT},
      {"variables", required_argument, NULL, OPT_VARIABLES},
      {0, 0, 0, 0}};
  int code;
  optind = 1;
  opterr = 0;
  while ((code = getopt_long(argc, argv, "", longopts, NULL)) != -1) {
    switch (code) {
      case '?': case ':':
        return rp_cli_fail(CMD, RP_EINVAL, "unknown or incomplete option '%s' (see --help)",
                           argv[optind - 1]);
      case RP_OPT_BAND: *band_list = optarg; continue;
      case OPT_VARY: if (parse_vary(optarg, c)) return RP_EXIT_USAGE; continue;
      case OPT_FROM:
        if (rp_cli_parse_double(CMD, "from", optarg, &c->from)) return RP_EXIT_USAGE;
        c->have_from = 1;
        continue;
      case OPT_TO:
        if (rp_cli_parse_double(CMD, "to", optarg, &c->to)) return RP_EXIT_USAGE;
        c->have_to = 1;
        continue;
      case OPT_STEPS:
        if (rp_cli_parse_long(CMD, "steps", optarg, &c->steps)) return RP_EXIT_USAGE;
        continue;
      case OPT_LOG: c->log = 1; continue;
      case OPT_CSV: c->csv_path = optarg; continue;
      case OPT_PLOT: c->plot_path = optarg; continue;
      case OPT_VARIABLES: c->variables = optarg; continue;
      default: break;
    }
    int h = rp_cli_dsd_option(CMD, o, code, optarg);
    if (h == 0) h = rp_cli_scatter_option(CMD, s, code, optarg);
    if (h < 0) return -h;
  }
  if (s->help) return 0;
  if (optind < argc) return rp_cli_fail(CMD, RP_EINVAL, "unexpected argument '%s'", argv[optind]);
  return 0;
}

/* Everything about the range and the outputs that can be checked before building. */
static int check_opts(curve_opts *c) {
  if (!c->have_vary)
    return rp_cli_fail(CMD, RP_EINVAL, "--vary NAME is required (d0, dm, mu, nw, rain-rate, "
                                       "temperature, elevation or canting-sd)");
  if (!c->have_from || !c->have_to)
    return rp_cli_fail(CMD, RP_EINVAL, "--vary %s needs --from and --to", VARY[c->vary].name);
  if (c->steps < 2 || c->steps > STEPS_MAX)
    return rp_cli_fail(CMD, RP_EINVAL, "--steps %ld outside [2, %d]", c->steps, STEPS_MAX);
  if (!(c->from < c->to))
    return rp_cli_fail(CMD, RP_EINVAL, "bad range: --from %g must be less than --to %g", c->from,
                       c->to);
  if (c->log && !(c->from > 0.0))
    return rp_cli_fail(CMD, RP_EINVAL, "--log needs --from > 0 (got %g)", c->from);
  if (c->plot_path != NULL && rp_cli_check_plot_path(CMD, c->plot_path)) return RP_EXIT_USAGE;
  if (c->variables != NULL && c->plot_path == NULL)
    return rp_cli_fail(CMD, RP_EINVAL, "--variables chooses what --plot draws; give --plot FILE");
  if (parse_variables(c->variables ? c->variables : "zh,zdr,kdp,ah", c)) return RP_EXIT_USAGE;
  if (c->csv_path != NULL && c->csv_path[0] == '\0')
    return rp_cli_fail(CMD, RP_EINVAL, "--csv: empty file name");
  return 0;
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
  for (size_t i = 0; i < n && rc == 0; i++) {
    rp_gate_request r = *req;
    set_scatter(c->vary, x[i], &r.cfg);
    char where[96];
    snprintf(where, sizeof where, "%s at %s = %g", CMD, vi->column, x[i]);
    rc = rp_gate_run(where, &r, &dsds[i], &res[i]);
  }
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
  if (c->plot_path != NULL && (rc = write_plot(c, req, base, x, res))) {
    if (c->csv_path != NULL) unlink(tmp);
    return rc;
  }
  if (c->csv_path != NULL && (rc = rp_cli_temp_commit(CMD, "csv", tmp, c->csv_path))) return rc;
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
  curve_opts c;
  memset(&c, 0, sizeof c);
  c.steps = STEPS_DEFAULT;
  rp_cli_scatter s;
  rp_cli_dsd o;
  rp_cli_scatter_init(&s);
  rp_cli_dsd_init(&o);
  const char *band_list = NULL;
  int rc = parse(argc, argv, &c, &s, &o, &band_list);
  if (rc) return rc;
  if (s.help) {
    printf(curve_help, rp_cli_dsd_help);
    return RP_EXIT_OK;
  }
  if ((rc = check_opts(&c))) return rc;
  if (band_list != NULL && s.have_frequency)
    return rp_cli_fail(CMD, RP_EINVAL, "give either --band or --frequency, not both");

  rp_gate_request req;
  memset(&req, 0, sizeof req);
  if (s.have_frequency) {
    req.n_bands = 1;
    req.freq_ghz[0] = s.cfg.freq_ghz;
    req.band[0] = NULL; /* an explicit frequency has no band letter (JSON null) */
  } else {
    req.n_bands = rp_cli_parse_bands(CMD, band_list ? band_list : "S,C,X", req.freq_ghz, req.band,
                                     RP_GATE_MAX_BANDS);
    if (req.n_bands < 0) return RP_EXIT_USAGE;
    s.cfg.freq_ghz = req.freq_ghz[0];
  }
  /* The varied scattering parameter replaces the base's, so the base is checked with
   * the default value in its place; every varied value is checked in compute(). */
  rp_drop_config def;
  rp_drop_config_default(&def);
  double *field = scatter_field(c.vary, &s.cfg);
  if (field != NULL) *field = *scatter_field(c.vary, &def);
  if ((rc = rp_cli_scatter_finish(CMD, &s))) return rc;
  if (s.cfg.method == RP_METHOD_MIE)
    return rp_cli_fail(CMD, RP_EINVAL, "--method mie is for single drops; use tmatrix or rayleigh");
  req.cfg = s.cfg;
  req.kw2 = o.kw2;
  req.correct_fall_speed = !isnan(o.height_km);
  req.height_km = o.height_km;

  stand_in(&c, &o);
  rp_cli_dsd_built base;
  rc = rp_cli_dsd_build(CMD, &o, &base);
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
  if (rc == 0) rc = emit(&c, &req, &base, x, res, s.json);
  free(x);
  free(res);
  rp_cli_dsd_release(&base);
  return rc;
}
