/* gate_run.h — one DSD at several bands through the library's radar model (radar_model.h),
 * shared by the gate, presets and curve commands: the session (table store + model), the
 * call, and the text table / JSON built from the one table of fields (field.h).
 * The session is owned by the command (no static state); the model keeps the tables and
 * plans of the run (the library's cache), the tool keeps none. */
#ifndef RP_CLI_GATE_RUN_H
#define RP_CLI_GATE_RUN_H

#include "cli/cli.h"
#include "rainprint/gate.h"
#include "rainprint/radar_model.h"
#include "rainprint/table_file.h"

#define RP_GATE_MAX_BANDS RP_RADAR_MAX_BANDS

typedef struct {
  rp_drop_config cfg;   /* scattering config; freq_ghz replaced per band */
  int n_bands;
  double freq_ghz[RP_GATE_MAX_BANDS];
  const char *band[RP_GATE_MAX_BANDS]; /* band letter or NULL */
  double kw2;
  const rp_table *table; /* a table the user gave (--table): used for its one band */
  int correct_fall_speed; /* non-zero: fall speeds corrected to the air at height_km */
  double height_km;
  const char *dsd_label;  /* named in messages about the DSD ("file.csv row 2"), or NULL */
} rp_gate_request;

typedef struct {
  rp_dsd_moments moments;
  rp_gate_result r[RP_GATE_MAX_BANDS];
  rp_table_origin origin[RP_GATE_MAX_BANDS];
  double water_lost[RP_GATE_MAX_BANDS]; /* fraction of the DSD's water outside the table */
} rp_gate_run_result;

/* The table store (shipped folder, cache) and the radar model of the current request's
 * bands and scattering configuration (rebuilt when a request changes anything but the
 * temperature and elevation). Zero-initialise, then rp_gate_session_close at the end. */
typedef struct {
  rp_table_store *store;
  rp_radar_model *model;
  rp_radar_config config; /* of model */
} rp_gate_session;

void rp_gate_session_close(rp_gate_session *s);

/* Radar variables of dsd for each band of req; moments with the fall-speed correction.
 * Spectra with drops outside the table's diameters: a warning on stderr with the fraction
 * of water left out (water_lost). 0 or an exit code after a message prefixed by cmd. */
int rp_gate_run(const char *cmd, rp_gate_session *s, const rp_gate_request *req,
                const rp_dsd *dsd, rp_gate_run_result *out);
void rp_gate_run_print(const rp_gate_request *req, const rp_cli_dsd_built *dsd,
                       const rp_gate_run_result *res);
json_t *rp_gate_run_json(const rp_gate_request *req, const rp_cli_dsd_built *dsd,
                         const rp_gate_run_result *res);
json_t *rp_gate_dsd_json(const rp_gate_request *req, const rp_cli_dsd_built *dsd,
                         const rp_dsd_moments *m);
json_t *rp_gate_result_json(const rp_gate_request *req, int band, const rp_gate_result *r);

/* Fraction of the water (third moment) of d outside [dmin_mm, dmax_mm]: 0 when all of it
 * is inside. */
double rp_gate_water_outside(const rp_dsd *d, double dmin_mm, double dmax_mm);

#endif
