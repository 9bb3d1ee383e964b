/* signal_internal.h — internal (uninstalled) parts shared by the signal/ modules: the
 * I/Q workspace layout and the serialised FFTW planner (fft_plan.c). */
#ifndef RP_SIGNAL_INTERNAL_H
#define RP_SIGNAL_INTERNAL_H

#include <complex.h>
#include <stddef.h>

#include <fftw3.h>

#include "rainprint/iq.h"
#include "rainprint/pulse_estimators.h"

/* Inverse transforms of power-of-two sizes 2^0 .. 2^(RP_IQ_LOG2_CAP_MAX). */
#define RP_IQ_LOG2_CAP_MAX 20

/* Ziggurat tables for standard normal deviates (iq.c): layer edges x[0..128] and
 * f(x) = exp(-x^2/2) at them. */
#define RP_ZIG_LAYERS 128
typedef struct {
  double x[RP_ZIG_LAYERS + 1], f[RP_ZIG_LAYERS + 1];
} rp_zig_table;

struct rp_iq_workspace {
  rp_zig_table zig;           /* read-only after allocation */
  size_t max_pulses;
  size_t n_cap;               /* largest synthesis length (power of two) */
  fftw_complex *x, *y;        /* n_cap: spectral coefficients -> time series */
  double *dens;               /* n_cap: sampled spectral density */
  fftw_complex *h, *v;        /* max_pulses: samples for rp_pulse_gate */
  fftw_complex *fx;           /* max_pulses: windowed samples -> periodogram */
  double *win, *pgram;        /* max_pulses */
  fftw_plan inv[RP_IQ_LOG2_CAP_MAX + 1]; /* in-place backward plans on x, by log2 size */
  fftw_plan fwd;              /* in-place forward plan of size fwd_n on fx */
  size_t fwd_n;               /* 0: none yet */
  int win_kind;               /* window in win[] (-1: none yet) */
  double win_sum2;            /* sum of w^2 */
  double win_var_bins2;       /* second moment of the window's spectral kernel, bins^2 */
};

/* A standard normal deviate from rng by the ziggurat method with tables z (iq.c). */
double rp_signal_normal(const rp_zig_table *z, rp_rng *rng);

/* Ziggurat tables (for tests: the same as a workspace's). */
void rp_signal_zig_setup(rp_zig_table *z);

/* FFTW plan creation and destruction under one process-wide mutex (fft_plan.c):
 * FFTW's planner is not thread-safe. NULL when FFTW cannot make the plan. */
fftw_plan rp_fft_plan_1d(int n, fftw_complex *in, fftw_complex *out, int sign);
void rp_fft_destroy(fftw_plan plan);   /* NULL ok */

/* Window w (n values) of kind k, with its sum of squares and the second moment (bins^2)
 * of its spectral kernel |W(f)|^2 / sum w^2 over one period. */
void rp_signal_window(rp_pulse_window k, size_t n, double *w, double *sum2,
                      double *var_bins2);

#endif
