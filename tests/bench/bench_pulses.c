/* bench_pulses.c — gates per second of pulse-level synthesis plus all estimates
 * (rp_pulse_gate: M = 64 dual-polarisation pulses, pulse-pair, polarimetric and
 * spectral moments), with 1 and 2 threads, and the share of the time spent in FFTs.
 * Target: >= 200,000 gates/s on 2 cores, so that a 3.6-million-gate volume takes
 * under 30 s (the projection is printed).
 *
 * Gate inputs vary per gate (velocity, width, SNR, Z_DR, rho_hv, Phi_DP drawn beforehand
 * from a fixed-seed LCG) as in a volume; each gate draws from its own stream
 * (seed, rp_rng_key(RP_RNG_PULSES, gate, 0, 0)); one workspace per thread.
 * The FFT share is the time of the same transforms (two inverse of the synthesis
 * length, one forward of M per gate) executed alone, divided by the full time.
 * Usage: bench_pulses [n_gates [M]]. */
#include <complex.h>
#include <math.h>
#include <omp.h>
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

#include <fftw3.h>

#include "rainprint/pulse_estimators.h"

static double now_s(void) {
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static unsigned long long lcg_state = 12345u;
static double uniform01(void) {
  lcg_state = lcg_state * 6364136223846793005ull + 1442695040888963407ull;
  return (double)(lcg_state >> 11) * (1.0 / 9007199254740992.0);
}

static double thread_cpu_s(void) {
  struct timespec ts;
  clock_gettime(CLOCK_THREAD_CPUTIME_ID, &ts);
  return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* Wall time of the run; *cpu receives the CPU seconds summed over the threads. */
static double run(const rp_iq_params *gates, size_t n, int threads, double *checksum,
                  double *cpu) {
  int failed = 0;
  double sum = 0, cpu_sum = 0;
  const double t0 = now_s();
#pragma omp parallel num_threads(threads) reduction(+ : sum, cpu_sum) reduction(| : failed)
  {
    const double c0 = thread_cpu_s();
    rp_error err = {RP_OK, ""};
    rp_iq_workspace *ws = rp_iq_workspace_alloc(gates[0].n_pulses, &err);
    if (!ws) failed = 1;
#pragma omp for schedule(static)
    for (size_t g = 0; g < n; g++) {
      if (!ws) continue;
      rp_rng rng;
      rp_rng_init(&rng, 2026, rp_rng_key(RP_RNG_PULSES, g, 0, 0));
      rp_pulse_estimates e;
      if (rp_pulse_gate(ws, &gates[g], NULL, &rng, RP_WINDOW_HANN, &e, NULL, NULL, &err) != RP_OK) {
        failed = 1;
        continue;
      }
      sum += e.value[RP_PULSE_VELOCITY_PP];
    }
    rp_iq_workspace_free(ws);
    cpu_sum += thread_cpu_s() - c0;
  }
  const double dt = now_s() - t0;
  *cpu = cpu_sum;
  if (failed) {
    fprintf(stderr, "bench_pulses: a gate failed\n");
    exit(1);
  }
  *checksum = sum;
  return dt;
}

/* The transforms alone: per gate two inverse FFTs of nsyn points and one forward of m. */
static double fft_only(size_t n, size_t nsyn, size_t m) {
  fftw_complex *a = fftw_malloc(nsyn * sizeof *a), *b = fftw_malloc(m * sizeof *b);
  fftw_plan pi = fftw_plan_dft_1d((int)nsyn, a, a, FFTW_BACKWARD, FFTW_ESTIMATE);
  fftw_plan pf = fftw_plan_dft_1d((int)m, b, b, FFTW_FORWARD, FFTW_ESTIMATE);
  for (size_t k = 0; k < nsyn; k++) a[k] = 1e-3 * (double)k;
  for (size_t k = 0; k < m; k++) b[k] = 1e-3 * (double)k;
  const double t0 = now_s();
  for (size_t g = 0; g < n; g++) {
    fftw_execute(pi);
    fftw_execute(pi);
    fftw_execute(pf);
    a[0] *= 0.5;  /* keep values bounded */
    b[0] *= 0.5;
  }
  const double dt = now_s() - t0;
  fftw_destroy_plan(pi);
  fftw_destroy_plan(pf);
  fftw_free(a);
  fftw_free(b);
  return dt;
}

int main(int argc, char **argv) {
  const size_t n = argc > 1 ? (size_t)strtoull(argv[1], NULL, 10) : 400000;
  const size_t m = argc > 2 ? (size_t)strtoull(argv[2], NULL, 10) : 64;
  rp_iq_params *gates = malloc(n * sizeof *gates);
  if (!gates || n == 0 || m < 2) {
    fprintf(stderr, "bench_pulses: bad arguments or out of memory\n");
    return 1;
  }
  /* S band-like demo: lambda 107 mm, T_s 1 ms -> v_a = 26.75 m/s; widths 1-5 m/s */
  for (size_t g = 0; g < n; g++) {
    rp_iq_params p = {20 + 30 * uniform01(), 3 * uniform01(), 0.9 + 0.1 * uniform01(),
                      180 * uniform01(), -25 + 50 * uniform01(), 1 + 4 * uniform01(),
                      3 + 27 * uniform01(), m, 1e-3, 107.0};
    gates[g] = p;
  }
  double c1, c2, cpu1, cpu2;
  run(gates, n < 2000 ? n : 2000, 2, &c1, &cpu1); /* warm-up (plans, pages) */
  const double t1 = run(gates, n, 1, &c1, &cpu1);
  const double t2 = run(gates, n, 2, &c2, &cpu2);
  /* synthesis length of these gates: smallest power of two >= M (widths are broad) */
  size_t nsyn = 1;
  while (nsyn < m) nsyn <<= 1;
  const double c0 = thread_cpu_s();
  fft_only(n, nsyn, m);
  const double tf = thread_cpu_s() - c0;
  printf("bench_pulses: %zu gates, M = %zu dual-pol pulses, all estimates (Hann periodogram)\n",
         n, m);
  printf("  1 thread : %10.0f gates/s (wall)   %10.0f gates per CPU-second\n", (double)n / t1,
         (double)n / cpu1);
  printf("  2 threads: %10.0f gates/s (wall)   %10.0f gates per CPU-second (target >= 200000 "
         "gates/s)\n", (double)n / t2, (double)n / cpu2);
  printf("  2 free cores would give %.0f gates/s (2 x the per-CPU-second rate; the wall rates\n"
         "  fall short of it when other processes share the cores: check the load average)\n",
         2 * (double)n / cpu2);
  printf("  FFT share (CPU time, 1 thread): %.1f %% (%.0f ns of %.0f ns per gate)\n",
         100 * tf / cpu1, 1e9 * tf / (double)n, 1e9 * cpu1 / (double)n);
  printf("  3.6 million gates at 2 threads: %.1f s wall here, %.1f s on 2 free cores "
         "(target < 30 s)\n", 3.6e6 * t2 / (double)n, 3.6e6 * cpu2 / (2 * (double)n));
  printf("  checksum %.6g %.6g (identical: thread-count independent)\n", c1, c2);
  free(gates);
  fftw_cleanup();
  return 0;
}
