/* cmd_gate.c — `rainprint gate`: radar variables of one DSD at one or more bands. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "cli/gate_run.h"

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
    "\n"
    "Examples:\n"
    "  rainprint gate --preset maritime-downpour\n"
    "  rainprint gate --dsd normalized-gamma --nw 8000 --d0 1.5 --mu 3 --band X --json\n";

int rp_cmd_gate(int argc, char **argv) {
  static const struct option longopts[] = {RP_CLI_SCATTER_LONGOPTS, RP_CLI_DSD_LONGOPTS, {0, 0, 0, 0}};
  rp_cli_scatter s;
  rp_cli_dsd o;
  rp_cli_scatter_init(&s);
  rp_cli_dsd_init(&o);
  const char *band_list = NULL;
  int code;
  optind = 1;
  opterr = 0;
  while ((code = getopt_long(argc, argv, "", longopts, NULL)) != -1) {
    if (code == '?' || code == ':')
      return rp_cli_fail("gate", RP_EINVAL, "unknown or incomplete option '%s' (see --help)",
                         argv[optind - 1]);
    if (code == RP_OPT_BAND) {
      band_list = optarg;
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
  if (s.have_frequency) {
    req.n_bands = 1;
    req.freq_ghz[0] = s.cfg.freq_ghz;
    req.band[0] = rp_band_of_frequency(s.cfg.freq_ghz);
  } else {
    req.n_bands = rp_cli_parse_bands("gate", band_list ? band_list : "S,C,X", req.freq_ghz,
                                     req.band, RP_GATE_MAX_BANDS);
    if (req.n_bands < 0) return RP_EXIT_USAGE;
    s.cfg.freq_ghz = req.freq_ghz[0];
  }
  const int fin = rp_cli_scatter_finish("gate", &s);
  if (fin) return fin;
  if (s.cfg.method == RP_METHOD_MIE)
    return rp_cli_fail("gate", RP_EINVAL, "--method mie is for single drops; use tmatrix or rayleigh");
  req.cfg = s.cfg;
  req.kw2 = o.kw2;

  rp_cli_dsd_built dsd;
  int rc = rp_cli_dsd_build("gate", &o, &dsd);
  if (rc) {
    rp_cli_dsd_release(&dsd);
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
  return rc;
}
