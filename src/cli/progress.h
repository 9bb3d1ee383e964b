/* progress.h — a progress bar for long runs of the tool (curve steps, ensemble members,
 * relate phases): drawn on stderr only when stderr is a terminal (isatty(2)), redrawn at
 * most every 0.1 s, erased at the end; nothing at all when not on a terminal, so logs and
 * test output stay clean. State lives in the caller's struct (no globals). */
#ifndef RP_CLI_PROGRESS_H
#define RP_CLI_PROGRESS_H

#include <stddef.h>

typedef struct {
  const char *cmd, *what;
  size_t total, done;
  int on;           /* stderr is a terminal */
  int drawn;        /* something is on the line */
  double last_s;    /* monotonic time of the last redraw */
  double start_s;
} rp_cli_progress;

/* Start a bar of total steps named what ("values", "members"). */
void rp_cli_progress_start(rp_cli_progress *p, const char *cmd, const char *what, size_t total);
/* done steps of total are finished. */
void rp_cli_progress_step(rp_cli_progress *p, size_t done);
/* Erase the bar (call before printing anything else to stderr and at the end). */
void rp_cli_progress_end(rp_cli_progress *p);

#endif
