/* cli_common.c — option parsing, error reporting and JSON output shared by commands. */
#include "cli/cli.h"
#include "io/tempfile.h"

#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <unistd.h>

#include "rainprint/output_set.h"
#include "rainprint/shape.h"

int rp_cli_fail(const char *cmd, rp_status s, const char *fmt, ...) {
  fprintf(stderr, "rainprint %s: ", cmd);
  va_list ap;
  va_start(ap, fmt);
  vfprintf(stderr, fmt, ap);
  va_end(ap);
  fputc('\n', stderr);
  return rp_status_is_input_error(s) ? RP_EXIT_USAGE : RP_EXIT_COMPUTE;
}

int rp_cli_fail_err(const char *cmd, const rp_error *err) {
  return rp_cli_fail(cmd, err->status, "%s", err->msg[0] ? err->msg : rp_status_message(err->status));
}

void rp_cli_scatter_init(rp_cli_scatter *s) {
  memset(s, 0, sizeof *s);
  rp_drop_config_default(&s->cfg);
}

const char *rp_cli_scatter_band(const rp_cli_scatter *s) {
  return s->have_frequency ? NULL : rp_band_of_frequency(s->cfg.freq_ghz);
}

int rp_cli_scatter_finish(const char *cmd, rp_cli_scatter *s) {
  if (s->band != NULL && s->have_frequency)
    return rp_cli_fail(cmd, RP_EINVAL, "give either --band or --frequency, not both");
  if (s->cfg.axis_ratio_fixed > 0.0 && s->cfg.method == RP_METHOD_MIE &&
      s->cfg.axis_ratio_fixed != 1.0)
    return rp_cli_fail(cmd, RP_EINVAL, "--method mie needs a sphere (--axis-ratio 1)");
  if (s->cfg.method == RP_METHOD_MIE && s->cfg.axis_ratio_fixed == 0.0 &&
      s->cfg.shape != RP_SHAPE_SPHERE)
    return rp_cli_fail(cmd, RP_EINVAL,
                       "--method mie is for spheres only: add --shape sphere or --axis-ratio 1");
  rp_error err = {0};
  if (rp_drop_config_check(&s->cfg, &err) != RP_OK) return rp_cli_fail_err(cmd, &err);
  return 0;
}

json_t *rp_json_real(double x) { return isfinite(x) ? json_real(x) : json_null(); }

json_t *rp_json_text(const char *text) {
  if (text == NULL) return json_null();
  json_t *j = json_string(text);
  if (j != NULL) return j;
  char *copy = strdup(text);
  if (copy == NULL) return NULL;
  for (char *p = copy; *p; p++)
    if ((unsigned char)*p >= 0x80) *p = '?';
  j = json_string(copy);
  free(copy);
  return j;
}

json_t *rp_json_complex(double complex z) {
  return json_pack("{s:o, s:o}", "re", rp_json_real(creal(z)), "im", rp_json_real(cimag(z)));
}

int rp_json_print(json_t *root) {
  if (root == NULL) {
    fprintf(stderr, "rainprint: could not build the JSON output\n");
    return RP_EXIT_COMPUTE;
  }
  char *text = json_dumps(root, JSON_INDENT(2) | JSON_REAL_PRECISION(10));
  json_decref(root);
  if (text == NULL) {
    fprintf(stderr, "rainprint: could not format the JSON output\n");
    return RP_EXIT_COMPUTE;
  }
  puts(text);
  free(text);
  return RP_EXIT_OK;
}

/* Thin wrappers over the library's io/tempfile helpers, reporting as the tool does. */
int rp_cli_temp_create(const char *cmd, const char *opt, const char *path, char *tmp, size_t n) {
  char what[64];
  snprintf(what, sizeof what, "--%s", opt);
  rp_error err = {0};
  int fd = -1;
  if (rp_tempfile_create(what, path, tmp, n, &fd, &err) != RP_OK) {
    rp_cli_fail_err(cmd, &err);
    return -1;
  }
  return fd;
}

int rp_cli_temp_commit(const char *cmd, const char *opt, const char *tmp, const char *path) {
  char what[64];
  snprintf(what, sizeof what, "--%s", opt);
  rp_error err = {0};
  if (rp_tempfile_commit(what, tmp, path, &err) != RP_OK) return rp_cli_fail_err(cmd, &err);
  return 0;
}

static int has_extension(const char *path, const char *ext) {
  const size_t n = strlen(path), e = strlen(ext);
  return n > e && strcasecmp(path + n - e, ext) == 0;
}

int rp_cli_check_plot_path(const char *cmd, const char *path) {
  if (has_extension(path, ".png") || has_extension(path, ".svg") || has_extension(path, ".pdf"))
    return 0;
  return rp_cli_fail(cmd, RP_EINVAL, "--plot '%s': the name must end in .png, .svg or .pdf",
                     path);
}

/* ---- the shared option tables ---------------------------------------------------------- */

const char *const rp_cli_band_names[] = {"S", "C", "X", "Ku", "Ka"};
#define N_BAND_NAMES (sizeof rp_cli_band_names / sizeof rp_cli_band_names[0])

rp_status rp_cli_band_resolve(const char *text, int *value, rp_error *err) {
  double f = 0.0;
  if (rp_band_frequency_ghz(text, &f, err) != RP_OK) return err->status;
  const char *canon = rp_band_of_frequency(f);
  for (size_t i = 0; i < N_BAND_NAMES; i++)
    if (canon != NULL && strcmp(canon, rp_cli_band_names[i]) == 0) {
      *value = (int)i;
      return RP_OK;
    }
  return rp_error_set(err, RP_EINVAL, "band '%s' has no entry in the band table", text);
}

static rp_status resolve_shape(const char *text, int *value, rp_error *err) {
  rp_shape_model m;
  const rp_status s = rp_shape_from_name(text, &m, err);
  if (s == RP_OK) *value = (int)m;
  return s;
}

static const char *const *band_names(size_t *n) {
  *n = N_BAND_NAMES;
  return rp_cli_band_names;
}

/* In enum order (rp_method, rp_canting_model in drop.h). */
static const char *const method_names[] = {"tmatrix", "rayleigh", "mie"};
static const char *const canting_names[] = {"planar", "3d"};

/* Ranges are those of rp_drop_config_check and the permittivity model (drop.c,
 * permittivity.c), so a value the help allows is one the library accepts. */
const rp_opts_spec rp_cli_scatter_opts[] = {
    RP_OPTS_DOUBLE_ROW("temperature", "C", "water temperature in deg C", -10.0, 50.0,
                       RP_OPTS_RANGED, "10"),
    RP_OPTS_ENUM_FN_ROW("shape", "MODEL", "axis-ratio model of drops", resolve_shape,
                        rp_shape_names, "thurai-2007"),
    RP_OPTS_DOUBLE_ROW("axis-ratio", "R",
                       "fixed axis ratio b/a for every diameter, instead of --shape", 0.3, 3.0,
                       RP_OPTS_RANGED, NULL),
    RP_OPTS_DOUBLE_ROW("canting-sd", "DEG", "standard deviation of the canting angle", 0.0, 45.0,
                       RP_OPTS_RANGED, "7"),
    RP_OPTS_ENUM_ROW("canting-model", "M",
                     "canting in the plane across the beam, or in three dimensions",
                     canting_names, "planar"),
    RP_OPTS_FLAG_ROW("canting-approx",
                     "angular-moment approximation of the canting average instead of quadrature "
                     "(planar canting only)"),
    RP_OPTS_DOUBLE_ROW("elevation", "DEG", "beam elevation angle", 0.0, 90.0, RP_OPTS_RANGED,
                       "0"),
    RP_OPTS_ENUM_ROW("method", "M",
                     "scattering method (mie: spheres, and single drops with rainprint drop only)",
                     method_names, "tmatrix"),
    RP_OPTS_END};

const rp_opts_spec rp_cli_band_opts[] = {
    RP_OPTS_ENUM_FN_ROW("band", "B", "radar band (centres 2.8, 5.6, 9.4, 13.6 and 35 GHz)",
                        rp_cli_band_resolve, band_names, "C"),
    RP_OPTS_DOUBLE_ROW("frequency", "GHZ", "explicit frequency instead of a band", 1.0, 100.0,
                       RP_OPTS_RANGED, NULL),
    RP_OPTS_END};

const rp_opts_spec rp_cli_bands_opts[] = {
    RP_OPTS_LIST_FN_ROW("band", "S,C,X",
                        "radar bands, comma-separated, each once (centres 2.8, 5.6, 9.4, 13.6 "
                        "and 35 GHz)", rp_cli_band_resolve, band_names),
    RP_OPTS_DOUBLE_ROW("frequency", "GHZ", "one explicit frequency instead of bands", 1.0, 100.0,
                       RP_OPTS_RANGED, NULL),
    RP_OPTS_END};

const rp_opts_spec rp_cli_json_opts[] = {
    RP_OPTS_FLAG_ROW("json", "machine-readable output (JSON on stdout)"), RP_OPTS_END};

static int has_opt(const rp_opts *o, const char *name) {
  for (size_t i = 0; i < o->n; i++)
    if (strcmp(o->v[i].spec->name, name) == 0) return 1;
  return 0;
}

int rp_cli_scatter_from_opts(const rp_opts *o, rp_cli_scatter *s) {
  rp_cli_scatter_init(s);
  return rp_cli_scatter_apply(o, s);
}

int rp_cli_scatter_apply(const rp_opts *o, rp_cli_scatter *s) {
  const char *cmd = o->c->cmd;
  int rc;
  if (has_opt(o, "band") && (rc = rp_opts_exclusive(o, "band", "frequency", (const char *)NULL)))
    return rc;
  if (has_opt(o, "temperature")) { /* the command has the scattering table */
    if ((rc = rp_opts_exclusive(o, "axis-ratio", "shape", (const char *)NULL))) return rc;
    static const char *const counted[] = {"band", "frequency", "temperature", "shape",
                                          "axis-ratio", "canting-sd", "canting-model",
                                          "canting-approx", "elevation", "method"};
    for (size_t i = 0; i < sizeof counted / sizeof counted[0]; i++)
      if (has_opt(o, counted[i]) && rp_opts_given(o, counted[i])) s->n_scatter_given++;
    rp_drop_config *c = &s->cfg;
    c->temp_c = rp_opts_double(o, "temperature", c->temp_c);
    c->shape = (rp_shape_model)rp_opts_enum(o, "shape", (int)c->shape);
    c->axis_ratio_fixed = rp_opts_double(o, "axis-ratio", c->axis_ratio_fixed);
    c->canting_sd_deg = rp_opts_double(o, "canting-sd", c->canting_sd_deg);
    c->canting_model = (rp_canting_model)rp_opts_enum(o, "canting-model", (int)c->canting_model);
    c->canting_approx = rp_opts_given(o, "canting-approx");
    c->elevation_deg = rp_opts_double(o, "elevation", c->elevation_deg);
    c->method = (rp_method)rp_opts_enum(o, "method", (int)c->method);
    if (c->canting_approx && c->canting_model != RP_CANTING_PLANAR)
      return rp_cli_fail(cmd, RP_EINVAL,
                         "--canting-approx is for planar canting only: give either "
                         "--canting-model 3d or --canting-approx, not both");
  }
  if (has_opt(o, "json")) s->json = rp_opts_given(o, "json");
  if (has_opt(o, "frequency") && rp_opts_given(o, "frequency")) {
    s->have_frequency = 1;
    s->cfg.freq_ghz = rp_opts_double(o, "frequency", s->cfg.freq_ghz);
  } else if (has_opt(o, "band") && rp_opts_given(o, "band")) {
    const rp_opts_value *v = rp_opts_get(o, "band");
    const int idx = v->spec->kind == RP_OPTS_LIST ? v->item_values[0] : v->e;
    s->band = rp_cli_band_names[idx];
    rp_error err = {0};
    if (rp_band_frequency_ghz(s->band, &s->cfg.freq_ghz, &err) != RP_OK)
      return rp_cli_fail_err(cmd, &err);
  }
  return rp_cli_scatter_finish(cmd, s);
}

int rp_cli_bands_from_opts(const rp_opts *o, const char *default_list, double *freqs,
                           const char **names, int max) {
  const char *cmd = o->c->cmd;
  if (rp_opts_given(o, "frequency")) {
    freqs[0] = rp_opts_double(o, "frequency", 0.0);
    names[0] = NULL;
    return 1;
  }
  const rp_opts_value *v = rp_opts_get(o, "band");
  if (v != NULL && v->given) {
    if ((int)v->n_items > max)
      return -rp_cli_fail(cmd, RP_EINVAL, "--band: at most %d bands", max);
    rp_error err = {0};
    for (size_t i = 0; i < v->n_items; i++) {
      names[i] = rp_cli_band_names[v->item_values[i]];
      if (rp_band_frequency_ghz(names[i], &freqs[i], &err) != RP_OK)
        return -rp_cli_fail_err(cmd, &err);
    }
    return (int)v->n_items;
  }
  const int n = rp_cli_parse_bands(cmd, default_list, freqs, names, max);
  return n < 0 ? -RP_EXIT_USAGE : n;
}

int rp_cli_write_failed(const char *cmd, const char *what, const char *path, int errnum) {
  fprintf(stderr, "rainprint %s: could not write %s%s%s%s: %s\n", cmd, what, path ? " '" : "",
          path ? path : "", path ? "'" : "", errnum ? strerror(errnum) : "unknown reason");
  return RP_EXIT_COMPUTE;
}

int rp_cli_check_output(const char *cmd, const char *opt, const char *path) {
  if (path == NULL) return 0;
  char what[64];
  snprintf(what, sizeof what, "--%s", opt);
  rp_error err = {0};
  if (rp_output_check(what, path, &err) != RP_OK) {
    rp_cli_fail(cmd, RP_EINVAL, "%s", err.msg);
    return RP_EXIT_USAGE; /* a path that cannot be written is bad input, found before work */
  }
  return 0;
}

int rp_cli_check_outputs(const char *cmd, const char *csv_path, const char *plot_path) {
  if (plot_path != NULL && rp_cli_check_plot_path(cmd, plot_path)) return RP_EXIT_USAGE;
  int rc = rp_cli_check_output(cmd, "csv", csv_path);
  if (rc == 0) rc = rp_cli_check_output(cmd, "plot", plot_path);
  return rc;
}
