/* cmd_gate.c — `rainprint gate`: radar variables of one DSD at one or more bands. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "cli/gate_run.h"
#include "rainprint/table_file.h"

static const rp_opts_spec gate_opts[] = {
    RP_OPTS_STRING_ROW("table", "FILE.nc",
                       "use this scattering table (from rainprint table) for its one band; "
                       "scattering options given too must agree with it"),
    RP_OPTS_FLAG_ROW("json", "machine-readable output (JSON on stdout)"),
    RP_OPTS_END};

static const rp_opts_command gate_cmd = {
    .cmd = "gate",
    .usage = "gate (--preset NAME | --dsd MODEL ... | --spectrum FILE.csv) [options]",
    .about = "Radar variables of one drop-size distribution at one or more bands (default\n"
             "S,C,X), with the DSD's own moments: Zh, Zv (dBZ), ZDR (dB), KDP (deg/km), rhoHV,\n"
             "delta_hv (deg), LDR (dB), AH, AV, ADP (dB/km, one way).",
    .examples = "  rainprint gate --preset maritime-downpour\n"
                "  rainprint gate --dsd normalized-gamma --nw 8000 --d0 1.5 --mu 3 --band X --json",
    .tables = {rp_cli_dsd_opts, rp_cli_bands_opts, rp_cli_scatter_opts, gate_opts},
    .titles = {"DSD (one of --preset, --dsd, --spectrum)", "Bands", "Scattering",
               "Table and output"},
};

/* --table FILE.nc: its configuration is the request's; scattering options given as well
 * are applied on top and must leave it matching the table. */
static int use_table(const rp_opts *o, const char *path, rp_cli_scatter *s, rp_gate_request *req,
                     rp_table **t) {
  rp_error err = {0};
  if (rp_table_load(path, t, &err) != RP_OK) return rp_cli_fail_err("gate", &err);
  const rp_opts_value *band = rp_opts_get(o, "band");
  if (band != NULL && band->n_items > 1)
    return rp_cli_fail("gate", RP_EINVAL, "--table %s is for one band; --band %s lists %zu",
                       path, band->text, band->n_items);
  rp_cli_scatter_init(s);
  s->cfg = (*t)->cfg;
  int rc = rp_cli_scatter_apply(o, s);
  if (rc) return rc;
  if (rp_table_check_match(*t, &s->cfg, &err) != RP_OK)
    return rp_cli_fail("gate", RP_ETABLE, "%s: %s", path, err.msg);
  req->n_bands = 1;
  req->freq_ghz[0] = s->cfg.freq_ghz;
  req->band[0] = rp_cli_scatter_band(s); /* NULL (JSON null) for an explicit --frequency */
  req->table = *t;
  return 0;
}

int rp_cmd_gate(int argc, char **argv) {
  rp_opts o;
  int rc = rp_opts_parse(&gate_cmd, argc, argv, &o);
  if (rc != RP_OPTS_GO_ON) return rc;
  rp_cli_dsd d;
  if ((rc = rp_cli_dsd_from_opts(&o, &d))) return rc;
  const char *table_path = rp_opts_string(&o, "table", NULL);
  rp_gate_request req;
  memset(&req, 0, sizeof req);
  rp_cli_scatter s;
  rp_table *table = NULL;
  if (table_path != NULL) {
    rc = use_table(&o, table_path, &s, &req, &table);
  } else if ((rc = rp_cli_scatter_from_opts(&o, &s)) == 0) {
    req.n_bands = rp_cli_bands_from_opts(&o, "S,C,X", req.freq_ghz, req.band, RP_GATE_MAX_BANDS);
    if (req.n_bands < 0) rc = -req.n_bands;
  }
  if (rc == 0 && s.cfg.method == RP_METHOD_MIE)
    rc = rp_cli_fail("gate", RP_EINVAL, "--method mie is for single drops; use tmatrix or rayleigh");
  if (rc) {
    rp_table_free(table);
    return rc;
  }
  req.cfg = s.cfg;
  req.kw2 = d.kw2;
  req.correct_fall_speed = !isnan(d.height_km);
  req.height_km = d.height_km;

  rp_cli_dsd_built dsd;
  rc = rp_cli_dsd_build("gate", &d, &dsd);
  rp_gate_session session = {0};
  rp_gate_run_result res;
  req.dsd_label = dsd.label;
  if (rc == 0) rc = rp_gate_run("gate", &session, &req, &dsd.dsd, &res);
  if (rc == 0) {
    if (rp_opts_given(&o, "json"))
      rc = rp_json_print(rp_gate_run_json(&req, &dsd, &res));
    else
      rp_gate_run_print(&req, &dsd, &res);
  }
  rp_gate_session_close(&session);
  rp_cli_dsd_release(&dsd);
  rp_table_free(table);
  return rc;
}
