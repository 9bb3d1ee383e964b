/* cmd_gate.c — `rainprint gate`: radar variables of one DSD at one or more bands. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "cli/gate_run.h"
#include "rainprint/table_file.h"

static const char gate_help[] =
    "Usage: rainprint gate (--preset NAME | --dsd MODEL ... | --spectrum FILE.csv) [options]\n"
    "\n"
    "Radar variables of one drop-size distribution at one or more bands, with the DSD's\n"
    "own moments: Zh, Zv (dBZ), ZDR (dB), KDP (deg/km), rhoHV, delta_hv (deg), LDR (dB),\n"
    "AH, AV, ADP (dB/km, one way).\n"
    "\n"
    "%s"
    "Scattering options: as for `rainprint drop`, but --band takes a list (default S,C,X):\n"
    "  --band S,C,X --frequency GHZ --temperature C --shape MODEL --axis-ratio R\n"
    "  --canting-sd DEG --canting-model planar|3d --canting-approx --elevation DEG\n"
    "  --method tmatrix|rayleigh --json --help\n"
    "  --table FILE.nc        use this scattering table (from `rainprint table`) for its\n"
    "                         one band; scattering options given too must agree with it\n"
    "                         (e.g. with x_20c.nc from `rainprint table --help`'s example:\n"
    "                         rainprint gate --preset gentle-stratiform --table x_20c.nc)\n"
    "\n"
    "Examples:\n"
    "  rainprint gate --preset maritime-downpour\n"
    "  rainprint gate --dsd normalized-gamma --nw 8000 --d0 1.5 --mu 3 --band X --json\n";

enum { OPT_TABLE = RP_OPT_FIRST_FREE };

/* --table FILE.nc: load and check it. Its inputs become the request; scattering options
 * given as well are applied on top (argv is parsed again) and must leave it unchanged. */
static int use_table(const char *path, int argc, char **argv, const struct option *longopts,
                     rp_cli_scatter *s, rp_gate_request *req, rp_table **t) {
  rp_error err = {0};
  if (rp_table_load(path, t, &err) != RP_OK) return rp_cli_fail_err("gate", &err);
  s->cfg = (*t)->cfg;
  int code;
  optind = 1;
  while ((code = getopt_long(argc, argv, "", longopts, NULL)) != -1) {
    if (code == RP_OPT_BAND && rp_band_frequency_ghz(optarg, &s->cfg.freq_ghz, &err) != RP_OK)
      return rp_cli_fail("gate", RP_EINVAL, "--table takes at most one band: %s", err.msg);
    if (code >= RP_OPT_FREQUENCY && code <= RP_OPT_METHOD)
      (void)rp_cli_scatter_option("gate", s, code, optarg); /* values were checked before */
  }
  if (rp_table_check_match(*t, &s->cfg, &err) != RP_OK)
    return rp_cli_fail("gate", RP_ETABLE, "%s: %s", path, err.msg);
  req->n_bands = 1;
  req->freq_ghz[0] = s->cfg.freq_ghz;
  req->band[0] = rp_cli_scatter_band(s); /* NULL (JSON null) for an explicit --frequency */
  req->table = *t;
  return 0;
}

int rp_cmd_gate(int argc, char **argv) {
  static const struct option longopts[] = {RP_CLI_SCATTER_LONGOPTS, RP_CLI_DSD_LONGOPTS,
                                           {"table", required_argument, NULL, OPT_TABLE},
                                           {0, 0, 0, 0}};
  rp_cli_scatter s;
  rp_cli_dsd o;
  rp_cli_scatter_init(&s);
  rp_cli_dsd_init(&o);
  const char *band_list = NULL, *table_path = NULL;
  int code;
  optind = 1;
  opterr = 0;
  while ((code = getopt_long(argc, argv, "", longopts, NULL)) != -1) {
    if (code == '?' || code == ':')
      return rp_cli_fail("gate", RP_EINVAL, "unknown or incomplete option '%s' (see --help)",
                         argv[optind - 1]);
    if (code == RP_OPT_BAND) {
      band_list = optarg;
      s.n_scatter_given++;
      continue;
    }
    if (code == OPT_TABLE) {
      table_path = optarg;
      continue;
    }
    int h = rp_cli_dsd_option("gate", &o, code, optarg);
    if (h == 0) h = rp_cli_scatter_option("gate", &s, code, optarg);
    if (h < 0) return -h;
  }
  if (s.help) {
    printf(gate_help, rp_cli_dsd_help);
    return RP_EXIT_OK;
  }
  if (optind < argc) return rp_cli_fail("gate", RP_EINVAL, "unexpected argument '%s'", argv[optind]);
  if (band_list != NULL && s.have_frequency)
    return rp_cli_fail("gate", RP_EINVAL, "give either --band or --frequency, not both");

  rp_gate_request req;
  memset(&req, 0, sizeof req);
  rp_table *table = NULL;
  if (table_path != NULL) {
    const int rc = use_table(table_path, argc, argv, longopts, &s, &req, &table);
    if (rc) {
      rp_table_free(table);
      return rc;
    }
  } else if (s.have_frequency) {
    req.n_bands = 1;
    req.freq_ghz[0] = s.cfg.freq_ghz;
    req.band[0] = NULL; /* an explicit frequency has no band letter (JSON null) */
  } else {
    req.n_bands = rp_cli_parse_bands("gate", band_list ? band_list : "S,C,X", req.freq_ghz,
                                     req.band, RP_GATE_MAX_BANDS);
    if (req.n_bands < 0) return RP_EXIT_USAGE;
    s.cfg.freq_ghz = req.freq_ghz[0];
  }
  const int fin = rp_cli_scatter_finish("gate", &s);
  if (fin) {
    rp_table_free(table);
    return fin;
  }
  if (s.cfg.method == RP_METHOD_MIE) {
    rp_table_free(table);
    return rp_cli_fail("gate", RP_EINVAL, "--method mie is for single drops; use tmatrix or rayleigh");
  }
  req.cfg = s.cfg;
  req.kw2 = o.kw2;
  req.correct_fall_speed = !isnan(o.height_km);
  req.height_km = o.height_km;

  rp_cli_dsd_built dsd;
  int rc = rp_cli_dsd_build("gate", &o, &dsd);
  if (rc) {
    rp_cli_dsd_release(&dsd);
    rp_table_free(table);
    return rc;
  }
  rp_gate_run_result res;
  rc = rp_gate_run("gate", &req, &dsd.dsd, &res);
  if (rc == 0) {
    if (s.json)
      rc = rp_json_print(rp_gate_run_json(&req, &dsd, &res));
    else
      rp_gate_run_print(&req, &dsd, &res);
  }
  rp_cli_dsd_release(&dsd);
  rp_table_free(table);
  return rc;
}
