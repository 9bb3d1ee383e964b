/* radar_model.h — the radar as the library sees it: the scattering configuration of one
 * or several bands, and an explicit, thread-safe cache of everything a DSD integral needs
 * (scattering tables, quadrature plans, fast paths), keyed by band, temperature and
 * elevation.
 *
 * Every command and every volume goes through one model: "obtain a table -> make a plan ->
 * evaluate" lives here, once. Tables come from a table source (table.h: the file store of
 * table_file.h, or computed on the spot); plans and fast paths are built on first use and
 * kept until the model is freed, so pointers handed out stay valid for the model's life.
 *
 * Temperatures: a volume asks for many temperatures (the lapse rate) from many threads. The
 * model serves any temperature in [RP_RADAR_TEMP_MIN_C, RP_RADAR_TEMP_MAX_C] from tables at
 * temperature nodes every temp_step_c (default RP_RADAR_TEMP_STEP_DEFAULT_C, nodes at whole
 * multiples of the step, so the shipped 0/10/20/30 C tables are nodes), interpolating the
 * linear (extensive) integrals linearly in temperature between the two nodes around it
 * (rp_radar_temps_eval). The exact temperature is used instead by the single-gate calls
 * (rp_radar_model_gate and friends), which build a table for it.
 *
 * Thread safety: every function taking a non-const model may be called from several
 * threads at once; the cache is guarded by one mutex, and a table is built at most once per
 * key (other threads asking for it wait). Tables are built outside the lock with OpenMP
 * over diameters; called from inside a parallel region they run on one thread, so warm the
 * cache first (rp_radar_model_prepare) before a parallel loop. The views (rp_radar_temps)
 * are read-only and need no lock. No static state. */
#ifndef RAINPRINT_RADAR_MODEL_H
#define RAINPRINT_RADAR_MODEL_H

#include <stddef.h>

#include "rainprint/drop.h"
#include "rainprint/dsd.h"
#include "rainprint/gate.h"
#include "rainprint/status.h"
#include "rainprint/table.h"

#define RP_RADAR_MAX_BANDS 8
/* Temperature nodes for rp_radar_temps (deg C). 5 C steps keep the linear interpolation of
 * Z, K_DP and A within about 0.2 % (docs/method.md, radar model). */
#define RP_RADAR_TEMP_STEP_DEFAULT_C 5.0
#define RP_RADAR_TEMP_MIN_C (-10.0)
#define RP_RADAR_TEMP_MAX_C 50.0

typedef struct {
  /* Scattering configuration shared by every band (freq_ghz is replaced by each band's;
   * temp_c and elevation_deg are the defaults of the calls that take none). */
  rp_drop_config scatter;
  int n_bands;                              /* 1 .. RP_RADAR_MAX_BANDS */
  double freq_ghz[RP_RADAR_MAX_BANDS];      /* frequency of each band */
  double kw2;                               /* |K_w|^2 used to form Z, (0, 1] */
  double temp_step_c;                       /* node spacing of rp_radar_temps, [0.5, 10] */
  rp_table_source source;                   /* where tables come from ({NULL}: computed) */
} rp_radar_config;

/* One band (C), the default scattering configuration (drop.h), |K_w|^2 = RP_KW2_DEFAULT,
 * 5 C temperature nodes, tables computed on the spot. */
void rp_radar_config_default(rp_radar_config *c);

/* Check a configuration (every field's range; the scattering configuration through
 * rp_drop_config_check at each band). RP_EINVAL / RP_EDOM naming the field. */
rp_status rp_radar_config_check(const rp_radar_config *c, rp_error *err);

typedef struct rp_radar_model rp_radar_model;

/* A model for configuration c (copied; the table source's context must outlive the model).
 * Builds nothing yet. Caller frees *out with rp_radar_model_free.
 * Statuses: those of rp_radar_config_check; RP_ENOMEM. */
rp_status rp_radar_model_alloc(const rp_radar_config *c, rp_radar_model **out, rp_error *err);
void rp_radar_model_free(rp_radar_model *m); /* NULL ok */

/* The configuration the model was made with. */
const rp_radar_config *rp_radar_model_config(const rp_radar_model *m);

/* The scattering configuration of band b at temperature temp_c and elevation
 * elevation_deg (what the tables for that key are computed for). */
rp_drop_config rp_radar_model_drop_config(const rp_radar_model *m, int band, double temp_c,
                                          double elevation_deg);

/* What the model holds for one key: the table on the default diameter grid, the plan for
 * the default DSD truncation [RP_DSD_DMIN_DEFAULT_MM, RP_DSD_DMAX_DEFAULT_MM] and the fast
 * path built from that plan. Borrowed: valid until the model is freed. */
typedef struct {
  const rp_table *table;
  const rp_gate_plan *plan;
  const rp_gate_fast *fast;
  rp_table_origin origin; /* where the table came from */
} rp_radar_entry;

/* The entry of band b (0-based) at temp_c and elevation_deg (exact values: the key; a
 * temperature within 1e-9 C of an existing key reuses it), obtained or built now.
 * Statuses: RP_EINVAL (NULL arguments, band out of range), RP_EDOM (temperature or
 * elevation outside the model's range), or those of the table source, the plan and the
 * fast path (rp_table_build, rp_gate_plan_alloc, rp_gate_fast_alloc). */
rp_status rp_radar_model_entry(rp_radar_model *m, int band, double temp_c, double elevation_deg,
                               rp_radar_entry *out, rp_error *err);

/* A plan for another DSD truncation [dmin_mm, dmax_mm] (kept in the model, borrowed).
 * origin (may be NULL) tells where the table came from. Statuses as rp_radar_model_entry
 * and rp_gate_plan_alloc. */
rp_status rp_radar_model_plan(rp_radar_model *m, int band, double temp_c, double elevation_deg,
                              double dmin_mm, double dmax_mm, const rp_gate_plan **plan,
                              rp_table_origin *origin, rp_error *err);

/* Radar variables of DSD d at band b, temperature temp_c, elevation elevation_deg:
 * direct integration with the plan for d's truncation (spectra: over the whole table).
 * origin may be NULL. Statuses: as rp_radar_model_plan and rp_gate_eval. */
rp_status rp_radar_model_gate(rp_radar_model *m, int band, double temp_c, double elevation_deg,
                              const rp_dsd *d, rp_gate_result *out, rp_table_origin *origin,
                              rp_error *err);

/* ---- many temperatures, many threads: the view used by volumes ------------------------ */

/* Read-only view of the fast paths of one band and elevation at the temperature nodes
 * covering [tmin_c, tmax_c]: node k at t0_c + k dt_c, fast[k] (borrowed from the model);
 * a node beyond [RP_RADAR_TEMP_MIN_C, RP_RADAR_TEMP_MAX_C] (a step that does not divide
 * the range's end) holds the table at the range's end, and rp_radar_temps_eval weighs
 * by the temperatures the tables hold. */
typedef struct {
  size_t n_nodes;
  double t0_c, dt_c;
  const rp_gate_fast *fast[64];
} rp_radar_temps;

/* Build (or find) every node covering [tmin_c, tmax_c] for band b at elevation_deg and fill
 * *view. Call it before a parallel loop; rp_radar_temps_eval then needs no lock.
 * Statuses: RP_EINVAL (NULL, band, tmin > tmax, more than 64 nodes), RP_EDOM (outside the
 * model's temperature range), and those of rp_radar_model_entry. */
rp_status rp_radar_model_temps(rp_radar_model *m, int band, double elevation_deg, double tmin_c,
                               double tmax_c, rp_radar_temps *view, rp_error *err);

/* Linear integrals (gate.h) of the normalised gamma DSD (D0 form, default truncation) with
 * Nw (m^-3 mm^-1), D0 (mm), mu at temperature temp_c: the fast path at the two nodes around
 * temp_c, interpolated linearly in temperature (at a node: that node alone). No allocation,
 * no lock. Statuses: RP_EINVAL (NULL), RP_EDOM (temp_c outside the view, or as
 * rp_gate_fast_eval for Nw, D0, mu). */
rp_status rp_radar_temps_eval(const rp_radar_temps *view, double temp_c, double nw_m3_mm,
                              double d0_mm, double mu, rp_gate_linear *out, rp_error *err);

/* Warm the cache: the entries of every band at every node covering [tmin_c, tmax_c] and at
 * each of the n elevations (a volume calls this once, serially, before its parallel loop;
 * tables are built with OpenMP over diameters). Statuses as rp_radar_model_temps. */
rp_status rp_radar_model_prepare(rp_radar_model *m, double tmin_c, double tmax_c,
                                 const double *elevations_deg, size_t n, rp_error *err);

#endif
