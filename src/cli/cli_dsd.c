/* cli_dsd.c — the DSD options shared by commands, data folders, band lists. */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "cli/cli.h"
#include "rainprint/gate.h"
#include "rainprint/presets.h"
#include "rainprint/spectrum.h"

/* The data folder of the installation: <prefix>/share/rainprint beside the tool's own
 * <prefix>/bin, or <build>/share/rainprint beside a tool in a build folder (CMake links
 * the source data there). Found from /proc/self/exe once; NULL if neither exists. */
static const char *data_root(void) {
  static char root[4096]; /* tool layer only: one thread */
  static int looked;
  if (looked) return root[0] ? root : NULL;
  looked = 1;
  char exe[4096];
  const ssize_t n = readlink("/proc/self/exe", exe, sizeof exe - 1);
  if (n <= 0) return NULL;
  exe[n] = '\0';
  char *slash = strrchr(exe, '/');
  if (slash == NULL) return NULL;
  *slash = '\0';
  const char *const rel[] = {"/../share/rainprint", "/share/rainprint"};
  for (size_t i = 0; i < 2; i++) {
    char cand[4096];
    struct stat sb;
    if (snprintf(cand, sizeof cand, "%s%s", exe, rel[i]) >= (int)sizeof cand) continue;
    if (stat(cand, &sb) == 0 && S_ISDIR(sb.st_mode) && realpath(cand, root) != NULL) return root;
  }
  root[0] = '\0';
  return NULL;
}

static const char *data_dir(const char *env, const char *sub, char *buf, size_t n) {
  const char *e = getenv(env);
  if (e && *e) return e;
  const char *root = data_root();
  if (root == NULL || snprintf(buf, n, "%s/%s", root, sub) >= (int)n) return NULL;
  return buf;
}

const char *rp_cli_tables_dir(void) {
  static char buf[4096];
  return data_dir("RAINPRINT_TABLES", "scattering", buf, sizeof buf);
}

const char *rp_cli_presets_dir(void) {
  static char buf[4096];
  return data_dir("RAINPRINT_PRESETS", "dsd-presets", buf, sizeof buf);
}

const char *rp_cli_climates_dir(void) {
  static char buf[4096];
  return data_dir("RAINPRINT_CLIMATES", "dsd-presets/climates", buf, sizeof buf);
}

const char *rp_cli_cache_dir(void) {
  static char buf[4096]; /* tool layer only: one thread */
  const char *e = getenv("RAINPRINT_CACHE");
  if (e && *e) return e;
  const char *x = getenv("XDG_CACHE_HOME");
  if (x && *x && snprintf(buf, sizeof buf, "%s/rainprint", x) < (int)sizeof buf) return buf;
  const char *h = getenv("HOME");
  if (h && *h && snprintf(buf, sizeof buf, "%s/.cache/rainprint", h) < (int)sizeof buf) return buf;
  return NULL;
}

void rp_cli_dsd_init(rp_cli_dsd *o) {
  memset(o, 0, sizeof *o);
  o->dmin = NAN; /* not given: the preset's truncation, else the default */
  o->dmax = NAN;
  o->kw2 = RP_KW2_DEFAULT;
  o->height_km = NAN;
  o->row = 1;
}

static const char *const param_names[] = {"n0", "lambda", "mu", "nw", "d0", "dm", "rain-rate"};
#define GIVEN(code) (1u << ((code) - RP_OPT_N0))

/* The parameters a model takes; anything else given is an error, as is a missing one. */
static int check_params(const char *cmd, const char *model, unsigned given, unsigned required,
                        unsigned optional) {
  for (int c = RP_OPT_N0; c <= RP_OPT_RAIN_RATE; c++) {
    if ((required & GIVEN(c)) && !(given & GIVEN(c)))
      return rp_cli_fail(cmd, RP_EINVAL, "--dsd %s needs --%s", model, param_names[c - RP_OPT_N0]);
    if ((given & GIVEN(c)) && !((required | optional) & GIVEN(c)))
      return rp_cli_fail(cmd, RP_EINVAL, "--%s does not apply to --dsd %s",
                         param_names[c - RP_OPT_N0], model);
  }
  return 0;
}

static int build_model(const char *cmd, const rp_cli_dsd *o, rp_cli_dsd_built *out) {
  rp_error err = {0};
  rp_status s;
  const char *m = o->model;
  int bad;
  if (strcmp(m, "exponential") == 0) {
    if ((bad = check_params(cmd, m, o->given, GIVEN(RP_OPT_N0) | GIVEN(RP_OPT_LAMBDA), 0))) return bad;
    s = rp_dsd_exponential(&out->dsd, o->n0, o->lambda, &err);
  } else if (strcmp(m, "marshall-palmer") == 0) {
    if ((bad = check_params(cmd, m, o->given, GIVEN(RP_OPT_RAIN_RATE), 0))) return bad;
    s = rp_dsd_marshall_palmer(&out->dsd, o->rain_rate, &err);
  } else if (strcmp(m, "gamma") == 0) {
    if ((bad = check_params(cmd, m, o->given,
                            GIVEN(RP_OPT_N0) | GIVEN(RP_OPT_MU) | GIVEN(RP_OPT_LAMBDA), 0)))
      return bad;
    s = rp_dsd_gamma(&out->dsd, o->n0, o->mu, o->lambda, &err);
  } else if (strcmp(m, "normalized-gamma") == 0) {
    const int has_d0 = (o->given & GIVEN(RP_OPT_D0)) != 0, has_dm = (o->given & GIVEN(RP_OPT_DM)) != 0;
    if (has_d0 == has_dm)
      return rp_cli_fail(cmd, RP_EINVAL, "--dsd normalized-gamma needs exactly one of --d0 and --dm");
    const unsigned req = GIVEN(RP_OPT_NW) | GIVEN(RP_OPT_MU) | (has_d0 ? GIVEN(RP_OPT_D0) : GIVEN(RP_OPT_DM));
    if ((bad = check_params(cmd, m, o->given, req, 0))) return bad;
    s = has_d0 ? rp_dsd_normalized_gamma_d0(&out->dsd, o->nw, o->d0, o->mu, &err)
               : rp_dsd_normalized_gamma_dm(&out->dsd, o->nw, o->dm, o->mu, &err);
  } else {
    return rp_cli_fail(cmd, RP_EINVAL,
                       "--dsd: unknown model '%s' (expected exponential, marshall-palmer, gamma "
                       "or normalized-gamma)",
                       m);
  }
  if (s != RP_OK) return rp_cli_fail(cmd, s, "--dsd %s: %s", m, err.msg);
  snprintf(out->label, sizeof out->label, "%s", m);
  return 0;
}

static int build_spectrum(const char *cmd, const rp_cli_dsd *o, rp_cli_dsd_built *out) {
  rp_error err = {0};
  rp_spectrum_set *set = NULL;
  if (rp_spectrum_load(o->spectrum, &set, &err) != RP_OK) return rp_cli_fail_err(cmd, &err);
  out->spectrum_set = set;
  if ((size_t)o->row > set->n_rows)
    return rp_cli_fail(cmd, RP_EINVAL, "%s: --row %ld but the file has %zu data rows", o->spectrum,
                       o->row, set->n_rows);
  const size_t row = (size_t)o->row - 1;
  if (rp_spectrum_row_dsd(set, row, &out->dsd, &err) != RP_OK)
    return rp_cli_fail(cmd, err.status, "%s: data row %ld: %s", o->spectrum, o->row, err.msg);
  snprintf(out->label, sizeof out->label, "%s row %ld%s%s", o->spectrum, o->row,
           set->labels && set->labels[row] && set->labels[row][0] ? " " : "",
           set->labels && set->labels[row] ? set->labels[row] : "");
  return 0;
}

int rp_cli_dsd_build(const char *cmd, const rp_cli_dsd *o, rp_cli_dsd_built *out) {
  memset(out, 0, sizeof *out);
  const int n_sources = (o->preset != NULL) + (o->model != NULL) + (o->spectrum != NULL);
  if (n_sources != 1)
    return rp_cli_fail(cmd, RP_EINVAL, "give exactly one of --preset, --dsd and --spectrum");
  if (o->model == NULL && o->given)
    return rp_cli_fail(cmd, RP_EINVAL, "DSD parameters (--n0, --mu, ...) go with --dsd");
  if (o->spectrum == NULL && o->row != 1)
    return rp_cli_fail(cmd, RP_EINVAL, "--row %ld picks a row of --spectrum FILE.csv", o->row);
  if (o->spectrum != NULL && !(isnan(o->dmin) && isnan(o->dmax)))
    return rp_cli_fail(cmd, RP_EINVAL, "--dmin/--dmax truncate analytic DSDs; a --spectrum "
                       "keeps its own bins");
  int rc;
  if (o->preset != NULL) {
    rp_preset p;
    rp_error err = {0};
    if (rp_preset_find(rp_cli_presets_dir(), o->preset, &p, &err) != RP_OK)
      return rp_cli_fail(cmd, err.status, "--preset: %s", err.msg);
    out->dsd = p.dsd;
    snprintf(out->label, sizeof out->label, "%s", p.name);
    rc = 0;
  } else if (o->model != NULL) {
    rc = build_model(cmd, o, out);
  } else {
    return build_spectrum(cmd, o, out); /* spectra keep their own bins */
  }
  if (rc) return rc;
  /* A preset keeps its own truncation (its file may set one) unless the user gives one. */
  const double dmin = !isnan(o->dmin) ? o->dmin
                      : o->preset != NULL ? out->dsd.dmin_mm : RP_DSD_DMIN_DEFAULT_MM;
  const double dmax = !isnan(o->dmax) ? o->dmax
                      : o->preset != NULL ? out->dsd.dmax_mm : RP_DSD_DMAX_DEFAULT_MM;
  rp_error err = {0};
  if (rp_dsd_set_truncation(&out->dsd, dmin, dmax, &err) != RP_OK)
    return rp_cli_fail(cmd, err.status, "--dmin/--dmax: %s", err.msg);
  return 0;
}

void rp_cli_dsd_release(rp_cli_dsd_built *b) {
  rp_spectrum_free(b->spectrum_set);
  b->spectrum_set = NULL;
}

int rp_cli_parse_bands(const char *cmd, const char *text, double *freqs, const char **names,
                       int max) {
  int n = 0;
  const char *p = text;
  while (*p) {
    const char *comma = strchr(p, ',');
    const size_t len = comma ? (size_t)(comma - p) : strlen(p);
    char tok[16];
    if (len == 0 || len >= sizeof tok || n >= max) {
      rp_cli_fail(cmd, RP_EINVAL, "--band: '%s' is not a list such as S,C,X", text);
      return -1;
    }
    memcpy(tok, p, len);
    tok[len] = '\0';
    rp_error err = {0};
    if (rp_band_frequency_ghz(tok, &freqs[n], &err) != RP_OK) {
      rp_cli_fail(cmd, RP_EINVAL, "--band: %s", err.msg);
      return -1;
    }
    names[n] = rp_band_of_frequency(freqs[n]); /* canonical spelling of the letter */
    n++;
    p += len;
    if (*p == ',' && *++p == '\0') { /* a trailing comma: an empty last band */
      rp_cli_fail(cmd, RP_EINVAL, "--band: '%s' is not a list such as S,C,X", text);
      return -1;
    }
  }
  if (n == 0) rp_cli_fail(cmd, RP_EINVAL, "--band: empty list");
  return n > 0 ? n : -1;
}

/* ---- the DSD options as a table of the option framework --------------------------------- */

static const char *const dsd_model_names[] = {"exponential", "marshall-palmer", "gamma",
                                              "normalized-gamma"};

/* Ranges: mu as dsd.h (RP_DSD_MU_MIN..MAX); truncation within the shape models' 10 mm
 * (RP_DSD_D_LIMIT_MM); |K_w|^2 in (0, 1]; the other parameters are checked by the DSD
 * constructors, which name the quantity. */
const rp_opts_spec rp_cli_dsd_opts[] = {
    RP_OPTS_STRING_ROW("preset", "NAME", "a named rain (rainprint presets lists them)"),
    RP_OPTS_ENUM_ROW("dsd", "MODEL",
                     "an analytic DSD (exponential takes --n0 and --lambda, marshall-palmer "
                     "--rain-rate, gamma --n0, --mu and --lambda, normalized-gamma --nw, --mu "
                     "and --d0 or --dm)", dsd_model_names, NULL),
    RP_OPTS_STRING_ROW("spectrum", "FILE.csv",
                       "a measured spectrum (spectrum CSV format, docs/guide.md)"),
    RP_OPTS_LONG_ROW("row", "N", "the data row of --spectrum to use, counted from 1", 1.0, 0,
                     RP_OPTS_RANGED | RP_OPTS_NO_HI, "1"),
    RP_OPTS_DOUBLE_ROW("n0", "X", "intercept N0 (m^-3 mm^-1-mu)", 0, 0, 0, NULL),
    RP_OPTS_DOUBLE_ROW("lambda", "X", "slope Lambda (mm^-1)", 0, 0, 0, NULL),
    RP_OPTS_DOUBLE_ROW("mu", "X", "shape parameter mu", RP_DSD_MU_MIN, RP_DSD_MU_MAX,
                       RP_OPTS_RANGED, NULL),
    RP_OPTS_DOUBLE_ROW("nw", "X", "normalised intercept Nw (m^-3 mm^-1)", 0, 0, 0, NULL),
    RP_OPTS_DOUBLE_ROW("d0", "MM", "median-volume diameter", 0.0, RP_DSD_D_LIMIT_MM,
                       RP_OPTS_RANGED | RP_OPTS_LO_OPEN, NULL),
    RP_OPTS_DOUBLE_ROW("dm", "MM", "mass-weighted mean diameter", 0.0, RP_DSD_D_LIMIT_MM,
                       RP_OPTS_RANGED | RP_OPTS_LO_OPEN, NULL),
    RP_OPTS_DOUBLE_ROW("rain-rate", "MM_H", "rain rate for marshall-palmer", 0, 0, 0, NULL),
    RP_OPTS_DOUBLE_ROW("dmin", "MM",
                       "smallest diameter of an analytic DSD, at least the scattering table's "
                       "smallest (0.1 mm for the built-in tables)", 0.0,
                       RP_DSD_D_LIMIT_MM, RP_OPTS_RANGED | RP_OPTS_LO_OPEN,
                       "the preset's, else 0.1"),
    RP_OPTS_DOUBLE_ROW("dmax", "MM",
                       "largest diameter of an analytic DSD, at most the scattering table's "
                       "largest (8 mm for the built-in tables)", 0.0,
                       RP_DSD_D_LIMIT_MM, RP_OPTS_RANGED | RP_OPTS_LO_OPEN,
                       "the preset's, else 8"),
    RP_OPTS_DOUBLE_ROW("kw2", "X", "|K_w|^2 used to form Z", 0.0, 1.0,
                       RP_OPTS_RANGED | RP_OPTS_LO_OPEN, "0.93"),
    RP_OPTS_DOUBLE_ROW("height", "KM",
                       "correct fall speeds (rain rate) to the air density of the standard "
                       "atmosphere at this height above sea level", 0.0,
                       RP_FALLSPEED_HEIGHT_MAX_KM, RP_OPTS_RANGED, "none"),
    RP_OPTS_END};

int rp_cli_dsd_from_opts(const rp_opts *o, rp_cli_dsd *d) {
  rp_cli_dsd_init(d);
  int rc;
  if ((rc = rp_opts_exclusive(o, "preset", "dsd", "spectrum", (const char *)NULL))) return rc;
  d->preset = rp_opts_string(o, "preset", NULL);
  d->spectrum = rp_opts_string(o, "spectrum", NULL);
  if (rp_opts_given(o, "dsd")) d->model = dsd_model_names[rp_opts_enum(o, "dsd", 0)];
  d->row = rp_opts_long(o, "row", 1);
  if ((rc = rp_opts_requires(o, "row", "spectrum"))) return rc;
  d->dmin = rp_opts_double(o, "dmin", NAN);
  d->dmax = rp_opts_double(o, "dmax", NAN);
  d->kw2 = rp_opts_double(o, "kw2", RP_KW2_DEFAULT);
  d->height_km = rp_opts_double(o, "height", NAN);
  static const char *const params[] = {"n0", "lambda", "mu", "nw", "d0", "dm", "rain-rate"};
  double *slots[] = {&d->n0, &d->lambda, &d->mu, &d->nw, &d->d0, &d->dm, &d->rain_rate};
  for (int i = 0; i < 7; i++)
    if (rp_opts_given(o, params[i])) {
      *slots[i] = rp_opts_double(o, params[i], 0.0);
      d->given |= 1u << i;
    }
  return 0;
}
