/* bench_tmatrix.c — speed of the T-matrix: solutions per second at S, C and X band
 * for D = 1..8 mm with the Brandes et al. (2002) axis ratios (rp_shape_axis_ratio) and
 * the water permittivity at 10 C (rp_water_permittivity), amplitude evaluations per
 * second, and the cost of a C-band table of 80 diameters 0.1..8 mm with 2 x 300
 * amplitude evaluations per drop (a stand-in for the canting average). Built, not run
 * by ctest. */
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <time.h>

#include <gsl/gsl_errno.h>

#include "rainprint/permittivity.h"
#include "rainprint/scatter.h"
#include "rainprint/shape.h"
#include "rainprint/tmatrix.h"

#define TEMP_C 10.0

static double now_s(void) {
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static double axis_ratio(double d) {
  double r = 1.0;
  (void)rp_shape_axis_ratio(RP_SHAPE_BRANDES, d, &r, NULL); /* d in (0, 8]: always OK */
  return r;
}

/* Refractive index of water at freq_ghz and TEMP_C (both inside the model's range). */
static double complex water_index(double freq_ghz) {
  double complex eps = 1.0;
  (void)rp_water_permittivity(freq_ghz, TEMP_C, &eps, NULL);
  return rp_water_refractive_index(eps);
}

int main(void) {
  gsl_set_error_handler_off();
  const struct {
    const char *name;
    double freq_ghz;
  } bands[] = {{"S", 2.8}, {"C", 5.6}, {"X", 9.4}};
  rp_tmatrix_ws *ws = rp_tmatrix_ws_alloc(60);
  if (ws == NULL) {
    fprintf(stderr, "bench_tmatrix: out of memory\n");
    return 1;
  }
  rp_error err = {0};
  for (size_t b = 0; b < sizeof bands / sizeof bands[0]; b++) {
    const double lam = rp_wavelength_mm(bands[b].freq_ghz);
    const double complex m = water_index(bands[b].freq_ghz);
    int count = 0, nmax_max = 0;
    const double t0 = now_s();
    double t1 = t0;
    while (t1 - t0 < 0.5) {
      for (int i = 0; i < 8; i++) {
        const double d = 1.0 + i;
        if (rp_tmatrix_solve(ws, d, axis_ratio(d), lam, m, NULL, &err) != RP_OK) {
          fprintf(stderr, "bench_tmatrix: %s\n", err.msg);
          rp_tmatrix_ws_free(ws);
          return 1;
        }
        if (rp_tmatrix_nmax(ws) > nmax_max) nmax_max = rp_tmatrix_nmax(ws);
        count++;
      }
      t1 = now_s();
    }
    printf("%s band (%.1f GHz): %.0f solutions/s (D = 1..8 mm, largest n_max %d)\n",
           bands[b].name, bands[b].freq_ghz, count / (t1 - t0), nmax_max);
    /* amplitude evaluations at the largest drop */
    const double k_inc[3] = {0.8, 0.0, 0.6};
    double k_sca[3];
    double complex s[2][2], acc = 0.0;
    int namp = 0;
    const double a0 = now_s();
    double a1 = a0;
    while (a1 - a0 < 0.3) {
      for (int j = 0; j < 1000; j++) {
        const double th = 0.003 * j, ph = 0.007 * j;
        k_sca[0] = sin(th) * cos(ph);
        k_sca[1] = sin(th) * sin(ph);
        k_sca[2] = cos(th);
        rp_tmatrix_amplitude(ws, k_inc, k_sca, s);
        acc += s[0][0];
      }
      namp += 1000;
      a1 = now_s();
    }
    printf("%s band: %.3g amplitude evaluations/s at D = 8 mm (n_max %d; checksum %.3g)\n",
           bands[b].name, namp / (a1 - a0), rp_tmatrix_nmax(ws), cabs(acc));
  }
  /* C-band table: 80 diameters, 300 orientations x (forward + back) each */
  {
    const double lam = rp_wavelength_mm(5.6);
    const double complex m = water_index(5.6);
    const double t0 = now_s();
    double complex acc = 0.0;
    for (int i = 0; i < 80; i++) {
      const double d = 0.1 + (8.0 - 0.1) * i / 79.0;
      if (rp_tmatrix_solve(ws, d, axis_ratio(d), lam, m, NULL, &err) != RP_OK) {
        fprintf(stderr, "bench_tmatrix: %s\n", err.msg);
        rp_tmatrix_ws_free(ws);
        return 1;
      }
      for (int j = 0; j < 300; j++) {
        const double beta = 0.002 * j;
        const double kin[3] = {cos(beta), 0.0, sin(beta)};
        const double kb[3] = {-kin[0], -kin[1], -kin[2]};
        double complex s[2][2];
        rp_tmatrix_amplitude(ws, kin, kin, s);
        acc += s[1][1];
        rp_tmatrix_amplitude(ws, kin, kb, s);
        acc += s[1][1];
      }
    }
    printf("C-band table, 80 diameters x 600 amplitudes, one thread: %.3f s (checksum %.3g)\n",
           now_s() - t0, cabs(acc));
  }
  rp_tmatrix_ws_free(ws);
  return 0;
}
