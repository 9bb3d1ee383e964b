/* field.h — one table of fields: a single descriptor per radar and DSD quantity that the
 * text tables, JSON, CSV and netCDF writers all use, so that a new field is added in one
 * place.
 *
 * Each descriptor gives our key (also the JSON key and CSV column: the name with its unit,
 * e.g. "zh_dbz"), a short label for text tables ("Zh"), units (UDUNITS spelling for files,
 * a plain one for text), a long name, the CF standard name and the CF/Radial short name
 * where one exists (for observed volume fields; NULL otherwise), the printf format of text
 * output and the axis label of pictures (PLplot escapes), and where the value lives
 * (rp_gate_result or rp_dsd_moments). */
#ifndef RAINPRINT_FIELD_H
#define RAINPRINT_FIELD_H

#include <stddef.h>

#include "rainprint/dsd.h"
#include "rainprint/gate.h"

typedef enum {
  /* radar variables (rp_gate_result) */
  RP_FIELD_ZH, RP_FIELD_ZV, RP_FIELD_ZDR, RP_FIELD_KDP, RP_FIELD_RHOHV, RP_FIELD_DELTA_HV,
  RP_FIELD_LDR, RP_FIELD_AH, RP_FIELD_AV, RP_FIELD_ADP,
  /* DSD quantities (rp_dsd_moments) */
  RP_FIELD_NT, RP_FIELD_LWC, RP_FIELD_RAIN_RATE, RP_FIELD_DM, RP_FIELD_D0, RP_FIELD_SIGMA_M,
  RP_FIELD_NW, RP_FIELD_Z_RAYLEIGH,
  RP_FIELD_COUNT
} rp_field_id;

#define RP_FIELD_FIRST_RADAR RP_FIELD_ZH
#define RP_FIELD_LAST_RADAR RP_FIELD_ADP
#define RP_FIELD_FIRST_DSD RP_FIELD_NT
#define RP_FIELD_LAST_DSD RP_FIELD_Z_RAYLEIGH

typedef enum { RP_FIELD_OF_GATE, RP_FIELD_OF_MOMENTS } rp_field_source;

typedef struct {
  const char *key;          /* "zh_dbz": JSON key, CSV column */
  const char *name;         /* short name for --variables and the like: "zh" */
  const char *label;        /* text-table label: "Zh" */
  const char *units;        /* for files (UDUNITS): "dBZ", "degrees/km", "1" */
  const char *units_text;   /* for text output: "dBZ", "deg/km", "" */
  const char *long_name;    /* "horizontal reflectivity factor" */
  const char *cf_standard_name; /* CF standard name or NULL */
  const char *cf_radial_name;   /* CF/Radial short name of the observed field or NULL */
  const char *format;       /* printf format of a value in text tables: "%.2f" */
  const char *plot_label;   /* picture axis label with units (PLplot escapes) */
  rp_field_source source;
  size_t offset;            /* of the double in rp_gate_result or rp_dsd_moments */
  int extensive;            /* linear in N(D) (sums over drops) */
} rp_field_desc;

/* Descriptor of id (static storage), NULL for an invalid id. */
const rp_field_desc *rp_field_get(rp_field_id id);

/* The field whose key ("zh_dbz") or short name ("zh") is text, or -1. */
int rp_field_find(const char *text);

/* The value of field id in r (radar fields) or m (DSD fields); NaN when the needed
 * pointer is NULL or id is invalid. */
double rp_field_value(rp_field_id id, const rp_gate_result *r, const rp_dsd_moments *m);

/* Short names of the radar fields ("zh", "zv", ...) in a static array of *n entries. */
const char *const *rp_field_radar_names(size_t *n);

#endif
