/* cmd_presets.c — `rainprint presets`: the named rains, their parameters and, at S band,
 * R, Zh, ZDR and KDP. */
#include <string.h>

#include "cli/cli.h"
#include "cli/gate_run.h"
#include "rainprint/presets.h"

static const rp_opts_spec presets_opts[] = {
    RP_OPTS_FLAG_ROW("verbose", "also print each preset's description and source"),
    RP_OPTS_FLAG_ROW("json", "machine-readable output (JSON on stdout)"), RP_OPTS_END};

static const rp_opts_command presets_cmd = {
    .cmd = "presets",
    .usage = "presets [--json] [--verbose]",
    .about = "List the named rains (dsd-presets/*.yaml, or $RAINPRINT_PRESETS) with their DSD\n"
             "parameters and, at S band (10 C, default shape and canting), R, Zh, ZDR and KDP.",
    .examples = "  rainprint presets --verbose",
    .tables = {presets_opts},
    .titles = {"Options"},
};

int rp_cmd_presets(int argc, char **argv) {
  rp_opts o;
  int rc = rp_opts_parse(&presets_cmd, argc, argv, &o);
  if (rc != RP_OPTS_GO_ON) return rc;
  rc = 0;
  const int json = rp_opts_given(&o, "json"), verbose = rp_opts_given(&o, "verbose");
  rp_preset *list = NULL;
  size_t n = 0;
  rp_error err = {0};
  if (rp_preset_load_dir(rp_cli_presets_dir(), &list, &n, &err) != RP_OK)
    return rp_cli_fail_err("presets", &err);

  rp_gate_request req;
  memset(&req, 0, sizeof req);
  rp_drop_config_default(&req.cfg);
  req.n_bands = 1;
  req.band[0] = "S";
  rp_band_frequency_ghz("S", &req.freq_ghz[0], NULL);
  req.kw2 = RP_KW2_DEFAULT;

  json_t *arr = json ? json_array() : NULL;
  if (!json)
    printf("%-24s %-18s %10s %7s %6s %8s %8s %7s %8s\n", "name", "model", "Nw/N0", "D0 mm",
           "mu", "R mm/h", "Zh dBZ", "ZDR dB", "KDP d/km");
  rp_gate_session session = {0};
  for (size_t i = 0; i < n && rc == 0; i++) {
    rp_cli_dsd_built b;
    memset(&b, 0, sizeof b);
    b.dsd = list[i].dsd;
    snprintf(b.label, sizeof b.label, "%s", list[i].name);
    rp_gate_run_result res;
    rc = rp_gate_run("presets", &session, &req, &b.dsd, &res);
    if (rc) break;
    const rp_dsd *d = &b.dsd;
    if (json) {
      json_t *item = json_pack("{s:s, s:s, s:s, s:o, s:o}", "name", list[i].name, "description",
                            list[i].description, "source", list[i].source, "dsd",
                            rp_gate_dsd_json(&req, &b, &res.moments), "s_band",
                            rp_gate_result_json(&req, 0, &res.r[0]));
      json_array_append_new(arr, item);
    } else {
      const int normalized = d->model == RP_DSD_NORMALIZED_GAMMA_D0 || d->model == RP_DSD_NORMALIZED_GAMMA_DM;
      printf("%-24s %-18s %10.4g %7.3f %6.2f %8.2f %8.2f %7.3f %8.4f\n", list[i].name,
             rp_dsd_model_name(d->model), normalized ? d->nw_m3_mm : d->n0, res.moments.d0_mm,
             d->mu, res.moments.rain_rate_mm_h, res.r[0].zh_dbz, res.r[0].zdr_db,
             res.r[0].kdp_deg_km);
      if (verbose) printf("    %s\n    source: %s\n", list[i].description, list[i].source);
    }
  }
  rp_gate_session_close(&session);
  rp_preset_list_free(list);
  if (rc) {
    json_decref(arr);
    return rc;
  }
  if (json) return rp_json_print(arr);
  printf("(S band 2.8 GHz, 10 C, default shape and canting; Nw for normalised gammas (the "
         "parameter of the preset's D0 or Dm form; rainprint gate prints the Dm-based Nw of the "
         "DSD), N0 otherwise; D0 is the median volume diameter.)\n");
  return RP_EXIT_OK;
}
