/* figfile.h — internal (uninstalled): the picture's output file, written whole or not at
 * all and checked after PLplot has closed it. Method in figfile.c. */
#ifndef RP_PLOT_FIGFILE_H
#define RP_PLOT_FIGFILE_H

#include <stddef.h>
#include <stdio.h>

#include "rainprint/status.h"

#define RP_FIGFILE_PATH_MAX 4096

/* The open temporary picture. fp is handed to PLplot (plsfile), which closes it; the
 * write and close errors are recorded here by the stream's callbacks. */
typedef struct {
  char tmp[RP_FIGFILE_PATH_MAX]; /* temporary file name */
  FILE *fp;                      /* stream for PLplot, NULL once closed */
  int fd;                        /* descriptor behind fp */
  int check_fd;                  /* second descriptor, to read the file back */
  int write_errno;               /* first errno of a failed write/fsync/close, 0 if none */
  int closed;                    /* the close callback ran */
} rp_figfile;

/* PLplot device ("pngcairo", "svgcairo", "pdfcairo") for the extension of path. */
rp_status rp_figfile_device(const char *path, const char **dev, rp_error *err);

/* Create the temporary file beside path's final target (symlinks followed) and open f->fp
 * on it. RP_EINVAL path too long; RP_EIO the file cannot be created (system's reason). */
rp_status rp_figfile_open(const char *path, rp_figfile *f, rp_error *err);

/* After PLplot closed f->fp (or without drawing, if it was never handed over): close what
 * is still open, then check that every write succeeded and that the file is complete.
 * On failure the temporary file is removed. RP_EIO (write error, with strerror) or
 * RP_EPLOT (incomplete file). */
rp_status rp_figfile_finish(const char *path, rp_figfile *f, rp_error *err);

/* Close and remove the temporary file (any state). */
void rp_figfile_abandon(rp_figfile *f);

#endif
