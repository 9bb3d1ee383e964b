/* climate_file.c — climates (ensemble.h) read from YAML files.
 *
 * Method (rp_yaml_load_file, src/io/yaml_check.c): a libyaml scan refuses numbers that
 * are not plain decimals (libcyaml 1.3.1 accepts nan, inf, hex and "1.4mm" -> 1.4
 * silently), libcyaml loads against a schema (floats and the enum CYAML_FLAG_STRICT,
 * unknown keys are errors) with its log collected into the rp_error, then
 * rp_climate_validate checks ranges. */
#include "rainprint/climate_file.h"
#include "io/climate_data.h"

#include <math.h>
#include <stdbool.h>
#include <stdio.h>
#include <string.h>

#include <cyaml/cyaml.h>

#include "io/yaml_check.h"

static rp_status check_range(const char *where, const char *field, double v, double lo,
                             bool lo_open, double hi, rp_error *err) {
  bool ok = isfinite(v) && (lo_open ? v > lo : v >= lo) && v <= hi;
  if (ok) return RP_OK;
  return rp_error_set(err, RP_EINVAL, "%s%s = %g outside %s%g, %g]", where, field, v,
                      lo_open ? "(" : "[", lo, hi);
}

/* ---- YAML: pass 1, libyaml scan of the numbers (rp_yaml_scan_numbers) --------------- */

static const char *const numeric_keys[] = {"weight",     "log10_nw_mean", "log10_nw_sd",
                                           "d0_mean_mm", "d0_sd_mm",      "corr_log10_nw_d0",
                                           "mu_mean",    "mu_sd"};

/* ---- YAML: pass 2, libcyaml against the schema ------------------------------------ */

typedef struct {
  char name[RP_CLIMATE_NAME_LEN];
  double weight, log10_nw_mean, log10_nw_sd, d0_mean_mm, d0_sd_mm, corr_log10_nw_d0;
  double *mu_mean, *mu_sd;
} yaml_cluster;

typedef struct {
  char name[RP_CLIMATE_NAME_LEN];
  char source[1024];
  rp_mu_model mu_model;
  yaml_cluster *clusters;
  unsigned clusters_count;
} yaml_climate;

static const cyaml_strval_t mu_model_strings[] = {
    {"gaussian", RP_MU_GAUSSIAN},
    {"zhang2001", RP_MU_ZHANG2001},
};

#define NUM CYAML_FLAG_STRICT
#define NUM_OPT (CYAML_FLAG_OPTIONAL | CYAML_FLAG_STRICT)
static const cyaml_schema_field_t cluster_fields[] = {
    CYAML_FIELD_STRING("name", CYAML_FLAG_DEFAULT, yaml_cluster, name, 1),
    CYAML_FIELD_FLOAT("weight", NUM, yaml_cluster, weight),
    CYAML_FIELD_FLOAT("log10_nw_mean", NUM, yaml_cluster, log10_nw_mean),
    CYAML_FIELD_FLOAT("log10_nw_sd", NUM, yaml_cluster, log10_nw_sd),
    CYAML_FIELD_FLOAT("d0_mean_mm", NUM, yaml_cluster, d0_mean_mm),
    CYAML_FIELD_FLOAT("d0_sd_mm", NUM, yaml_cluster, d0_sd_mm),
    CYAML_FIELD_FLOAT("corr_log10_nw_d0", NUM, yaml_cluster, corr_log10_nw_d0),
    CYAML_FIELD_FLOAT_PTR("mu_mean", NUM_OPT, yaml_cluster, mu_mean),
    CYAML_FIELD_FLOAT_PTR("mu_sd", NUM_OPT, yaml_cluster, mu_sd),
    CYAML_FIELD_END};

static const cyaml_schema_value_t cluster_schema = {
    CYAML_VALUE_MAPPING(CYAML_FLAG_DEFAULT, yaml_cluster, cluster_fields)};

static const cyaml_schema_field_t climate_fields[] = {
    CYAML_FIELD_STRING("name", CYAML_FLAG_DEFAULT, yaml_climate, name, 1),
    CYAML_FIELD_STRING("source", CYAML_FLAG_DEFAULT, yaml_climate, source, 1),
    CYAML_FIELD_ENUM("mu_model", CYAML_FLAG_OPTIONAL | CYAML_FLAG_STRICT, yaml_climate,
                     mu_model, mu_model_strings, CYAML_ARRAY_LEN(mu_model_strings)),
    CYAML_FIELD_SEQUENCE("clusters", CYAML_FLAG_POINTER, yaml_climate, clusters,
                         &cluster_schema, 1, RP_CLIMATE_MAX_CLUSTERS),
    CYAML_FIELD_END};

static const cyaml_schema_value_t climate_schema = {
    CYAML_VALUE_MAPPING(CYAML_FLAG_POINTER, yaml_climate, climate_fields)};

/* ---- YAML: pass 3, conversion and validation -------------------------------------- */

static rp_status convert(const char *path, const yaml_climate *y, rp_climate *c, rp_error *err) {
  memset(c, 0, sizeof *c);
  snprintf(c->name, sizeof c->name, "%s", y->name);
  c->mu_model = y->mu_model;
  c->n_clusters = y->clusters_count;
  for (size_t k = 0; k < y->clusters_count; k++) {
    const yaml_cluster *q = &y->clusters[k];
    rp_climate_cluster *o = &c->clusters[k];
    snprintf(o->name, sizeof o->name, "%s", q->name);
    o->weight = q->weight;
    o->log10_nw_mean = q->log10_nw_mean;
    o->log10_nw_sd = q->log10_nw_sd;
    o->d0_mean_mm = q->d0_mean_mm;
    o->d0_sd_mm = q->d0_sd_mm;
    o->corr_log10_nw_d0 = q->corr_log10_nw_d0;
    if (c->mu_model == RP_MU_GAUSSIAN && (q->mu_mean == NULL || q->mu_sd == NULL))
      return rp_error_set(err, RP_EPARSE, "%s: clusters[%zu] (\"%s\"): %s missing: mu_model "
                          "gaussian needs mu_mean and mu_sd", path, k, q->name,
                          q->mu_mean == NULL ? "mu_mean" : "mu_sd");
    o->mu_mean = q->mu_mean ? *q->mu_mean : (double)NAN;
    o->mu_sd = q->mu_sd ? *q->mu_sd : (double)NAN;
    /* Given with zhang2001, they must still be sensible: the tool may switch models. */
    if (c->mu_model == RP_MU_ZHANG2001 && (q->mu_mean || q->mu_sd)) {
      char where[128];
      snprintf(where, sizeof where, "clusters[%zu] (\"%.63s\"): ", k, q->name);
      rp_status s = RP_OK;
      if (q->mu_mean)
        s = check_range(where, "mu_mean", o->mu_mean, RP_ENSEMBLE_MU_MIN, false,
                        RP_ENSEMBLE_MU_MAX, err);
      if (s == RP_OK && q->mu_sd)
        s = check_range(where, "mu_sd", o->mu_sd, 0.0, false, RP_CLIMATE_MU_SD_MAX, err);
      if (s != RP_OK) {
        rp_error_prefix(err, "%s: ", path);
        if (err) err->status = RP_EPARSE;
        return RP_EPARSE;
      }
    }
  }
  if (rp_climate_validate(c, err) != RP_OK) {
    rp_error_prefix(err, "%s: ", path);
    if (err) err->status = RP_EPARSE;
    return RP_EPARSE;
  }
  return RP_OK;
}

rp_status rp_climate_load_yaml_data(const char *name, const char *data, size_t n,
                                    rp_climate *c, rp_error *err) {
  if (name == NULL || c == NULL || (data == NULL && n > 0))
    return rp_error_set(err, RP_EINVAL, "climate: name, data or output is NULL");
  yaml_climate *doc = NULL;
  RP_TRY(rp_yaml_load_data(name, data, n, &climate_schema, numeric_keys,
                           sizeof numeric_keys / sizeof numeric_keys[0],
                           "a climate needs name, source and clusters", (cyaml_data_t **)&doc,
                           err));
  rp_climate tmp;
  rp_status s = convert(name, doc, &tmp, err);
  rp_yaml_free(&climate_schema, doc);
  if (s == RP_OK) *c = tmp;
  return s;
}

rp_status rp_climate_load_yaml(const char *path, rp_climate *c, rp_error *err) {
  if (path == NULL || c == NULL)
    return rp_error_set(err, RP_EINVAL, "climate file: path or output is NULL");
  yaml_climate *doc = NULL;
  RP_TRY(rp_yaml_load_file(path, &climate_schema, numeric_keys,
                           sizeof numeric_keys / sizeof numeric_keys[0],
                           "a climate needs name, source and clusters", (cyaml_data_t **)&doc,
                           err));
  rp_climate tmp;
  rp_status s = convert(path, doc, &tmp, err);
  rp_yaml_free(&climate_schema, doc);
  if (s == RP_OK) *c = tmp;
  return s;
}
