/* presets.c — named example rains (DSD presets) from YAML files.
 *
 * Method: three passes over each file.
 * 1. A libyaml event scan (rp_yaml_scan_numbers, yaml_check.c) checks every scalar
 *    under a numeric key (n0, mu, d0_mm, ...) is a plain finite decimal, and reports
 *    YAML syntax errors with libyaml's own position. libcyaml 1.3.1 would accept "nan",
 *    "inf", "0x10" and trailing text ("1.6mm" -> 1.6) silently, and drops the position
 *    of syntax errors.
 * 2. libcyaml loads the file against the schema below (floats and the model enum are
 *    CYAML_FLAG_STRICT; unknown keys are errors). Its log is gathered into the rp_error
 *    with "path:line:column:" (rp_yaml_log_fn, yaml_check.c). Passes 1 and 2 are
 *    rp_yaml_load_file().
 * 3. Our validation: name pattern, exactly the parameters the model takes, then the
 *    DSD constructors' own range checks (rp_dsd_*), and the truncation.
 * All three report RP_EPARSE; only a missing/unreadable file gives RP_EIO. */
#include "rainprint/presets.h"

#include <ctype.h>
#include <dirent.h>
#include <errno.h>
#include <math.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cyaml/cyaml.h>

#include "yaml_check.h"

/* ---- schema -------------------------------------------------------------------- */

typedef enum { PM_EXPONENTIAL, PM_MARSHALL_PALMER, PM_GAMMA, PM_NORMALIZED_GAMMA } preset_model;

typedef struct {
  double *n0, *lambda_per_mm, *mu, *nw_m3_mm, *d0_mm, *dm_mm, *rain_rate_mm_h;
} preset_params;

typedef struct {
  char name[64];
  char description[256];
  char source[512];
  preset_model model;
  preset_params parameters;
  double *dmin_mm, *dmax_mm;
} preset_doc;

static const cyaml_strval_t model_strings[] = {
    {"exponential", PM_EXPONENTIAL},
    {"marshall-palmer", PM_MARSHALL_PALMER},
    {"gamma", PM_GAMMA},
    {"normalized-gamma", PM_NORMALIZED_GAMMA},
};

#define NUM_FLAGS (CYAML_FLAG_OPTIONAL | CYAML_FLAG_STRICT)
static const cyaml_schema_field_t param_fields[] = {
    CYAML_FIELD_FLOAT_PTR("n0", NUM_FLAGS, preset_params, n0),
    CYAML_FIELD_FLOAT_PTR("lambda_per_mm", NUM_FLAGS, preset_params, lambda_per_mm),
    CYAML_FIELD_FLOAT_PTR("mu", NUM_FLAGS, preset_params, mu),
    CYAML_FIELD_FLOAT_PTR("nw_m3_mm", NUM_FLAGS, preset_params, nw_m3_mm),
    CYAML_FIELD_FLOAT_PTR("d0_mm", NUM_FLAGS, preset_params, d0_mm),
    CYAML_FIELD_FLOAT_PTR("dm_mm", NUM_FLAGS, preset_params, dm_mm),
    CYAML_FIELD_FLOAT_PTR("rain_rate_mm_h", NUM_FLAGS, preset_params, rain_rate_mm_h),
    CYAML_FIELD_END};

static const cyaml_schema_field_t doc_fields[] = {
    CYAML_FIELD_STRING("name", CYAML_FLAG_DEFAULT, preset_doc, name, 1),
    CYAML_FIELD_STRING("description", CYAML_FLAG_DEFAULT, preset_doc, description, 1),
    CYAML_FIELD_ENUM("model", CYAML_FLAG_STRICT, preset_doc, model, model_strings,
                     CYAML_ARRAY_LEN(model_strings)),
    CYAML_FIELD_MAPPING("parameters", CYAML_FLAG_DEFAULT, preset_doc, parameters,
                        param_fields),
    CYAML_FIELD_FLOAT_PTR("dmin_mm", NUM_FLAGS, preset_doc, dmin_mm),
    CYAML_FIELD_FLOAT_PTR("dmax_mm", NUM_FLAGS, preset_doc, dmax_mm),
    CYAML_FIELD_STRING("source", CYAML_FLAG_DEFAULT, preset_doc, source, 1),
    CYAML_FIELD_END};

static const cyaml_schema_value_t doc_schema = {
    CYAML_VALUE_MAPPING(CYAML_FLAG_POINTER, preset_doc, doc_fields)};

/* Keys whose values must be plain decimals (pass 1, rp_yaml_scan_numbers). */
static const char *const numeric_keys[] = {"n0",     "lambda_per_mm", "mu",
                                           "nw_m3_mm", "d0_mm",        "dm_mm",
                                           "rain_rate_mm_h", "dmin_mm", "dmax_mm"};

/* ---- pass 3: validation --------------------------------------------------------------- */

static bool valid_name(const char *s) {
  /* lowercase-with-hyphens: [a-z0-9]+(-[a-z0-9]+)* */
  if (!(islower((unsigned char)s[0]) || isdigit((unsigned char)s[0]))) return false;
  for (const char *p = s; *p; p++) {
    bool ok = islower((unsigned char)*p) || isdigit((unsigned char)*p) ||
              (*p == '-' && p[1] != '\0' && p[1] != '-');
    if (!ok) return false;
  }
  return true;
}

typedef struct {
  const char *key;
  const double *value;
} param_ref;

/* A value the DSD constructors refuse is, for a file, malformed content. */
static rp_status as_parse_error(rp_error *err) {
  if (err) err->status = RP_EPARSE;
  return RP_EPARSE;
}

static rp_status build_preset(const char *path, const preset_doc *doc, rp_preset *out,
                              rp_error *err) {
  if (!valid_name(doc->name))
    return rp_error_set(err, RP_EPARSE, "%s: name '%s' must be lowercase letters, digits "
                        "and single hyphens (e.g. 'steady-rain')", path, doc->name);
  const preset_params *pp = &doc->parameters;
  const param_ref all[] = {{"n0", pp->n0},
                           {"lambda_per_mm", pp->lambda_per_mm},
                           {"mu", pp->mu},
                           {"nw_m3_mm", pp->nw_m3_mm},
                           {"d0_mm", pp->d0_mm},
                           {"dm_mm", pp->dm_mm},
                           {"rain_rate_mm_h", pp->rain_rate_mm_h}};
  /* the parameters each model takes; normalized-gamma takes d0_mm or dm_mm */
  static const char *const takes[][4] = {
      [PM_EXPONENTIAL] = {"n0", "lambda_per_mm", NULL, NULL},
      [PM_MARSHALL_PALMER] = {"rain_rate_mm_h", NULL, NULL, NULL},
      [PM_GAMMA] = {"n0", "mu", "lambda_per_mm", NULL},
      [PM_NORMALIZED_GAMMA] = {"nw_m3_mm", "mu", NULL, NULL},
  };
  static const char *const takes_text[] = {
      [PM_EXPONENTIAL] = "n0, lambda_per_mm",
      [PM_MARSHALL_PALMER] = "rain_rate_mm_h",
      [PM_GAMMA] = "n0, mu, lambda_per_mm",
      [PM_NORMALIZED_GAMMA] = "nw_m3_mm, mu and one of d0_mm, dm_mm",
  };
  const char *model = model_strings[doc->model].str;
  for (size_t i = 0; i < sizeof all / sizeof all[0]; i++) {
    bool used = false;
    for (int k = 0; k < 4 && takes[doc->model][k]; k++)
      if (strcmp(takes[doc->model][k], all[i].key) == 0) used = true;
    if (doc->model == PM_NORMALIZED_GAMMA &&
        (strcmp(all[i].key, "d0_mm") == 0 || strcmp(all[i].key, "dm_mm") == 0))
      used = true;
    if (all[i].value && !used)
      return rp_error_set(err, RP_EPARSE, "%s: parameters.%s is not used by model '%s' "
                          "(it takes %s)", path, all[i].key, model, takes_text[doc->model]);
    if (!all[i].value && used && strcmp(all[i].key, "d0_mm") != 0 &&
        strcmp(all[i].key, "dm_mm") != 0)
      return rp_error_set(err, RP_EPARSE, "%s: parameters.%s missing: model '%s' takes %s",
                          path, all[i].key, model, takes_text[doc->model]);
    if (all[i].value && !isfinite(*all[i].value)) /* pass 1 already refuses these */
      return rp_error_set(err, RP_EPARSE, "%s: parameters.%s = %g is not finite", path,
                          all[i].key, *all[i].value);
  }
  rp_dsd d;
  rp_status s = RP_OK;
  switch (doc->model) {
    case PM_EXPONENTIAL:
      s = rp_dsd_exponential(&d, *pp->n0, *pp->lambda_per_mm, err);
      break;
    case PM_MARSHALL_PALMER:
      s = rp_dsd_marshall_palmer(&d, *pp->rain_rate_mm_h, err);
      break;
    case PM_GAMMA:
      s = rp_dsd_gamma(&d, *pp->n0, *pp->mu, *pp->lambda_per_mm, err);
      break;
    case PM_NORMALIZED_GAMMA:
      if ((pp->d0_mm == NULL) == (pp->dm_mm == NULL))
        return rp_error_set(err, RP_EPARSE, "%s: model 'normalized-gamma' takes exactly one "
                            "of parameters.d0_mm and parameters.dm_mm", path);
      if (pp->d0_mm)
        s = rp_dsd_normalized_gamma_d0(&d, *pp->nw_m3_mm, *pp->d0_mm, *pp->mu, err);
      else
        s = rp_dsd_normalized_gamma_dm(&d, *pp->nw_m3_mm, *pp->dm_mm, *pp->mu, err);
      break;
  }
  if (s != RP_OK) {
    rp_error_prefix(err, "%s: parameters: ", path);
    return as_parse_error(err);
  }
  double dmin = doc->dmin_mm ? *doc->dmin_mm : RP_DSD_DMIN_DEFAULT_MM;
  double dmax = doc->dmax_mm ? *doc->dmax_mm : RP_DSD_DMAX_DEFAULT_MM;
  if (dmin <= 0.0)
    return rp_error_set(err, RP_EPARSE, "%s: dmin_mm = %g must be > 0", path, dmin);
  if (rp_dsd_set_truncation(&d, dmin, dmax, err) != RP_OK) {
    rp_error_prefix(err, "%s: ", path);
    return as_parse_error(err);
  }
  rp_preset p;
  memset(&p, 0, sizeof p);
  snprintf(p.name, sizeof p.name, "%s", doc->name);
  snprintf(p.description, sizeof p.description, "%s", doc->description);
  snprintf(p.source, sizeof p.source, "%s", doc->source);
  p.dsd = d;
  *out = p;
  return RP_OK;
}

/* ---- public ------------------------------------------------------------------------- */

rp_status rp_preset_load_file(const char *path, rp_preset *out, rp_error *err) {
  if (path == NULL || out == NULL)
    return rp_error_set(err, RP_EINVAL, "preset load: path or output is NULL");
  preset_doc *doc = NULL;
  RP_TRY(rp_yaml_load_file(path, &doc_schema, numeric_keys,
                           sizeof numeric_keys / sizeof numeric_keys[0],
                           "a preset needs name, description, model, parameters and source",
                           (cyaml_data_t **)&doc, err));
  rp_status s = build_preset(path, doc, out, err);
  rp_yaml_free(&doc_schema, doc);
  return s;
}

rp_status rp_preset_load_data(const char *name, const char *data, size_t n, rp_preset *out,
                              rp_error *err) {
  if (name == NULL || out == NULL || (data == NULL && n > 0))
    return rp_error_set(err, RP_EINVAL, "preset load: name, data or output is NULL");
  preset_doc *doc = NULL;
  RP_TRY(rp_yaml_load_data(name, data, n, &doc_schema, numeric_keys,
                           sizeof numeric_keys / sizeof numeric_keys[0],
                           "a preset needs name, description, model, parameters and source",
                           (cyaml_data_t **)&doc, err));
  rp_status s = build_preset(name, doc, out, err);
  rp_yaml_free(&doc_schema, doc);
  return s;
}

void rp_preset_list_free(rp_preset *list) { free(list); }

static int cmp_str(const void *a, const void *b) {
  return strcmp(*(char *const *)a, *(char *const *)b);
}

static int cmp_preset(const void *a, const void *b) {
  return strcmp(((const rp_preset *)a)->name, ((const rp_preset *)b)->name);
}

static bool has_yaml_suffix(const char *name) {
  size_t n = strlen(name);
  return n > 5 && strcmp(name + n - 5, ".yaml") == 0 && name[0] != '.';
}

rp_status rp_preset_load_dir(const char *dir, rp_preset **list, size_t *n, rp_error *err) {
  if (list) *list = NULL;
  if (n) *n = 0;
  if (dir == NULL || list == NULL || n == NULL)
    return rp_error_set(err, RP_EINVAL, "preset directory: argument is NULL");
  DIR *dp = opendir(dir);
  if (dp == NULL)
    return rp_error_set(err, RP_EIO, "%s: cannot read the preset directory: %s", dir,
                        strerror(errno));
  rp_status s = RP_OK;
  char **names = NULL;
  size_t count = 0, cap = 0;
  rp_preset *out = NULL;
  struct dirent *e;
  while ((e = readdir(dp)) != NULL) {
    if (!has_yaml_suffix(e->d_name)) continue;
    if (count == cap) {
      size_t nc = cap ? 2 * cap : 16;
      char **tmp = realloc(names, nc * sizeof *tmp);
      if (tmp == NULL) {
        s = rp_error_set(err, RP_ENOMEM, "%s: out of memory", dir);
        goto done;
      }
      names = tmp, cap = nc;
    }
    names[count] = malloc(strlen(e->d_name) + 1);
    if (names[count] == NULL) {
      s = rp_error_set(err, RP_ENOMEM, "%s: out of memory", dir);
      goto done;
    }
    strcpy(names[count++], e->d_name);
  }
  if (count == 0) {
    s = rp_error_set(err, RP_EIO, "%s: no *.yaml preset files", dir);
    goto done;
  }
  qsort(names, count, sizeof *names, cmp_str);
  out = calloc(count, sizeof *out);
  if (out == NULL) {
    s = rp_error_set(err, RP_ENOMEM, "%s: out of memory", dir);
    goto done;
  }
  for (size_t i = 0; i < count; i++) {
    size_t len = strlen(dir) + strlen(names[i]) + 2;
    char *path = malloc(len);
    if (path == NULL) {
      s = rp_error_set(err, RP_ENOMEM, "%s: out of memory", dir);
      goto done;
    }
    snprintf(path, len, "%s/%s", dir, names[i]);
    s = rp_preset_load_file(path, &out[i], err);
    free(path);
    if (s != RP_OK) goto done;
    for (size_t j = 0; j < i; j++)
      if (strcmp(out[j].name, out[i].name) == 0) {
        s = rp_error_set(err, RP_EPARSE, "%s: preset name '%s' is defined twice (%s and %s)",
                         dir, out[i].name, names[j], names[i]);
        goto done;
      }
  }
  qsort(out, count, sizeof *out, cmp_preset);
done:
  closedir(dp);
  for (size_t i = 0; i < count; i++) free(names[i]);
  free(names);
  if (s != RP_OK) {
    free(out);
    return s;
  }
  *list = out;
  *n = count;
  return RP_OK;
}

rp_status rp_preset_find(const char *dir, const char *name, rp_preset *out, rp_error *err) {
  if (dir == NULL || name == NULL || out == NULL)
    return rp_error_set(err, RP_EINVAL, "preset find: argument is NULL");
  rp_preset *list = NULL;
  size_t n = 0;
  RP_TRY(rp_preset_load_dir(dir, &list, &n, err));
  for (size_t i = 0; i < n; i++)
    if (strcmp(list[i].name, name) == 0) {
      *out = list[i];
      rp_preset_list_free(list);
      return RP_OK;
    }
  char known[RP_ERROR_MSG_LEN] = "";
  for (size_t i = 0; i < n; i++) {
    size_t len = strlen(known);
    snprintf(known + len, sizeof known - len, "%s%s", i ? ", " : "", list[i].name);
  }
  rp_preset_list_free(list);
  return rp_error_set(err, RP_EINVAL, "no preset named '%s' in %s (known: %s)", name, dir,
                      known);
}
