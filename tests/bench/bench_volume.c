/* bench_volume.c — gates per second of the volume synthesis (rp_volume_synthesize) for
 * a 360-ray x 1000-gate x 10-elevation volume (3.6 million gates) at C band, without
 * and with beam filling, and the time of the netCDF write. Targets: >= 2,000,000
 * gates/s without beam filling (excluding the write); end to end with the write under
 * 10 s; memory under 2 GB (the volume's fields are reported). Then the same volume at
 * pulse level (options.pulses: M = 64 I/Q pulses synthesised and estimated per gate
 * above sensitivity, without beam filling): target under 30 s on 2 cores; the rate per
 * CPU-second is printed too, since other processes may share the cores.
 *
 * The scene (invented): a stratiform background with three convective cells and a
 * squall line, a vortex and turbulence, noise on. Tables come from the shipped folder
 * and the cache (RAINPRINT_CACHE, else a folder in /tmp); the cache warm-up is timed
 * separately. Usage: bench_volume [out.nc [beam_samples]]. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <gsl/gsl_errno.h>

#include "rainprint/table_file.h"
#include "rainprint/volume.h"
#include "rainprint/volume_file.h"
#include "rainprint/volume_model.h"

static double now_s(void) {
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* CPU time of the process (all threads): the rate per core-second does not depend on
 * what else the machine runs, the wall rate does. */
static double cpu_s(void) {
  struct timespec ts;
  clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &ts);
  return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static void scene(rp_scenario *s) {
  rp_scenario_default(s);
  snprintf(s->radar.name, sizeof s->radar.name, "%s", "Bench Moor C");
  s->radar.gates = 1000;
  s->radar.gate_spacing_m = 150.0;
  s->radar.n_elevations = 10;
  const double el[10] = {0.5, 1.0, 1.5, 2.0, 3.0, 4.0, 5.5, 7.0, 9.0, 12.0};
  memcpy(s->radar.elevations_deg, el, sizeof el);
  s->radar.measures_ldr = true;
  s->has_background = true;
  s->bg_nw_m3_mm = 3000.0;
  s->bg_d0_mm = 1.2;
  s->bg_mu = 3.0;
  const rp_cell cells[4] = {
      {RP_CELL_GAUSSIAN, 30.0, 40.0, 6.0, 0, 0, 0, 20000.0, 2.2, 2.0},
      {RP_CELL_GAUSSIAN, -50.0, 10.0, 4.0, 0, 0, 0, 15000.0, 2.6, 1.0},
      {RP_CELL_GAUSSIAN, 10.0, -70.0, 8.0, 0, 0, 0, 8000.0, 1.8, 4.0},
      {RP_CELL_LINE, -20.0, -30.0, 0, 80.0, 6.0, 45.0, 12000.0, 2.0, 2.0}};
  memcpy(s->cells, cells, sizeof cells);
  s->n_cells = 4;
  s->wind.u_ms = 8.0;
  s->wind.v_ms = -3.0;
  s->wind.has_vortex = true;
  s->wind.vortex_x_km = 30.0;
  s->wind.vortex_y_km = 40.0;
  s->wind.vortex_radius_km = 3.0;
  s->wind.vortex_peak_ms = 20.0;
  s->wind.turbulence_ms = 1.0;
}

int main(int argc, char **argv) {
  gsl_set_error_handler_off();
  const char *out = argc > 1 ? argv[1] : "/tmp/bench_volume.nc";
  const int nb = argc > 2 ? atoi(argv[2]) : 2;
  const char *cache = getenv("RAINPRINT_CACHE");
  if (cache == NULL) cache = "/tmp/rainprint-bench-cache";
  rp_error err = {0};
  rp_scenario s;
  scene(&s);
  rp_table_store *store = rp_table_store_alloc(RP_SOURCE_DIR "/scattering", cache);
  rp_radar_config c;
  rp_radar_model *m = NULL;
  rp_volume_model *vm = NULL;
  rp_volume *v = NULL;
  int rc = 1;
  if (store == NULL || rp_volume_radar_config(&s, &c, &err) != RP_OK) goto done;
  c.source = rp_table_store_source(store);
  if (rp_radar_model_alloc(&c, &m, &err) != RP_OK) goto done;
  double t0 = now_s();
  if (rp_volume_model_alloc(m, &s, &vm, &err) != RP_OK) goto done;
  printf("cache warm-up (tables, plans, fast paths): %.2f s\n", now_s() - t0);
  rp_volume_options o;
  for (int pass = 0; pass < 2; pass++) {
    s.beam_samples = pass == 0 ? 1 : nb;
    rp_volume_options_from_scenario(&s, &o);
    t0 = now_s();
    const double c0 = cpu_s();
    if (rp_volume_synthesize(&s, rp_volume_model_physics(vm), &o, &v, &err) != RP_OK) goto done;
    const double t1 = now_s() - t0, c1 = cpu_s() - c0;
    printf("beam_samples %d: %zu gates in %.3f s = %.0f gates/s wall, %.0f gates per CPU "
           "second (%zu with rain, %zu observed, max PIA %.1f dB, max PhiDP %.0f deg)\n",
           s.beam_samples, v->summary.gates, t1, (double)v->summary.gates / t1,
           (double)v->summary.gates / c1,
           v->summary.rain_gates, v->summary.observed_gates, v->summary.max_pia_db,
           v->summary.max_phidp_deg);
    if (pass == 0) {
      size_t nf = 0;
      for (int f = 0; f < RP_VF_COUNT; f++) nf += v->field[f] != NULL;
      printf("fields in memory: %zu x %zu gates x 4 bytes = %.0f MB\n", nf, v->summary.gates,
             (double)nf * (double)v->summary.gates * 4.0 / 1e6);
      const double t2 = now_s();
      if (rp_volume_file_write(v, out, "bench scenario", &err) != RP_OK) goto done;
      const double tw = now_s() - t2;
      printf("netCDF write (deflate 1): %.2f s; end to end (synthesis + write) %.2f s\n", tw,
             t1 + tw);
      const double t3 = now_s();
      if (rp_volume_file_write_level(v, out, "bench scenario", 0, &err) != RP_OK) goto done;
      printf("netCDF write (no compression): %.2f s\n", now_s() - t3);
    }
    rp_volume_free(v);
    v = NULL;
  }
  {
    s.beam_samples = 1;
    rp_volume_options_from_scenario(&s, &o);
    o.pulses = true;
    o.noise = true;
    t0 = now_s();
    const double c0 = cpu_s();
    if (rp_volume_synthesize(&s, rp_volume_model_physics(vm), &o, &v, &err) != RP_OK) goto done;
    const double t1 = now_s() - t0, c1 = cpu_s() - c0;
    printf("pulse level (M = %d): %zu gates (%zu observed, synthesised) in %.2f s = %.0f "
           "gates/s wall, %.0f gates per CPU second, %.0f observed gates per CPU second "
           "(target < 30 s on 2 cores)\n",
           s.radar.pulses, v->summary.gates, v->summary.observed_gates, t1,
           (double)v->summary.gates / t1, (double)v->summary.gates / c1,
           (double)v->summary.observed_gates / c1);
    rp_volume_free(v);
    v = NULL;
  }
  rc = 0;
done:
  if (rc != 0) fprintf(stderr, "bench_volume: %s\n", err.msg);
  rp_volume_free(v);
  rp_volume_model_free(vm);
  rp_radar_model_free(m);
  rp_table_store_free(store);
  return rc;
}
