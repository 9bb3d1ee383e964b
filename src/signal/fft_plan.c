/* fft_plan.c — FFTW plan creation and destruction serialised by one process-wide mutex.
 *
 * FFTW's planner keeps process-wide state (wisdom, the planner itself), so fftw_plan_*
 * and fftw_destroy_plan must never run in two threads at once, while fftw_execute* on
 * distinct buffers may (FFTW 3.3 manual, sec. 5.4 "Thread safety"). Workspaces of the
 * signal modules may be allocated, and make plans for new sizes, inside OpenMP regions;
 * this mutex is therefore the single piece of mutable global state of rainprint,
 * mirroring the planner's own. Plans use FFTW_ESTIMATE: planning is fast and does not
 * touch the arrays. */
#include <pthread.h>

#include "signal/signal_internal.h"

static pthread_mutex_t rp_fft_planner_lock = PTHREAD_MUTEX_INITIALIZER;

fftw_plan rp_fft_plan_1d(int n, fftw_complex *in, fftw_complex *out, int sign) {
  pthread_mutex_lock(&rp_fft_planner_lock);
  fftw_plan p = fftw_plan_dft_1d(n, in, out, sign, FFTW_ESTIMATE);
  pthread_mutex_unlock(&rp_fft_planner_lock);
  return p;
}

void rp_fft_destroy(fftw_plan plan) {
  if (!plan) return;
  pthread_mutex_lock(&rp_fft_planner_lock);
  fftw_destroy_plan(plan);
  pthread_mutex_unlock(&rp_fft_planner_lock);
}
