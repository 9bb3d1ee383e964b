/* tempfile.h — internal (uninstalled) helpers for outputs written whole or not at all:
 * a temporary file created beside the output, renamed over it when complete.
 *
 * The temporary file is created with open(O_CREAT | O_EXCL, 0666), so it is ours and
 * gets the permissions any new file gets under the process umask (mkstemp() would give
 * 0600, and the output would keep them after the rename). Used by the picture writer
 * (plot.c) and the relate sample CSV (relate.c). Method in tempfile.c. */
#ifndef RP_IO_TEMPFILE_H
#define RP_IO_TEMPFILE_H

#include <stddef.h>

#include "rainprint/status.h"

/* Create "<path>.tmp<pid>-<k>" (the first k in 0..99 not taken) and open it for
 * writing. tmp (n bytes, caller-owned) receives the name, *fd the open descriptor,
 * which the caller closes. what names the output in messages ("picture", "relate CSV").
 * Returns RP_OK; RP_EINVAL when the name does not fit in n bytes; RP_EIO when the file
 * cannot be created (e.g. the folder does not exist) or no name is free. */
rp_status rp_tempfile_create(const char *what, const char *path, char *tmp, size_t n,
                             int *fd, rp_error *err);

/* Rename the finished temporary file tmp over path; on failure remove tmp.
 * Returns RP_OK or RP_EIO ("<what> '<path>': cannot rename the temporary file into
 * place: <strerror>"). */
rp_status rp_tempfile_commit(const char *what, const char *tmp, const char *path,
                             rp_error *err);

#endif
