/* scenario_file.c — scenario YAML loader.
 *
 * Method: (1) the shared text rules (rp_text_read_file, text_rules.h), then
 * rp_yaml_load_data (yaml_check.c) on the same bytes: the plain-decimal pre-scan, one
 * document only, and libcyaml against the schema below (unknown keys are errors,
 * positions from libcyaml);
 * (2) a libyaml event pass that records the line of every key path
 * ("rain.cells[1].d0_mm"), so that (3) the validation of rp_scenario_check, which names
 * the key path, can add the line, and which also checks that the items of the numeric
 * list elevations_deg are plain decimals (the shared scan checks values of numeric keys,
 * not list items). Absent keys keep the defaults of rp_scenario_default.
 * Invariants: every failure is RP_EPARSE (or RP_EIO / RP_ENOMEM) naming the file. */
#include "rainprint/scenario_file.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cyaml/cyaml.h>
#include <yaml.h>

#include "io/decimal.h"
#include "io/text_rules.h"
#include "io/yaml_check.h"
#include "rainprint/drop.h"
#include "rainprint/dsd.h"
#include "rainprint/presets.h"

/* ---- schema ---------------------------------------------------------------------- */

typedef struct {
  char *name;
  double *latitude_deg, *longitude_deg, *altitude_m;
  char *band;
  double *frequency_ghz, *beamwidth_deg, *gate_spacing_m;
  unsigned *gates;
  double *elevations_deg;
  unsigned elevations_deg_count;
  double *azimuth_step_deg, *nyquist_ms, *prf_hz;
  unsigned *pulses;
  double *sensitivity_dbz_at_10km, *phidp_offset_deg, *zdr_bias_db;
  bool *measures_ldr;
  char *start_time;
} radar_doc;

typedef struct {
  double *surface_temperature_c, *lapse_rate_c_per_km;
} atmos_doc;

typedef struct {
  char *preset;
  double *nw, *d0_mm, *mu;
} bg_doc;

typedef enum { K_GAUSSIAN, K_LINE } kind_doc;

typedef struct {
  kind_doc kind;
  double *x_km, *y_km, *radius_km, *length_km, *width_km, *orientation_deg;
  double *nw, *d0_mm, *mu;
} cell_doc;

typedef struct {
  bg_doc *background;
  cell_doc *cells;
  unsigned cells_count;
} rain_doc;

typedef struct {
  double *x_km, *y_km, *radius_km, *peak_ms;
} vortex_doc;

typedef struct {
  double *u_ms, *v_ms, *turbulence_ms;
  vortex_doc *vortex;
} wind_doc;

typedef struct {
  radar_doc *radar;
  atmos_doc *atmosphere;
  rain_doc *rain;
  wind_doc *wind;
  unsigned long long *seed;
  unsigned *beam_samples, *kdp_window_gates;
  bool *noise;
} scen_doc;

#define OPT (CYAML_FLAG_OPTIONAL | CYAML_FLAG_POINTER)
#define NUM (CYAML_FLAG_OPTIONAL | CYAML_FLAG_STRICT)

static const cyaml_schema_value_t float_entry = {CYAML_VALUE_FLOAT(CYAML_FLAG_DEFAULT, double)};

static const cyaml_schema_field_t radar_fields[] = {
    CYAML_FIELD_STRING_PTR("name", CYAML_FLAG_OPTIONAL, radar_doc, name, 1, 63),
    CYAML_FIELD_FLOAT_PTR("latitude_deg", NUM, radar_doc, latitude_deg),
    CYAML_FIELD_FLOAT_PTR("longitude_deg", NUM, radar_doc, longitude_deg),
    CYAML_FIELD_FLOAT_PTR("altitude_m", NUM, radar_doc, altitude_m),
    CYAML_FIELD_STRING_PTR("band", CYAML_FLAG_OPTIONAL, radar_doc, band, 1, 7),
    CYAML_FIELD_FLOAT_PTR("frequency_ghz", NUM, radar_doc, frequency_ghz),
    CYAML_FIELD_FLOAT_PTR("beamwidth_deg", NUM, radar_doc, beamwidth_deg),
    CYAML_FIELD_FLOAT_PTR("gate_spacing_m", NUM, radar_doc, gate_spacing_m),
    CYAML_FIELD_UINT_PTR("gates", CYAML_FLAG_OPTIONAL, radar_doc, gates),
    CYAML_FIELD_SEQUENCE("elevations_deg", CYAML_FLAG_OPTIONAL | CYAML_FLAG_POINTER, radar_doc,
                         elevations_deg, &float_entry, 1, RP_SCENARIO_MAX_ELEVATIONS),
    CYAML_FIELD_FLOAT_PTR("azimuth_step_deg", NUM, radar_doc, azimuth_step_deg),
    CYAML_FIELD_FLOAT_PTR("nyquist_ms", NUM, radar_doc, nyquist_ms),
    CYAML_FIELD_FLOAT_PTR("prf_hz", NUM, radar_doc, prf_hz),
    CYAML_FIELD_UINT_PTR("pulses", CYAML_FLAG_OPTIONAL, radar_doc, pulses),
    CYAML_FIELD_FLOAT_PTR("sensitivity_dbz_at_10km", NUM, radar_doc, sensitivity_dbz_at_10km),
    CYAML_FIELD_FLOAT_PTR("phidp_offset_deg", NUM, radar_doc, phidp_offset_deg),
    CYAML_FIELD_FLOAT_PTR("zdr_bias_db", NUM, radar_doc, zdr_bias_db),
    CYAML_FIELD_BOOL_PTR("measures_ldr", CYAML_FLAG_OPTIONAL, radar_doc, measures_ldr),
    CYAML_FIELD_STRING_PTR("start_time", CYAML_FLAG_OPTIONAL, radar_doc, start_time, 1, 31),
    CYAML_FIELD_END};

static const cyaml_schema_field_t atmos_fields[] = {
    CYAML_FIELD_FLOAT_PTR("surface_temperature_c", NUM, atmos_doc, surface_temperature_c),
    CYAML_FIELD_FLOAT_PTR("lapse_rate_c_per_km", NUM, atmos_doc, lapse_rate_c_per_km),
    CYAML_FIELD_END};

static const cyaml_schema_field_t bg_fields[] = {
    CYAML_FIELD_STRING_PTR("preset", CYAML_FLAG_OPTIONAL, bg_doc, preset, 1, 63),
    CYAML_FIELD_FLOAT_PTR("nw", NUM, bg_doc, nw),
    CYAML_FIELD_FLOAT_PTR("d0_mm", NUM, bg_doc, d0_mm),
    CYAML_FIELD_FLOAT_PTR("mu", NUM, bg_doc, mu),
    CYAML_FIELD_END};

static const cyaml_strval_t kind_strings[] = {{"gaussian", K_GAUSSIAN}, {"line", K_LINE}};

static const cyaml_schema_field_t cell_fields[] = {
    CYAML_FIELD_ENUM("kind", CYAML_FLAG_STRICT, cell_doc, kind, kind_strings, 2),
    CYAML_FIELD_FLOAT_PTR("x_km", NUM, cell_doc, x_km),
    CYAML_FIELD_FLOAT_PTR("y_km", NUM, cell_doc, y_km),
    CYAML_FIELD_FLOAT_PTR("radius_km", NUM, cell_doc, radius_km),
    CYAML_FIELD_FLOAT_PTR("length_km", NUM, cell_doc, length_km),
    CYAML_FIELD_FLOAT_PTR("width_km", NUM, cell_doc, width_km),
    CYAML_FIELD_FLOAT_PTR("orientation_deg", NUM, cell_doc, orientation_deg),
    CYAML_FIELD_FLOAT_PTR("nw", NUM, cell_doc, nw),
    CYAML_FIELD_FLOAT_PTR("d0_mm", NUM, cell_doc, d0_mm),
    CYAML_FIELD_FLOAT_PTR("mu", NUM, cell_doc, mu),
    CYAML_FIELD_END};

static const cyaml_schema_value_t cell_entry = {
    CYAML_VALUE_MAPPING(CYAML_FLAG_DEFAULT, cell_doc, cell_fields)};

static const cyaml_schema_field_t rain_fields[] = {
    CYAML_FIELD_MAPPING_PTR("background", OPT, rain_doc, background, bg_fields),
    CYAML_FIELD_SEQUENCE("cells", CYAML_FLAG_OPTIONAL | CYAML_FLAG_POINTER, rain_doc, cells,
                         &cell_entry, 0, RP_SCENARIO_MAX_CELLS),
    CYAML_FIELD_END};

static const cyaml_schema_field_t vortex_fields[] = {
    CYAML_FIELD_FLOAT_PTR("x_km", NUM, vortex_doc, x_km),
    CYAML_FIELD_FLOAT_PTR("y_km", NUM, vortex_doc, y_km),
    CYAML_FIELD_FLOAT_PTR("radius_km", NUM, vortex_doc, radius_km),
    CYAML_FIELD_FLOAT_PTR("peak_ms", NUM, vortex_doc, peak_ms),
    CYAML_FIELD_END};

static const cyaml_schema_field_t wind_fields[] = {
    CYAML_FIELD_FLOAT_PTR("u_ms", NUM, wind_doc, u_ms),
    CYAML_FIELD_FLOAT_PTR("v_ms", NUM, wind_doc, v_ms),
    CYAML_FIELD_FLOAT_PTR("turbulence_ms", NUM, wind_doc, turbulence_ms),
    CYAML_FIELD_MAPPING_PTR("vortex", OPT, wind_doc, vortex, vortex_fields),
    CYAML_FIELD_END};

static const cyaml_schema_field_t doc_fields[] = {
    CYAML_FIELD_MAPPING_PTR("radar", CYAML_FLAG_POINTER, scen_doc, radar, radar_fields),
    CYAML_FIELD_MAPPING_PTR("atmosphere", OPT, scen_doc, atmosphere, atmos_fields),
    CYAML_FIELD_MAPPING_PTR("rain", OPT, scen_doc, rain, rain_fields),
    CYAML_FIELD_MAPPING_PTR("wind", OPT, scen_doc, wind, wind_fields),
    CYAML_FIELD_UINT_PTR("seed", CYAML_FLAG_OPTIONAL, scen_doc, seed),
    CYAML_FIELD_UINT_PTR("beam_samples", CYAML_FLAG_OPTIONAL, scen_doc, beam_samples),
    CYAML_FIELD_UINT_PTR("kdp_window_gates", CYAML_FLAG_OPTIONAL, scen_doc, kdp_window_gates),
    CYAML_FIELD_BOOL_PTR("noise", CYAML_FLAG_OPTIONAL, scen_doc, noise),
    CYAML_FIELD_END};

static const cyaml_schema_value_t doc_schema = {
    CYAML_VALUE_MAPPING(CYAML_FLAG_POINTER, scen_doc, doc_fields)};

static const char *const numeric_keys[] = {
    "latitude_deg", "longitude_deg", "altitude_m", "frequency_ghz", "beamwidth_deg",
    "gate_spacing_m", "gates", "azimuth_step_deg", "nyquist_ms", "prf_hz", "pulses",
    "sensitivity_dbz_at_10km", "phidp_offset_deg", "zdr_bias_db", "surface_temperature_c",
    "lapse_rate_c_per_km", "nw", "d0_mm", "mu", "x_km", "y_km", "radius_km", "length_km",
    "width_km", "orientation_deg", "u_ms", "v_ms", "turbulence_ms", "peak_ms", "seed",
    "beam_samples", "kdp_window_gates"};

/* ---- key path -> line ------------------------------------------------------------ */

typedef struct {
  char path[96];
  unsigned line, column;
  char text[64]; /* the scalar of a sequence item or of a key's value ("" otherwise) */
  int is_value;  /* 1: the entry is a mapping value (text is the key's scalar value) */
} key_line;

typedef struct {
  key_line *v;
  size_t n, cap;
} key_lines;

static void add_line(key_lines *kl, const char *path, unsigned line, unsigned column,
                     const char *text, int is_value) {
  if (kl->n == kl->cap) {
    const size_t nc = kl->cap ? 2 * kl->cap : 64;
    key_line *nv = realloc(kl->v, nc * sizeof *nv);
    if (nv == NULL) return;
    kl->v = nv;
    kl->cap = nc;
  }
  snprintf(kl->v[kl->n].path, sizeof kl->v[kl->n].path, "%s", path);
  kl->v[kl->n].line = line;
  kl->v[kl->n].column = column;
  snprintf(kl->v[kl->n].text, sizeof kl->v[kl->n].text, "%s", text != NULL ? text : "");
  kl->v[kl->n].is_value = is_value;
  kl->n++;
}

/* Record the line of every key path of the file (best effort: a failure leaves the
 * list short and messages without a line). */
static void scan_lines(const char *data, size_t n, key_lines *kl) {
  yaml_parser_t p;
  if (!yaml_parser_initialize(&p)) return;
  yaml_parser_set_input_string(&p, (const unsigned char *)data, n);
  /* stack of containers: for mappings the pending key, for sequences the index */
  struct {
    int is_seq, expect_key;
    long index;
    char prefix[96];
  } st[16];
  int depth = -1;
  char pending[96] = "";
  for (;;) {
    yaml_event_t e;
    if (!yaml_parser_parse(&p, &e)) break;
    const yaml_event_type_t t = e.type;
    char here[96] = "";
    if (depth >= 0 && !st[depth].is_seq && !st[depth].expect_key)
      snprintf(here, sizeof here, "%s", pending);
    else if (depth >= 0 && st[depth].is_seq)
      snprintf(here, sizeof here, "%.80s[%ld]", st[depth].prefix, st[depth].index);
    /* items of a sequence get their own path ("rain.cells[1]") */
    if (depth >= 0 && st[depth].is_seq &&
        (t == YAML_MAPPING_START_EVENT || t == YAML_SEQUENCE_START_EVENT || t == YAML_SCALAR_EVENT))
      add_line(kl, here, (unsigned)e.start_mark.line + 1, (unsigned)e.start_mark.column + 1,
               t == YAML_SCALAR_EVENT ? (const char *)e.data.scalar.value : NULL, 0);
    if (t == YAML_MAPPING_START_EVENT || t == YAML_SEQUENCE_START_EVENT) {
      if (depth + 1 < 16) {
        depth++;
        st[depth].is_seq = t == YAML_SEQUENCE_START_EVENT;
        st[depth].expect_key = 1;
        st[depth].index = 0;
        snprintf(st[depth].prefix, sizeof st[depth].prefix, "%s", here);
      }
    } else if (t == YAML_MAPPING_END_EVENT || t == YAML_SEQUENCE_END_EVENT) {
      depth--;
      if (depth >= 0) {
        if (st[depth].is_seq) st[depth].index++;
        else st[depth].expect_key = 1;
      }
    } else if (t == YAML_SCALAR_EVENT && depth >= 0) {
      if (!st[depth].is_seq && st[depth].expect_key) {
        const char *key = (const char *)e.data.scalar.value;
        if (st[depth].prefix[0] != '\0')
          snprintf(pending, sizeof pending, "%.60s.%.30s", st[depth].prefix, key);
        else
          snprintf(pending, sizeof pending, "%.60s", key);
        add_line(kl, pending, (unsigned)e.start_mark.line + 1, (unsigned)e.start_mark.column + 1, NULL, 0);
        st[depth].expect_key = 0;
      } else if (st[depth].is_seq) {
        st[depth].index++;
      } else {
        /* a key's scalar value: kept for the whole-number check of integer keys */
        add_line(kl, pending, (unsigned)e.start_mark.line + 1, (unsigned)e.start_mark.column + 1,
                 (const char *)e.data.scalar.value, 1);
        st[depth].expect_key = 1;
      }
    }
    yaml_event_delete(&e);
    if (t == YAML_STREAM_END_EVENT) break;
  }
  yaml_parser_delete(&p);
}

/* The numbers of the one numeric list (radar.elevations_deg) must be plain decimals too:
 * the shared pre-scan checks scalars under numeric keys but not the items of a list,
 * and libcyaml would read "1.5deg" as 1.5 and "0x10" as 16. */
static rp_status check_list_numbers(const key_lines *kl, const char *path, rp_error *err) {
  static const char prefix[] = "radar.elevations_deg[";
  for (size_t i = 0; i < kl->n; i++) {
    if (strncmp(kl->v[i].path, prefix, sizeof prefix - 1) != 0) continue;
    double x;
    if (rp_decimal_parse(kl->v[i].text, &x) != RP_DECIMAL_OK)
      return rp_error_set(err, RP_EPARSE, "%s:%u:%u: %s: '%s' is not a plain decimal number",
                          path, kl->v[i].line, kl->v[i].column, kl->v[i].path, kl->v[i].text);
  }
  return RP_OK;
}

/* The integer keys must be written as whole numbers of plain digits: libcyaml reads an
 * unsigned field with strtoull-like parsing and the shared pre-scan accepts any plain
 * decimal, so "gates: 2.5" gave 2 gates, "gates: 1e3" gave 1, "gates: 0100" gave 64
 * (octal) and "seed: -3" wrapped to 2^64 - 3, all silently. */
static rp_status check_whole_numbers(const key_lines *kl, const char *path, rp_error *err) {
  static const char *const int_keys[] = {"radar.gates", "radar.pulses", "seed", "beam_samples",
                                         "kdp_window_gates"};
  for (size_t i = 0; i < kl->n; i++) {
    if (!kl->v[i].is_value) continue;
    int is_int_key = 0;
    for (size_t k = 0; k < sizeof int_keys / sizeof int_keys[0]; k++)
      if (strcmp(kl->v[i].path, int_keys[k]) == 0) is_int_key = 1;
    if (!is_int_key) continue;
    const char *t = kl->v[i].text;
    int ok = t[0] != '\0';
    for (const char *c = t; *c != '\0'; c++)
      if (*c < '0' || *c > '9') ok = 0;
    /* a leading zero would be read as octal (0100 -> 64) */
    if (t[0] == '0' && t[1] != '\0') ok = 0;
    if (!ok)
      return rp_error_set(err, RP_EPARSE,
                          "%s:%u:%u: %s: '%s' is not a whole number (digits 0-9 only, no "
                          "leading zero)",
                          path, kl->v[i].line, kl->v[i].column, kl->v[i].path, t);
  }
  return RP_OK;
}

/* line of key path (or of its longest recorded prefix); 0 when unknown */
static unsigned line_of(const key_lines *kl, const char *key) {
  char k[96];
  snprintf(k, sizeof k, "%s", key);
  for (;;) {
    for (size_t i = 0; i < kl->n; i++)
      if (strcmp(kl->v[i].path, k) == 0) return kl->v[i].line;
    char *cut = strrchr(k, '.');
    char *br = strrchr(k, '[');
    if (br != NULL && (cut == NULL || br > cut)) cut = br;
    if (cut == NULL) return 0;
    *cut = '\0';
  }
}

/* ---- load ------------------------------------------------------------------------ */

#define SET(dst, src) do { if ((src) != NULL) (dst) = *(src); } while (0)

static rp_status fill(const scen_doc *d, const char *path, const char *presets_dir,
                      rp_scenario *s, char *key, size_t nkey, rp_error *err) {
  rp_scenario_default(s);
  const radar_doc *r = d->radar;
  rp_scenario_radar *R = &s->radar;
  if (r->name != NULL) snprintf(R->name, sizeof R->name, "%s", r->name);
  SET(R->latitude_deg, r->latitude_deg);
  SET(R->longitude_deg, r->longitude_deg);
  SET(R->altitude_m, r->altitude_m);
  if (r->band != NULL && r->frequency_ghz != NULL) {
    snprintf(key, nkey, "radar.frequency_ghz");
    return rp_error_set(err, RP_EPARSE, "radar: give band or frequency_ghz, not both");
  }
  if (r->band != NULL) {
    if (strcmp(r->band, "S") != 0 && strcmp(r->band, "C") != 0 && strcmp(r->band, "X") != 0) {
      snprintf(key, nkey, "radar.band");
      return rp_error_set(err, RP_EPARSE, "radar.band: '%s' is not one of S, C, X", r->band);
    }
    rp_error e2 = {0};
    if (rp_band_frequency_ghz(r->band, &R->frequency_ghz, &e2) != RP_OK) {
      snprintf(key, nkey, "radar.band");
      return rp_error_set(err, RP_EPARSE, "radar.band: %s", e2.msg);
    }
    snprintf(R->band, sizeof R->band, "%s", r->band);
  }
  if (r->frequency_ghz != NULL) {
    R->frequency_ghz = *r->frequency_ghz;
    R->band[0] = '\0';
  }
  SET(R->beamwidth_deg, r->beamwidth_deg);
  SET(R->gate_spacing_m, r->gate_spacing_m);
  if (r->gates != NULL) R->gates = *r->gates;
  if (r->elevations_deg != NULL) {
    R->n_elevations = r->elevations_deg_count;
    for (unsigned i = 0; i < r->elevations_deg_count && i < RP_SCENARIO_MAX_ELEVATIONS; i++)
      R->elevations_deg[i] = r->elevations_deg[i];
  }
  SET(R->azimuth_step_deg, r->azimuth_step_deg);
  if (r->nyquist_ms != NULL && r->prf_hz != NULL) {
    snprintf(key, nkey, "radar.nyquist_ms");
    return rp_error_set(err, RP_EPARSE, "radar: give nyquist_ms or prf_hz, not both");
  }
  SET(R->prf_hz, r->prf_hz);
  if (r->nyquist_ms != NULL) {
    if (!(isfinite(*r->nyquist_ms) && *r->nyquist_ms > 0)) {
      snprintf(key, nkey, "radar.nyquist_ms");
      return rp_error_set(err, RP_EPARSE, "radar.nyquist_ms: %g m/s must be > 0", *r->nyquist_ms);
    }
    const double lambda_m = rp_scenario_wavelength_m(s);
    R->prf_hz = 4.0 * *r->nyquist_ms / lambda_m; /* v_a = lambda PRF / 4 */
    /* the PRF's range, stated for the key the user wrote (not radar.prf_hz) */
    const double lo = lambda_m * 100.0 / 4.0, hi = lambda_m * 10000.0 / 4.0;
    if (!(R->prf_hz >= 100.0 && R->prf_hz <= 10000.0)) {
      snprintf(key, nkey, "radar.nyquist_ms");
      return rp_error_set(err, RP_EPARSE,
                          "radar.nyquist_ms: %g m/s is outside the allowed range [%.3g, %.3g] "
                          "at %g GHz (PRF 100 to 10000 Hz)",
                          *r->nyquist_ms, lo, hi, R->frequency_ghz);
    }
  }
  if (r->pulses != NULL) R->pulses = (int)(*r->pulses > 100000 ? 100000 : *r->pulses);
  SET(R->sensitivity_dbz_at_10km, r->sensitivity_dbz_at_10km);
  SET(R->phidp_offset_deg, r->phidp_offset_deg);
  SET(R->zdr_bias_db, r->zdr_bias_db);
  SET(R->measures_ldr, r->measures_ldr);
  if (r->start_time != NULL) snprintf(R->start_time, sizeof R->start_time, "%s", r->start_time);
  if (d->atmosphere != NULL) {
    SET(s->surface_temperature_c, d->atmosphere->surface_temperature_c);
    SET(s->lapse_rate_c_per_km, d->atmosphere->lapse_rate_c_per_km);
  }
  if (d->rain != NULL && d->rain->background != NULL) {
    const bg_doc *b = d->rain->background;
    s->has_background = true;
    if (b->preset != NULL) {
      if (b->nw != NULL || b->d0_mm != NULL || b->mu != NULL) {
        snprintf(key, nkey, "rain.background.preset");
        return rp_error_set(err, RP_EPARSE, "rain.background: give preset or nw, d0_mm, mu, not both");
      }
      if (presets_dir == NULL) {
        snprintf(key, nkey, "rain.background.preset");
        return rp_error_set(err, RP_EPARSE, "rain.background.preset: '%s' named but no presets folder given", b->preset);
      }
      rp_preset pr;
      rp_error e2 = {0};
      if (rp_preset_find(presets_dir, b->preset, &pr, &e2) != RP_OK) {
        snprintf(key, nkey, "rain.background.preset");
        return rp_error_set(err, RP_EPARSE, "rain.background.preset: %s", e2.msg);
      }
      if (pr.dsd.model == RP_DSD_NORMALIZED_GAMMA_D0) {
        s->bg_d0_mm = pr.dsd.d0_mm;
      } else if (pr.dsd.model == RP_DSD_NORMALIZED_GAMMA_DM) {
        s->bg_d0_mm = pr.dsd.dm_mm * (RP_DSD_C_D0 + pr.dsd.mu) / (RP_DSD_C_DM + pr.dsd.mu);
      } else {
        snprintf(key, nkey, "rain.background.preset");
        return rp_error_set(err, RP_EPARSE,
                            "rain.background.preset: '%s' is a %s preset; a scenario background "
                            "needs a normalized-gamma one (Nw, D0, mu)",
                            b->preset, rp_dsd_model_name(pr.dsd.model));
      }
      s->bg_nw_m3_mm = pr.dsd.nw_m3_mm;
      s->bg_mu = pr.dsd.mu;
      snprintf(s->background_preset, sizeof s->background_preset, "%s", b->preset);
    } else {
      const char *miss = b->nw == NULL ? "nw" : b->d0_mm == NULL ? "d0_mm" : b->mu == NULL ? "mu" : NULL;
      if (miss != NULL) {
        snprintf(key, nkey, "rain.background");
        return rp_error_set(err, RP_EPARSE, "rain.background: missing '%s' (give preset, or nw, d0_mm and mu)", miss);
      }
      s->bg_nw_m3_mm = *b->nw;
      s->bg_d0_mm = *b->d0_mm;
      s->bg_mu = *b->mu;
    }
  }
  if (d->rain != NULL && d->rain->cells != NULL) {
    s->n_cells = d->rain->cells_count;
    for (unsigned i = 0; i < d->rain->cells_count; i++) {
      const cell_doc *c = &d->rain->cells[i];
      rp_cell *C = &s->cells[i];
      memset(C, 0, sizeof *C);
      C->kind = c->kind == K_LINE ? RP_CELL_LINE : RP_CELL_GAUSSIAN;
      const char *need[6];
      const double *have[6];
      int nn = 0;
      need[nn] = "x_km"; have[nn++] = c->x_km;
      need[nn] = "y_km"; have[nn++] = c->y_km;
      need[nn] = "nw"; have[nn++] = c->nw;
      need[nn] = "d0_mm"; have[nn++] = c->d0_mm;
      need[nn] = "mu"; have[nn++] = c->mu;
      if (C->kind == RP_CELL_GAUSSIAN) {
        need[nn] = "radius_km"; have[nn++] = c->radius_km;
      } else {
        need[nn] = "width_km"; have[nn++] = c->width_km;
      }
      for (int k = 0; k < nn; k++)
        if (have[k] == NULL) {
          snprintf(key, nkey, "rain.cells[%u]", i);
          return rp_error_set(err, RP_EPARSE, "rain.cells[%u]: missing '%s' for a %s cell", i,
                              need[k], C->kind == RP_CELL_LINE ? "line" : "gaussian");
        }
      if (C->kind == RP_CELL_GAUSSIAN && (c->length_km || c->width_km || c->orientation_deg)) {
        snprintf(key, nkey, "rain.cells[%u]", i);
        return rp_error_set(err, RP_EPARSE, "rain.cells[%u]: length_km, width_km and orientation_deg belong to a line cell", i);
      }
      if (C->kind == RP_CELL_LINE && c->radius_km) {
        snprintf(key, nkey, "rain.cells[%u].radius_km", i);
        return rp_error_set(err, RP_EPARSE, "rain.cells[%u]: radius_km belongs to a gaussian cell", i);
      }
      C->x_km = *c->x_km;
      C->y_km = *c->y_km;
      C->nw_m3_mm = *c->nw;
      C->d0_mm = *c->d0_mm;
      C->mu = *c->mu;
      SET(C->radius_km, c->radius_km);
      SET(C->width_km, c->width_km);
      SET(C->length_km, c->length_km);
      SET(C->orientation_deg, c->orientation_deg);
    }
  }
  if (d->wind != NULL) {
    SET(s->wind.u_ms, d->wind->u_ms);
    SET(s->wind.v_ms, d->wind->v_ms);
    SET(s->wind.turbulence_ms, d->wind->turbulence_ms);
    if (d->wind->vortex != NULL) {
      const vortex_doc *v = d->wind->vortex;
      if (!v->x_km || !v->y_km || !v->radius_km || !v->peak_ms) {
        snprintf(key, nkey, "wind.vortex");
        return rp_error_set(err, RP_EPARSE, "wind.vortex: needs x_km, y_km, radius_km and peak_ms");
      }
      s->wind.has_vortex = true;
      s->wind.vortex_x_km = *v->x_km;
      s->wind.vortex_y_km = *v->y_km;
      s->wind.vortex_radius_km = *v->radius_km;
      s->wind.vortex_peak_ms = *v->peak_ms;
    }
  }
  SET(s->seed, d->seed);
  if (d->beam_samples != NULL) s->beam_samples = (int)(*d->beam_samples > 1000 ? 1000 : *d->beam_samples);
  if (d->kdp_window_gates != NULL) s->kdp_window_gates = (int)(*d->kdp_window_gates > 100000 ? 100000 : *d->kdp_window_gates);
  SET(s->noise, d->noise);
  (void)path;
  rp_status st = rp_scenario_check(s, key, nkey, err);
  return st == RP_OK ? RP_OK : RP_EPARSE;
}

/* The scenario in data[0..n-1] (already under the text rules, without a BOM), named path
 * in messages. */
static rp_status load_bytes(const char *path, const char *data, size_t n, const char *presets_dir,
                            rp_scenario *out, rp_error *err) {
  cyaml_data_t *raw = NULL;
  rp_status st = rp_yaml_load_data(path, data, n, &doc_schema, numeric_keys,
                                   sizeof numeric_keys / sizeof numeric_keys[0],
                                   "a scenario needs at least a radar: section", &raw, err);
  if (st != RP_OK) return st;
  const scen_doc *d = raw;
  key_lines kl = {NULL, 0, 0};
  scan_lines(data, n, &kl);
  st = check_list_numbers(&kl, path, err);
  if (st == RP_OK) st = check_whole_numbers(&kl, path, err);
  rp_scenario *s = st == RP_OK ? malloc(sizeof *s) : NULL;
  if (s == NULL) {
    rp_yaml_free(&doc_schema, raw);
    free(kl.v);
    return st != RP_OK ? st : rp_error_set(err, RP_ENOMEM, "%s: out of memory", path);
  }
  char key[96] = "";
  rp_error e2 = {0};
  st = fill(d, path, presets_dir, s, key, sizeof key, &e2);
  rp_yaml_free(&doc_schema, raw);
  const unsigned line = st != RP_OK && key[0] != '\0' ? line_of(&kl, key) : 0;
  free(kl.v);
  if (st != RP_OK) {
    free(s);
    if (line > 0) return rp_error_set(err, st, "%s:%u: %s", path, line, e2.msg);
    return rp_error_set(err, st, "%s: %s", path, e2.msg);
  }
  *out = *s;
  free(s);
  return RP_OK;
}

rp_status rp_scenario_file_load(const char *path, const char *presets_dir, rp_scenario *out,
                                char **text, rp_error *err) {
  if (text != NULL) *text = NULL;
  if (path == NULL || out == NULL) return rp_error_set(err, RP_EINVAL, "scenario: NULL path or output");
  /* the shared text rules (regular file, size, BOM, NUL bytes, line length), then the
   * YAML scan and libcyaml on the same bytes */
  char *data = NULL;
  size_t n = 0;
  RP_TRY(rp_text_read_file(path, &data, &n, err));
  const rp_status st = load_bytes(path, data, n, presets_dir, out, err);
  if (st == RP_OK && text != NULL)
    *text = data; /* without a BOM: the scenario attribute */
  else
    free(data);
  return st;
}

rp_status rp_scenario_load_data(const char *name, const char *data, size_t n,
                                const char *presets_dir, rp_scenario *out, rp_error *err) {
  if (name == NULL || (data == NULL && n > 0) || out == NULL)
    return rp_error_set(err, RP_EINVAL, "scenario: NULL name, data or output");
  size_t body = 0;
  RP_TRY(rp_text_check(name, data, n, &body, err));
  /* the YAML loader wants a NUL-terminated copy */
  char *copy = malloc(n - body + 1);
  if (copy == NULL) return rp_error_set(err, RP_ENOMEM, "%s: out of memory", name);
  memcpy(copy, data + body, n - body);
  copy[n - body] = '\0';
  const rp_status st = load_bytes(name, copy, n - body, presets_dir, out, err);
  free(copy);
  return st;
}
