/* tempfile.c — temporary files beside an output, for whole-or-nothing writes
 * (see tempfile.h).
 *
 * Method: the output is first resolved through symlinks (readlink, relative targets
 * taken from the link's folder), so the temporary file lives in the target's folder
 * and rename() replaces the target atomically (a rename across folders or over the
 * link itself would replace the link by a plain file). open(O_WRONLY | O_CREAT |
 * O_EXCL, 0666) either creates the name (then it is ours: no other process or thread
 * holds it) or fails with EEXIST, and the next k is tried. Mode 0666 lets the umask
 * decide the permissions of a new output; an existing target's mode is copied with
 * fchmod(). The commit fsync()s the finished file before the rename: with delayed
 * allocation a full disk is often reported only there, and a rename of unflushed data
 * can leave an empty file after a crash. Stale temporary files are recognised by the
 * pid in their name (kill(pid, 0) fails with ESRCH). */
#include "tempfile.h"

#include <dirent.h>
#include <errno.h>
#include <fcntl.h>
#include <limits.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

enum { TEMPFILE_ATTEMPTS = 100, MAX_LINKS = 40, NAME_MAX_LEN = 4096 };

static const char *base_of(const char *path) {
  const char *slash = strrchr(path, '/');
  return slash ? slash + 1 : path;
}

bool rp_tempfile_is_temp_name(const char *path) {
  return path != NULL && strncmp(base_of(path), RP_TEMPFILE_PREFIX,
                                 sizeof RP_TEMPFILE_PREFIX - 1) == 0;
}

rp_status rp_tempfile_resolve(const char *path, char *out, size_t n, rp_error *err) {
  char cur[NAME_MAX_LEN], link[NAME_MAX_LEN];
  if (snprintf(cur, sizeof cur, "%s", path) >= (int)sizeof cur)
    return rp_error_set(err, RP_EINVAL, "output path is too long (%zu characters)",
                        strlen(path));
  for (int hop = 0;; hop++) {
    struct stat st;
    if (lstat(cur, &st) != 0 || !S_ISLNK(st.st_mode)) break; /* missing or not a link */
    if (hop == MAX_LINKS)
      return rp_error_set(err, RP_EINVAL, "'%s': too many levels of symbolic links", path);
    const ssize_t len = readlink(cur, link, sizeof link - 1);
    if (len < 0) break;
    link[len] = '\0';
    if (link[0] == '/' || strchr(cur, '/') == NULL) {
      memmove(cur, link, (size_t)len + 1);
    } else { /* relative target: from the folder of the link */
      char *slash = strrchr(cur, '/');
      const size_t dir_len = (size_t)(slash - cur) + 1;
      if (dir_len + (size_t)len + 1 > sizeof cur)
        return rp_error_set(err, RP_EINVAL, "'%s': link target path is too long", path);
      memcpy(cur + dir_len, link, (size_t)len + 1);
    }
  }
  if (snprintf(out, n, "%s", cur) >= (int)n)
    return rp_error_set(err, RP_EINVAL, "output path is too long (%zu characters)",
                        strlen(cur));
  return RP_OK;
}

/* "<dir>/" of path (empty for a bare name) and the safe form of its base name. */
static void split_safe(const char *path, char *dir, size_t dn, char *safe, size_t sn) {
  const char *base = base_of(path);
  snprintf(dir, dn, "%.*s", (int)(base - path), path);
  size_t j = 0;
  for (const char *p = base; *p && j + 1 < sn; p++) {
    const unsigned char c = (unsigned char)*p;
    const bool ok = (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') ||
                    (c >= '0' && c <= '9') || c == '.' || c == '_' || c == '-';
    safe[j++] = ok ? (char)c : '_';
  }
  safe[j] = '\0';
}

rp_status rp_tempfile_create(const char *what, const char *path, char *tmp, size_t n,
                             int *fd, rp_error *err) {
  if (path == NULL || path[0] == '\0' || tmp == NULL || fd == NULL)
    return rp_error_set(err, RP_EINVAL, "%s: empty or NULL output name", what);
  if (rp_tempfile_is_temp_name(path))
    return rp_error_set(err, RP_EINVAL, "%s '%s': names starting with '%s' are rainprint's "
                        "temporary files; choose another name", what, path,
                        RP_TEMPFILE_PREFIX);
  char target[NAME_MAX_LEN], dir[NAME_MAX_LEN], safe[256];
  RP_TRY(rp_tempfile_resolve(path, target, sizeof target, err));
  struct stat st;
  const bool exists = stat(target, &st) == 0;
  if (exists && !S_ISREG(st.st_mode))
    return rp_error_set(err, RP_EINVAL, "%s '%s': exists and is not a regular file (%s)",
                        what, path, S_ISDIR(st.st_mode) ? "a directory" : "a device, FIFO or "
                        "socket");
  split_safe(target, dir, sizeof dir, safe, sizeof safe);
  for (int attempt = 0; attempt < TEMPFILE_ATTEMPTS; attempt++) {
    int len = snprintf(tmp, n, "%s%s%ld-%d-%s", dir, RP_TEMPFILE_PREFIX, (long)getpid(),
                       attempt, safe);
    if (len < 0 || (size_t)len >= n)
      return rp_error_set(err, RP_EINVAL, "%s: path is too long (%zu characters) for its "
                          "temporary name", what, strlen(path));
    int f = open(tmp, O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, 0666);
    if (f >= 0) {
      if (exists && fchmod(f, st.st_mode & 07777) != 0) {
        const int e = errno;
        close(f);
        unlink(tmp);
        return rp_error_set(err, RP_EIO, "%s '%s': cannot keep the existing file's mode: %s",
                            what, path, strerror(e));
      }
      *fd = f;
      return RP_OK;
    }
    if (errno != EEXIST)
      return rp_error_set(err, RP_EIO, "%s '%s': cannot create temporary file '%s': %s",
                          what, path, tmp, strerror(errno));
  }
  return rp_error_set(err, RP_EIO, "%s '%s': no free temporary file name", what, path);
}

rp_status rp_tempfile_write_all(const char *what, const char *path, int fd, const void *data,
                                size_t n, rp_error *err) {
  const char *p = data;
  while (n > 0) {
    const ssize_t w = write(fd, p, n);
    if (w < 0) {
      if (errno == EINTR) continue;
      return rp_error_set(err, RP_EIO, "%s '%s': cannot write: %s", what, path,
                          strerror(errno));
    }
    p += w;
    n -= (size_t)w;
  }
  return RP_OK;
}

rp_status rp_tempfile_commit(const char *what, const char *tmp, const char *path,
                             rp_error *err) {
  char target[NAME_MAX_LEN];
  rp_status s = rp_tempfile_resolve(path, target, sizeof target, err);
  if (s != RP_OK) {
    unlink(tmp);
    return s;
  }
  const int f = open(tmp, O_RDONLY | O_CLOEXEC);
  if (f < 0 || fsync(f) != 0) {
    const int e = errno;
    if (f >= 0) close(f);
    unlink(tmp);
    return rp_error_set(err, RP_EIO, "%s '%s': cannot flush the data to disk: %s", what, path,
                        strerror(e));
  }
  close(f);
  if (rename(tmp, target) != 0) {
    const int e = errno;
    unlink(tmp);
    return rp_error_set(err, RP_EIO, "%s '%s': cannot rename the temporary file into place: %s",
                        what, path, strerror(e));
  }
  return RP_OK;
}

size_t rp_tempfile_remove_stale(const char *path) {
  char target[NAME_MAX_LEN], dir[NAME_MAX_LEN], safe[256], full[NAME_MAX_LEN];
  if (path == NULL || rp_tempfile_resolve(path, target, sizeof target, NULL) != RP_OK) return 0;
  split_safe(target, dir, sizeof dir, safe, sizeof safe);
  DIR *d = opendir(dir[0] ? dir : ".");
  if (d == NULL) return 0;
  size_t removed = 0;
  const size_t plen = sizeof RP_TEMPFILE_PREFIX - 1;
  struct dirent *e;
  while ((e = readdir(d)) != NULL) {
    if (strncmp(e->d_name, RP_TEMPFILE_PREFIX, plen) != 0) continue;
    char *end = NULL;
    const long pid = strtol(e->d_name + plen, &end, 10);
    if (end == NULL || *end != '-' || pid <= 0) continue;
    const char *rest = strchr(end + 1, '-'); /* after "<k>" */
    if (rest == NULL || strcmp(rest + 1, safe) != 0) continue;
    if (pid == (long)getpid() || kill((pid_t)pid, 0) == 0 || errno != ESRCH) continue;
    if (snprintf(full, sizeof full, "%s%s", dir, e->d_name) >= (int)sizeof full) continue;
    if (unlink(full) == 0) removed++;
  }
  closedir(d);
  return removed;
}
