/* bench_gate.c — gates per second of the gate integrator on one thread: direct
 * integration (rp_gate_eval, analytic normalised gamma DSD) and the fast path
 * (rp_gate_fast_eval). Targets: >= 200,000 and >= 5,000,000 gates/s.
 *
 * The table is a Rayleigh-Gans spheroid table (0.1 to 8 mm, 0.1 mm step, C band,
 * Thurai shapes): the cost of both paths depends only on the number of diameters, not
 * on the values. DSD parameters are drawn beforehand (fixed-seed LCG) so that only the
 * integrator is timed. Usage: bench_gate [n_direct [n_fast]]. */
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

#include <gsl/gsl_errno.h>

#include "rainprint/dsd.h"
#include "rainprint/gate.h"
#include "rainprint/permittivity.h"
#include "rainprint/rayleigh.h"
#include "rainprint/scatter.h"
#include "rainprint/shape.h"

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

static double *column(size_t n) {
  double *p = calloc(n, sizeof *p);
  if (p == NULL) {
    fprintf(stderr, "bench_gate: out of memory\n");
    exit(1);
  }
  return p;
}

static rp_table *make_table(void) {
  const size_t n = 80;
  rp_table *t = rp_table_alloc(n);
  if (t == NULL) {
    fprintf(stderr, "bench_gate: out of memory\n");
    exit(1);
  }
  const double freq = 5.6;
  double complex eps;
  if (rp_water_permittivity(freq, 10.0, &eps, NULL) != RP_OK) exit(1);
  t->wavelength_mm = RP_C_MM_GHZ / freq;
  t->cfg.freq_ghz = freq;
  t->cfg.temp_c = 10.0;
  t->cfg.shape = RP_SHAPE_THURAI;
  const double k = 2.0 * M_PI / t->wavelength_mm;
  for (size_t i = 0; i < n; i++) {
    const double d = 0.1 + 0.1 * (double)i;
    rp_rayleigh_spheroid sp;
    t->d_mm[i] = d;
    if (rp_shape_axis_ratio(RP_SHAPE_THURAI, d, &t->axis_ratio[i], NULL) != RP_OK ||
        rp_rayleigh_spheroid_init(&sp, d, t->axis_ratio[i], t->wavelength_mm, eps, NULL) !=
            RP_OK)
      exit(1);
    const double complex fa = k * k * sp.alpha_a_mm3 / (4.0 * M_PI);
    const double complex fb = k * k * sp.alpha_b_mm3 / (4.0 * M_PI);
    const double complex c = fa * conj(fb);
    t->back_hh2_mm2[i] = creal(fa * conj(fa));
    t->back_vv2_mm2[i] = creal(fb * conj(fb));
    t->back_hv2_mm2[i] = 1e-3 * creal((fa - fb) * conj(fa - fb)); /* some canting */
    t->back_hhvv_re_mm2[i] = creal(c);
    t->back_hhvv_im_mm2[i] = cimag(c);
    t->fwd_hh_re_mm[i] = creal(fa);
    t->fwd_hh_im_mm[i] = cimag(fa);
    t->fwd_vv_re_mm[i] = creal(fb);
    t->fwd_vv_im_mm[i] = cimag(fb);
  }
  return t;
}

int main(int argc, char **argv) {
  gsl_set_error_handler_off();
  const size_t n_direct = argc > 1 ? (size_t)strtoul(argv[1], NULL, 10) : 400000;
  const size_t n_fast = argc > 2 ? (size_t)strtoul(argv[2], NULL, 10) : 20000000;
  rp_table *t = make_table();
  rp_gate_plan *p = NULL;
  rp_gate_fast *f = NULL;
  rp_error err = {0};
  double t0 = now_s();
  if (rp_gate_plan_alloc(t, 0.1, 8.0, RP_KW2_DEFAULT, &p, &err) != RP_OK) {
    fprintf(stderr, "bench_gate: %s\n", err.msg);
    return 1;
  }
  const double t_plan = now_s() - t0;
  t0 = now_s();
  if (rp_gate_fast_alloc(p, &f, &err) != RP_OK) {
    fprintf(stderr, "bench_gate: %s\n", err.msg);
    return 1;
  }
  const double t_fast_alloc = now_s() - t0;

  /* parameters drawn beforehand: Nw log-uniform in [1e2, 1e5], D0 in [0.3, 3.5] mm,
   * mu in [-1, 12], redrawn while the liquid water content
   * W = Nw pi rho_w D0^4 / 3.67^4 (g m^-3, rho_w = 1e-3 g mm^-3) exceeds 10 g m^-3 (a
   * physical rain; the DSD constructors refuse absurd water contents) */
  const size_t n_par = 4096;
  double *nw = column(n_par), *d0 = column(n_par), *mu = column(n_par);
  rp_dsd *dsd = calloc(n_par, sizeof *dsd);
  if (dsd == NULL) return 1;
  for (size_t i = 0; i < n_par; i++) {
    do {
      nw[i] = pow(10.0, 2.0 + 3.0 * uniform01());
      d0[i] = 0.3 + 3.2 * uniform01();
    } while (nw[i] * M_PI * 1e-3 * pow(d0[i], 4) / pow(3.67, 4) > 10.0);
    mu[i] = -1.0 + 13.0 * uniform01();
    if (rp_dsd_normalized_gamma_d0(&dsd[i], nw[i], d0[i], mu[i], &err) != RP_OK) {
      fprintf(stderr, "bench_gate: %s\n", err.msg);
      return 1;
    }
  }

  double sink = 0.0;
  rp_gate_result r;
  t0 = now_s();
  for (size_t i = 0; i < n_direct; i++) {
    if (rp_gate_eval(p, &dsd[i % n_par], &r, &err) != RP_OK) {
      fprintf(stderr, "bench_gate: %s\n", err.msg);
      return 1;
    }
    sink += r.zh_dbz;
  }
  const double t_direct = now_s() - t0;

  t0 = now_s();
  for (size_t i = 0; i < n_fast; i++) {
    const size_t j = i % n_par;
    if (rp_gate_fast_eval(f, nw[j], d0[j], mu[j], &r, &err) != RP_OK) {
      fprintf(stderr, "bench_gate: %s\n", err.msg);
      return 1;
    }
    sink += r.zh_dbz;
  }
  const double t_fast = now_s() - t0;

  printf("table: %zu diameters; plan: %zu nodes, %.2f ms; fast grid: %.1f ms\n", t->n,
         rp_gate_plan_nodes(p), 1e3 * t_plan, 1e3 * t_fast_alloc);
  printf("direct (rp_gate_eval, normalised gamma): %10.0f gates/s  (%zu gates, target 200000)\n",
         (double)n_direct / t_direct, n_direct);
  printf("fast   (rp_gate_fast_eval):              %10.0f gates/s  (%zu gates, target 5000000)\n",
         (double)n_fast / t_fast, n_fast);
  printf("(checksum %g)\n", sink / (double)(n_direct + n_fast));

  free(nw);
  free(d0);
  free(mu);
  free(dsd);
  rp_gate_fast_free(f);
  rp_gate_plan_free(p);
  rp_table_free(t);
  return 0;
}
