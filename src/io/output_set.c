/* output_set.c — output-path check and sets of outputs committed together
 * (see include/rainprint/output_set.h).
 *
 * Method: every temporary file comes from rp_tempfile_create (tempfile.c: beside the
 * final target, O_EXCL, existing mode kept). The commit runs in two phases: fsync of
 * every temporary file first (where a full disk or an I/O error surfaces while every
 * old output is still in place), then one rename(2) per output, in the order added.
 * Invariant: entries [0, committed) are in place; the others still have their
 * temporary file, which rp_output_set_free removes. */
#include "rainprint/output_set.h"

#include <errno.h>
#include <fcntl.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "tempfile.h"

enum { PATH_LEN = 4096 };

typedef struct {
  char what[64];
  char path[PATH_LEN], tmp[PATH_LEN];
} entry;

struct rp_output_set {
  entry *e;
  size_t n, cap, committed;
  bool done;
};

rp_status rp_output_check(const char *what, const char *path, rp_error *err) {
  if (what == NULL) what = "output";
  /* the folder first, so that the message names it rather than a temporary file */
  char target[PATH_LEN];
  if (path != NULL && path[0] != '\0' &&
      rp_tempfile_resolve(path, target, sizeof target, NULL) == RP_OK) {
    char *slash = strrchr(target, '/');
    if (slash != NULL) {
      if (slash == target) slash[1] = '\0'; else *slash = '\0';
      struct stat sb;
      if (stat(target, &sb) != 0)
        return rp_error_set(err, RP_EIO, "%s '%s': the folder '%s' does not exist or cannot be "
                            "reached: %s", what, path, target, strerror(errno));
      if (!S_ISDIR(sb.st_mode))
        return rp_error_set(err, RP_EIO, "%s '%s': '%s' is not a folder", what, path, target);
    }
  }
  char tmp[PATH_LEN];
  int fd = -1;
  RP_TRY(rp_tempfile_create(what, path, tmp, sizeof tmp, &fd, err));
  close(fd);
  unlink(tmp);
  return RP_OK;
}

rp_output_set *rp_output_set_alloc(void) { return calloc(1, sizeof(rp_output_set)); }

size_t rp_output_set_count(const rp_output_set *s) { return s ? s->n : 0; }

rp_status rp_output_set_add(rp_output_set *s, const char *what, const char *path,
                            const char **tmp_path, rp_error *err) {
  if (s == NULL || what == NULL || path == NULL || tmp_path == NULL)
    return rp_error_set(err, RP_EINVAL, "output set: NULL argument");
  if (s->done) return rp_error_set(err, RP_EINVAL, "output set: already committed");
  char target[PATH_LEN];
  RP_TRY(rp_tempfile_resolve(path, target, sizeof target, err));
  for (size_t i = 0; i < s->n; i++) {
    char other[PATH_LEN];
    if (rp_tempfile_resolve(s->e[i].path, other, sizeof other, NULL) == RP_OK &&
        strcmp(other, target) == 0)
      return rp_error_set(err, RP_EINVAL, "%s '%s': the same file as %s '%s'", what, path,
                          s->e[i].what, s->e[i].path);
  }
  if (s->n == s->cap) {
    const size_t cap = s->cap ? 2 * s->cap : 4;
    entry *e = realloc(s->e, cap * sizeof *e);
    if (e == NULL) return rp_error_set(err, RP_ENOMEM, "output set: out of memory");
    s->e = e;
    s->cap = cap;
  }
  entry *x = &s->e[s->n];
  snprintf(x->what, sizeof x->what, "%s", what);
  if (snprintf(x->path, sizeof x->path, "%s", path) >= (int)sizeof x->path)
    return rp_error_set(err, RP_EINVAL, "%s: path is too long: '%s'", what, path);
  (void)rp_tempfile_remove_stale(path);
  int fd = -1;
  RP_TRY(rp_tempfile_create(what, path, x->tmp, sizeof x->tmp, &fd, err));
  close(fd);
  if (strchr(x->tmp, '%') != NULL) {
    unlink(x->tmp);
    return rp_error_set(err, RP_EINVAL, "%s '%s': the folder name holds '%%', which the "
                        "picture library would expand; use another folder", what, path);
  }
  s->n++;
  *tmp_path = x->tmp;
  return RP_OK;
}

rp_status rp_output_set_commit(rp_output_set *s, rp_error *err) {
  if (s == NULL) return rp_error_set(err, RP_EINVAL, "output set: NULL set");
  if (s->done) return rp_error_set(err, RP_EINVAL, "output set: already committed");
  s->done = true;
  for (size_t i = 0; i < s->n; i++) {
    const int f = open(s->e[i].tmp, O_RDONLY | O_CLOEXEC);
    if (f < 0 || fsync(f) != 0) {
      const int e = errno;
      if (f >= 0) close(f);
      return rp_error_set(err, RP_EIO, "%s '%s': cannot flush the data to disk: %s (no "
                          "output was replaced)", s->e[i].what, s->e[i].path, strerror(e));
    }
    close(f);
  }
  for (size_t i = 0; i < s->n; i++) {
    char target[PATH_LEN];
    rp_status st = rp_tempfile_resolve(s->e[i].path, target, sizeof target, err);
    if (st != RP_OK) return st;
    if (rename(s->e[i].tmp, target) != 0) {
      const int e = errno;
      return rp_error_set(err, RP_EIO, "%s '%s': cannot rename the temporary file into "
                          "place: %s (%zu of %zu outputs were replaced)", s->e[i].what,
                          s->e[i].path, strerror(e), i, s->n);
    }
    s->committed = i + 1;
  }
  return RP_OK;
}

void rp_output_set_free(rp_output_set *s) {
  if (s == NULL) return;
  for (size_t i = s->committed; i < s->n; i++) unlink(s->e[i].tmp);
  free(s->e);
  free(s);
}
