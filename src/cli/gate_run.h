/* gate_run.h — one DSD through the gate integrator at several bands, shared by the
 * gate, presets and curve commands: table lookup (shipped / cache / computed), plan,
 * moments, printing and JSON. */
#ifndef RP_CLI_GATE_RUN_H
#define RP_CLI_GATE_RUN_H

#include "cli/cli.h"
#include "rainprint/gate.h"

#define RP_GATE_MAX_BANDS 8

typedef struct {
  rp_drop_config cfg;   /* scattering config; freq_ghz replaced per band */
  int n_bands;
  double freq_ghz[RP_GATE_MAX_BANDS];
  const char *band[RP_GATE_MAX_BANDS]; /* band letter or NULL */
  double kw2;
  const rp_table *table; /* a table the user gave (--table): used for its one band */
  int correct_fall_speed; /* non-zero: fall speeds corrected to the air at height_km */
  double height_km;
} rp_gate_request;

typedef struct {
  rp_dsd_moments moments;
  rp_gate_result r[RP_GATE_MAX_BANDS];
  rp_table_origin origin[RP_GATE_MAX_BANDS];
} rp_gate_run_result;

/* Tables for each band of req (cached across calls in this process). */
int rp_gate_run(const char *cmd, const rp_gate_request *req, const rp_dsd *dsd,
                rp_gate_run_result *out);
void rp_gate_run_print(const rp_gate_request *req, const rp_cli_dsd_built *dsd,
                       const rp_gate_run_result *res);
json_t *rp_gate_run_json(const rp_gate_request *req, const rp_cli_dsd_built *dsd,
                         const rp_gate_run_result *res);
json_t *rp_gate_dsd_json(const rp_gate_request *req, const rp_cli_dsd_built *dsd,
                         const rp_dsd_moments *m);
json_t *rp_gate_result_json(const rp_gate_request *req, int band, const rp_gate_result *r);
/* Release the tables and plans kept between calls. */
void rp_gate_run_cleanup(void);

#endif
