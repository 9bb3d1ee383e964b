/* bench_table.c — time to build each shipped scattering table (80 diameters,
 * default shape and canting) at S, C and X band and 0/10/20/30 C.
 * Prints seconds per table and drops per second. Not run by ctest. */
#include <stdio.h>
#include <time.h>

#include <gsl/gsl_errno.h>

#include "rainprint/table.h"

static double now_s(void) {
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

int main(void) {
  gsl_set_error_handler_off();
  const char *bands[] = {"S", "C", "X"};
  const double temps[] = {0.0, 10.0, 20.0, 30.0};
  printf("%-4s %6s %10s %12s\n", "band", "T (C)", "seconds", "drops/s");
  for (int b = 0; b < 3; b++) {
    for (int i = 0; i < 4; i++) {
      rp_drop_config cfg;
      rp_drop_config_default(&cfg);
      rp_error err = {0};
      rp_band_frequency_ghz(bands[b], &cfg.freq_ghz, &err);
      cfg.temp_c = temps[i];
      rp_table *t = NULL;
      const double t0 = now_s();
      if (rp_table_build(&cfg, RP_TABLE_DMIN_DEFAULT_MM, RP_TABLE_DMAX_DEFAULT_MM,
                         RP_TABLE_DSTEP_DEFAULT_MM, &t, &err) != RP_OK) {
        fprintf(stderr, "bench_table: %s\n", err.msg);
        return 1;
      }
      const double dt = now_s() - t0;
      printf("%-4s %6.0f %10.3f %12.0f\n", bands[b], temps[i], dt, (double)t->n / dt);
      rp_table_free(t);
    }
  }
  return 0;
}
