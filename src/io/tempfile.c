/* tempfile.c — temporary files beside an output, for whole-or-nothing writes
 * (see tempfile.h).
 *
 * Method: the name is "<path>.tmp<pid>-<k>"; open(O_WRONLY | O_CREAT | O_EXCL, 0666)
 * either creates it (then it is ours: no other process or thread holds that name) or
 * fails with EEXIST, and the next k is tried. Mode 0666 lets the umask decide the
 * permissions, as for any new file; rename() in the same folder then replaces the output
 * atomically. */
#include "tempfile.h"

#include <errno.h>
#include <fcntl.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>

enum { TEMPFILE_ATTEMPTS = 100 };

rp_status rp_tempfile_create(const char *what, const char *path, char *tmp, size_t n,
                             int *fd, rp_error *err) {
  for (int attempt = 0; attempt < TEMPFILE_ATTEMPTS; attempt++) {
    int len = snprintf(tmp, n, "%s.tmp%ld-%d", path, (long)getpid(), attempt);
    if (len < 0 || (size_t)len >= n)
      return rp_error_set(err, RP_EINVAL, "%s: path is too long (%zu characters): '%s'", what,
                          strlen(path), path);
    int f = open(tmp, O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, 0666);
    if (f >= 0) {
      *fd = f;
      return RP_OK;
    }
    if (errno != EEXIST)
      return rp_error_set(err, RP_EIO, "%s '%s': cannot create temporary file '%s': %s",
                          what, path, tmp, strerror(errno));
  }
  return rp_error_set(err, RP_EIO, "%s '%s': no free temporary file name", what, path);
}

rp_status rp_tempfile_commit(const char *what, const char *tmp, const char *path,
                             rp_error *err) {
  if (rename(tmp, path) != 0) {
    const int e = errno;
    unlink(tmp);
    return rp_error_set(err, RP_EIO, "%s '%s': cannot rename the temporary file into place: %s",
                        what, path, strerror(e));
  }
  return RP_OK;
}
