/* bench_relate.c — time of `rainprint relate`'s library work for one band: draw a
 * 100,000-member ensemble of the default climate, compute every member's moments and
 * radar variables (fast path), fit all relations with their skill. Target: under 2 s.
 *
 * Uses the shipped C-band table (scattering/rainprint_C_10C.nc, default config); the
 * table load, plan and fast-path grid are timed separately (done once per run).
 * Usage: bench_relate [n_members [band]] (defaults 100000, C). Prints the times. */
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

#include <gsl/gsl_errno.h>

#include "rainprint/relate.h"
#include "rainprint/table.h"
#include "rainprint/table_file.h"

static double now_s(void) {
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static int die(const char *what, const rp_error *e) {
  fprintf(stderr, "bench_relate: %s: %s\n", what, e->msg);
  return 1;
}

int main(int argc, char **argv) {
  gsl_set_error_handler_off();
  const size_t n = argc > 1 ? (size_t)strtoul(argv[1], NULL, 10) : 100000;
  const char *band = argc > 2 ? argv[2] : "C";
  rp_error e = {0};
  rp_drop_config cfg;
  rp_drop_config_default(&cfg);
  if (rp_band_frequency_ghz(band, &cfg.freq_ghz, &e) != RP_OK) return die("band", &e);

  double t0 = now_s();
  rp_table *t = NULL;
  rp_table_origin origin;
  rp_gate_plan *plan = NULL;
  rp_gate_fast *fast = NULL;
  if (rp_table_obtain(&cfg, RP_SOURCE_DIR "/scattering", NULL, &t, &origin, &e) != RP_OK)
    return die("table", &e);
  if (rp_gate_plan_alloc(t, RP_DSD_DMIN_DEFAULT_MM, RP_DSD_DMAX_DEFAULT_MM, RP_KW2_DEFAULT,
                         &plan, &e) != RP_OK)
    return die("plan", &e);
  if (rp_gate_fast_alloc(plan, &fast, &e) != RP_OK) return die("fast path", &e);
  const double t_setup = now_s() - t0;

  rp_climate c;
  if (rp_climate_from_name(RP_CLIMATE_DEFAULT, &c, &e) != RP_OK) return die("climate", &e);
  rp_ensemble_member *m = malloc(n * sizeof *m);
  rp_relate_sample *s = malloc(n * sizeof *s);
  if (m == NULL || s == NULL) return 1;
  rp_relate_options o;
  rp_relate_options_default(&o);
  rp_relate_fit fits[RP_REL_COUNT];
  size_t nf = 0, nd = 0;

  t0 = now_s();
  if (rp_ensemble_draw(&c, n, 1, m, &e) != RP_OK) return die("draw", &e);
  const double t1 = now_s();
  if (rp_relate_ensemble_eval(plan, fast, m, n, s, &nd, &e) != RP_OK) return die("samples", &e);
  const double t2 = now_s();
  if (rp_relate_fit_eval(s, n, &o, fits, &nf, &e) != RP_OK) return die("fits", &e);
  const double t3 = now_s();

  printf("bench_relate: %zu members, %s band (%s table), %zu relations, %zu direct\n", n, band,
         rp_table_origin_name(origin), nf, nd);
  printf("  table + plan + fast grid  %.3f s (once per run)\n", t_setup);
  printf("  draw                      %.3f s\n", t1 - t0);
  printf("  moments + radar variables %.3f s (%.2f us per member)\n", t2 - t1,
         1e6 * (t2 - t1) / (double)n);
  printf("  fits + skill              %.3f s\n", t3 - t2);
  printf("  total (target < 2 s)      %.3f s  %s\n", t3 - t0 + t_setup,
         t3 - t0 + t_setup < 2.0 ? "OK" : "SLOW");
  free(m);
  free(s);
  rp_gate_fast_free(fast);
  rp_gate_plan_free(plan);
  rp_table_free(t);
  return 0;
}
