/* progress.c — the terminal progress bar (see progress.h). */
#include "cli/progress.h"

#include <stdio.h>
#include <time.h>
#include <unistd.h>

#define BAR_WIDTH 30
#define REDRAW_S 0.1 /* a human does not see faster updates; fewer writes to the tty */

static double now_s(void) {
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

void rp_cli_progress_start(rp_cli_progress *p, const char *cmd, const char *what, size_t total) {
  p->cmd = cmd;
  p->what = what;
  p->total = total;
  p->done = 0;
  p->on = isatty(STDERR_FILENO) && total > 1;
  p->drawn = 0;
  p->start_s = p->last_s = now_s();
}

void rp_cli_progress_step(rp_cli_progress *p, size_t done) {
  p->done = done;
  if (!p->on) return;
  const double t = now_s();
  if (done < p->total && t - p->last_s < REDRAW_S) return;
  p->last_s = t;
  const size_t fill = p->total ? (BAR_WIDTH * done) / p->total : BAR_WIDTH;
  char bar[BAR_WIDTH + 1];
  for (size_t i = 0; i < BAR_WIDTH; i++) bar[i] = i < fill ? '#' : '.';
  bar[BAR_WIDTH] = '\0';
  fprintf(stderr, "\r%s [%s] %zu/%zu %s, %.0f s", p->cmd, bar, done, p->total, p->what,
          t - p->start_s);
  fflush(stderr);
  p->drawn = 1;
}

void rp_cli_progress_end(rp_cli_progress *p) {
  if (p->on && p->drawn) {
    fprintf(stderr, "\r%*s\r", BAR_WIDTH + 60, "");
    fflush(stderr);
  }
  p->drawn = 0;
}
