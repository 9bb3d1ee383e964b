/* cmd_scene.c — `rainprint scene`: synthesise a radar volume with known truth from a
 * scenario file and write it as a CF/Radial 1.4 netCDF-4 file.
 *
 * No numerics here: the scenario loader (io/scenario_file.c), the radar model with the
 * table store (radar_model.h, table_file.h), the volume synthesiser (volume/) and the
 * volume writer (io/volume_file.c) do the work; this file parses, calls and prints. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "cli/progress.h"
#include "rainprint/radar_model.h"
#include "rainprint/scenario_file.h"
#include "rainprint/table_file.h"
#include "rainprint/volume.h"
#include "rainprint/volume_file.h"
#include "rainprint/volume_iq_file.h"
#include "rainprint/volume_model.h"

#define CMD "scene"

static const rp_opts_spec scene_opts[] = {
    RP_OPTS_STRING_ROW("out", "FILE.nc", "the volume (netCDF-4, CF/Radial 1.4; required)"),
    RP_OPTS_LONG_ROW("seed", "N", "seed of the noise (default: the scenario's `seed`, else 1; "
                     "stored in the file)", 0, 2147483647L, RP_OPTS_RANGED, NULL),
    RP_OPTS_FLAG_ROW("no-noise", "every observed field exact (no estimator noise, no "
                     "sensitivity limit): for tests and teaching"),
    RP_OPTS_LONG_ROW("threads", "N", "threads (default: OpenMP's, e.g. OMP_NUM_THREADS)", 1, 256,
                     RP_OPTS_RANGED, NULL),
    RP_OPTS_FLAG_ROW("pulses", "pulse level: synthesise the scenario's pulses per ray as I/Q "
                     "for every gate above sensitivity (PRT from its Nyquist velocity, SNR "
                     "from its sensitivity) and estimate DBZ, ZDR, PHIDP, RHOHV, VEL, WIDTH "
                     "from them instead of the noise formulas (turns the noise on; LDRH keeps "
                     "the formula noise; about 6 s per million gates above sensitivity and core "
                     "at 64 pulses)"),
    RP_OPTS_LONG_ROW("keep-iq", "SWEEP", "with --pulses: keep the I/Q of sweep SWEEP (0-based) "
                     "and write them with --iq-out (16 bytes per pulse and gate: 64 pulses, "
                     "360 rays x 1000 gates make 369 MB)", 0, 2147483647L, RP_OPTS_RANGED, NULL),
    RP_OPTS_STRING_ROW("iq-out", "FILE.nc", "where --keep-iq writes the sweep's I/Q (netCDF-4, "
                       "samples normalised to noise power 1, with the noise-equivalent "
                       "reflectivity of each gate)"),
    RP_OPTS_FLAG_ROW("json", "print the summary as JSON"),
    RP_OPTS_END};

static const rp_opts_command scene_cmd = {
    .cmd = CMD,
    .usage = "scene SCENARIO.yaml --out FILE.nc [--seed N] [--no-noise | --pulses [--keep-iq "
             "SWEEP --iq-out FILE.nc]] [--json]",
    .about = "Synthesise a radar volume from a scenario (radar, atmosphere, rain cells, wind;\n"
             "docs/scenario.md): beam geometry on the 4/3-earth model, radar variables of\n"
             "the rain at every gate and temperature, attenuation and differential phase\n"
             "along each ray, Doppler velocity and width, estimator noise, and the truth\n"
             "behind every gate, written as one CF/Radial 1.4 netCDF-4 file (observed fields\n"
             "DBZ, ZDR, PHIDP, KDP, RHOHV, VEL, WIDTH, SNR, LDRH; truth_* fields).\n"
             "With --pulses the observed fields are estimated from synthetic I/Q pulses of\n"
             "every gate (pulse pair, R0/R1 width, dual-polarisation lag-0 products) instead\n"
             "of the noise formulas; --keep-iq SWEEP --iq-out FILE.nc also writes one\n"
             "sweep's I/Q.\n"
             "Synthetic volumes must be validated against real observations and local\n"
             "gauges before they inform operational rainfall estimates or warnings, and the\n"
             "local authority's practice takes precedence.",
    .examples = "  rainprint scene examples/valley-squall-line/scene.yaml --out squall.nc\n"
                "  rainprint scene examples/valley-squall-line/scene.yaml --out exact.nc --no-noise --json\n"
                "  rainprint scene examples/valley-squall-line/scene.yaml --out pulses.nc --pulses\n"
                "  rainprint scene examples/valley-squall-line/scene.yaml --out pulses.nc --pulses "
                "--keep-iq 0 --iq-out sweep0-iq.nc",
    .tables = {scene_opts},
    .titles = {"Options"},
    .max_positional = 1,
    .positional = "SCENARIO.yaml",
};

typedef struct {
  rp_cli_progress bar;
} progress_ctx;

static void on_progress(void *ctx, double fraction) {
  progress_ctx *p = ctx;
  rp_cli_progress_step(&p->bar, (size_t)lround(100.0 * fraction));
}

static void print_summary(const char *path, const char *out, const rp_volume *v) {
  const rp_volume_summary *s = &v->summary;
  const rp_scenario_radar *r = &v->scenario.radar;
  printf("Scene %s -> %s\n", path, out);
  printf("  radar %s, %s%s%.4g GHz, %zu sweeps x %zu rays x %zu gates (%.0f m), seed %llu%s\n",
         r->name, r->band[0] ? r->band : "", r->band[0] ? " band, " : "", r->frequency_ghz,
         v->n_sweeps, v->n_sweeps ? v->n_rays / v->n_sweeps : 0, v->n_gates, r->gate_spacing_m,
         v->seed, !v->noise ? ", no noise" : v->pulses ? ", pulse level" : "");
  printf("  gates simulated            %zu\n", s->gates);
  printf("  rain gates                 %zu\n", s->rain_gates);
  printf("  gates above sensitivity    %zu\n", s->observed_gates);
  printf("  largest path attenuation   %.2f dB (two-way, Zh)\n", s->max_pia_db);
  printf("  largest PhiDP              %.1f deg\n", s->max_phidp_deg);
  printf("  freezing level             %.0f m\n", v->freezing_level_m);
  printf("  time taken                 %.2f s\n", s->seconds);
}

static json_t *summary_json(const char *path, const char *out, const rp_volume *v) {
  const rp_volume_summary *s = &v->summary;
  const rp_scenario_radar *r = &v->scenario.radar;
  json_t *o = json_object();
  json_object_set_new(o, "scenario", rp_json_text(path));
  json_object_set_new(o, "out", rp_json_text(out));
  json_object_set_new(o, "radar", rp_json_text(r->name));
  json_object_set_new(o, "band", r->band[0] ? json_string(r->band) : json_null());
  json_object_set_new(o, "frequency_ghz", rp_json_real(r->frequency_ghz));
  json_object_set_new(o, "sweeps", json_integer((json_int_t)v->n_sweeps));
  json_object_set_new(o, "rays", json_integer((json_int_t)v->n_rays));
  json_object_set_new(o, "gates_per_ray", json_integer((json_int_t)v->n_gates));
  json_object_set_new(o, "seed", json_integer((json_int_t)v->seed));
  json_object_set_new(o, "noise", json_boolean(v->noise));
  json_object_set_new(o, "pulse_level", json_boolean(v->pulses));
  json_object_set_new(o, "pulses_per_ray", json_integer((json_int_t)r->pulses));
  json_object_set_new(o, "gates_simulated", json_integer((json_int_t)s->gates));
  json_object_set_new(o, "rain_gates", json_integer((json_int_t)s->rain_gates));
  json_object_set_new(o, "observed_gates", json_integer((json_int_t)s->observed_gates));
  json_object_set_new(o, "max_path_attenuation_db", rp_json_real(s->max_pia_db));
  json_object_set_new(o, "max_phidp_deg", rp_json_real(s->max_phidp_deg));
  json_object_set_new(o, "freezing_level_m", rp_json_real(v->freezing_level_m));
  json_object_set_new(o, "seconds", rp_json_real(s->seconds));
  json_object_set_new(o, "caution",
                      json_string("synthetic data: validate against real observations and "
                                  "local gauges; the local authority's practice takes "
                                  "precedence"));
  return o;
}

int rp_cmd_scene(int argc, char **argv) {
  rp_opts o;
  int rc = rp_opts_parse(&scene_cmd, argc, argv, &o);
  if (rc != RP_OPTS_GO_ON) return rc;
  if (o.n_pos != 1) return rp_cli_fail(CMD, RP_EINVAL, "give one SCENARIO.yaml (see --help)");
  if ((rc = rp_opts_required(&o, "out"))) return rc;
  const char *path = o.pos[0], *out = rp_opts_string(&o, "out", NULL);
  if ((rc = rp_cli_check_output(CMD, "out", out))) return rc;
  const int json = rp_opts_given(&o, "json");
  if ((rc = rp_opts_exclusive(&o, "pulses", "no-noise", NULL))) return rc;
  if ((rc = rp_opts_requires(&o, "keep-iq", "pulses"))) return rc;
  if ((rc = rp_opts_requires(&o, "keep-iq", "iq-out"))) return rc;
  if ((rc = rp_opts_requires(&o, "iq-out", "keep-iq"))) return rc;
  const char *iq_out = rp_opts_string(&o, "iq-out", NULL);
  if (iq_out != NULL) {
    if ((rc = rp_cli_check_output(CMD, "iq-out", iq_out))) return rc;
    if (strcmp(iq_out, out) == 0)
      return rp_cli_fail(CMD, RP_EINVAL, "--iq-out and --out name the same file '%s'", out);
  }

  rp_error err = {0};
  rp_scenario sc;
  char *text = NULL;
  if (rp_scenario_file_load(path, rp_cli_presets_dir(), &sc, &text, &err) != RP_OK)
    return rp_cli_fail_err(CMD, &err);

  rp_volume_options vo;
  rp_volume_options_from_scenario(&sc, &vo);
  if (rp_opts_given(&o, "seed")) vo.seed = (unsigned long long)rp_opts_long(&o, "seed", 1);
  if (rp_opts_given(&o, "no-noise")) vo.noise = false;
  if (rp_opts_given(&o, "threads")) vo.threads = (int)rp_opts_long(&o, "threads", 1);
  if (rp_opts_given(&o, "pulses")) {
    vo.pulses = true;
    vo.noise = true; /* pulse estimates are noisy by nature */
  }
  if (rp_opts_given(&o, "keep-iq")) {
    const long k = rp_opts_long(&o, "keep-iq", 0);
    if (k >= (long)sc.radar.n_elevations) {
      free(text);
      return rp_cli_fail(CMD, RP_EINVAL, "--keep-iq %ld: the scenario has %zu sweep%s (0 to %zu)",
                         k, (size_t)sc.radar.n_elevations, sc.radar.n_elevations == 1 ? "" : "s",
                         (size_t)sc.radar.n_elevations - 1);
    }
    vo.keep_iq = true;
    vo.keep_iq_sweep = (size_t)k;
  }

  rp_table_store *store = rp_table_store_alloc(rp_cli_tables_dir(), rp_cli_cache_dir());
  rp_radar_model *model = NULL;
  rp_volume_model *vm = NULL;
  rp_volume *vol = NULL;
  rp_radar_config rc_cfg;
  if (store == NULL) {
    rc = rp_cli_fail(CMD, RP_ENOMEM, "out of memory");
    goto done;
  }
  if (rp_volume_radar_config(&sc, &rc_cfg, &err) != RP_OK) {
    rc = rp_cli_fail_err(CMD, &err);
    goto done;
  }
  rc_cfg.source = rp_table_store_source(store);
  if (rp_radar_model_alloc(&rc_cfg, &model, &err) != RP_OK ||
      rp_volume_model_alloc(model, &sc, &vm, &err) != RP_OK) {
    rc = rp_cli_fail_err(CMD, &err);
    goto done;
  }
  progress_ctx pc;
  rp_cli_progress_start(&pc.bar, CMD, "% done", 100);
  vo.progress = on_progress;
  vo.progress_ctx = &pc;
  const rp_status st = rp_volume_synthesize(&sc, rp_volume_model_physics(vm), &vo, &vol, &err);
  rp_cli_progress_end(&pc.bar);
  if (st != RP_OK) {
    rc = rp_cli_fail_err(CMD, &err);
    goto done;
  }
  /* the I/Q first: the larger file, the likelier to meet a full disk */
  if (vol->iq_h != NULL && rp_volume_iq_save(vol, iq_out, &err) != RP_OK) {
    rc = rp_cli_fail_err(CMD, &err);
    goto done;
  }
  if (rp_volume_file_write(vol, out, text, &err) != RP_OK) {
    rc = rp_cli_fail_err(CMD, &err);
    goto done;
  }
  if (json) {
    json_t *js = summary_json(path, out, vol);
    json_object_set_new(js, "iq_out", vol->iq_h != NULL ? rp_json_text(iq_out) : json_null());
    if (vol->iq_h != NULL) json_object_set_new(js, "iq_sweep", json_integer((json_int_t)vol->iq_sweep));
    rc = rp_json_print(js);
  } else {
    print_summary(path, out, vol);
    if (vol->iq_h != NULL) printf("  I/Q of sweep %-14zu %s\n", vol->iq_sweep, iq_out);
  }
done:
  rp_volume_free(vol);
  rp_volume_model_free(vm);
  rp_radar_model_free(model);
  rp_table_store_free(store);
  free(text);
  return rc;
}
