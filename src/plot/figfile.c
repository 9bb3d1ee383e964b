/* figfile.c — picture files that never lie: a temporary file beside the destination, drawn
 * through a stream whose write errors we see, checked for completeness after PLplot has
 * closed it, then renamed over the destination (see figure.h).
 *
 * Method:
 *   - Destination: symlinks are followed by hand (lstat/readlink, at most 40 links, a
 *     relative link is taken relative to the link's folder), so a dangling link is also
 *     written through; the temporary file goes into the final target's folder so that
 *     rename() is atomic and replaces the target, not the link.
 *   - Temporary name "<folder>/.rp-picture-<pid>-<k>.<ext>": created with
 *     open(O_CREAT | O_EXCL, 0666) (ours; umask permissions like any new file); fixed
 *     length, so names never stack; no '%' unless the folder has one, and PLplot never sees
 *     the name anyway: it gets a FILE* (plsfile), so its '%n' family expansion cannot
 *     apply and the destination name is used literally.
 *   - The FILE* is a fopencookie() stream over our descriptor: its write callback records
 *     the first errno of a failed write(2) (e.g. ENOSPC, which cairo and PLplot ignore), its
 *     close callback (PLplot's fclose at plend1) runs fsync(2) and close(2) and records their
 *     errors too. A recorded errno is RP_EIO with strerror() in the message.
 *   - Completeness, read back through a second descriptor: size > 0; PNG signature and the
 *     last 12 bytes the IEND chunk 00 00 00 00 'IEND' AE 42 60 82 (PNG specification,
 *     ISO/IEC 15948:2004 §5.6 and §11.2.5, section numbers from memory); SVG's last
 *     non-space text "</svg>" (W3C SVG 1.1 root element end tag); PDF starting with "%PDF-"
 *     and "%%EOF" as the last non-space text (ISO 32000-1:2008 §7.5.2, §7.5.5, from memory).
 *   - An existing destination's permission bits are copied to the temporary file (fchmod)
 *     before the rename.
 * Invariants: never prints; on every failure the temporary file is removed. */
#define _GNU_SOURCE
#include "figfile.h"

#include <errno.h>
#include <fcntl.h>
#include <limits.h>
#include <stdio.h>
#include <string.h>
#include <strings.h>
#include <sys/stat.h>
#include <sys/types.h>
#include <unistd.h>

#include "rainprint/figure.h"

enum { TEMP_ATTEMPTS = 100, MAX_LINKS = 40, TAIL_BYTES = 1024 };

typedef enum { FMT_NONE = 0, FMT_PNG, FMT_SVG, FMT_PDF } pic_format;

static pic_format format_of(const char *path) {
  const char *dot = strrchr(path, '.');
  const char *slash = strrchr(path, '/');
  if (dot == NULL || (slash != NULL && dot < slash)) return FMT_NONE;
  if (strcasecmp(dot, ".png") == 0) return FMT_PNG;
  if (strcasecmp(dot, ".svg") == 0) return FMT_SVG;
  if (strcasecmp(dot, ".pdf") == 0) return FMT_PDF;
  return FMT_NONE;
}

static const char *const FORMAT_EXT[] = {"", "png", "svg", "pdf"};

rp_status rp_figfile_device(const char *path, const char **dev, rp_error *err) {
  switch (format_of(path)) {
  case FMT_PNG: *dev = "pngcairo"; return RP_OK;
  case FMT_SVG: *dev = "svgcairo"; return RP_OK;
  case FMT_PDF: *dev = "pdfcairo"; return RP_OK;
  default: break;
  }
  return rp_error_set(err, RP_EINVAL,
                      "picture '%s': unknown extension (use .png, .svg or .pdf)", path);
}

/* The final target of path: symlinks followed (dangling ones too). */
static rp_status resolve_target(const char *path, char *out, size_t n, rp_error *err) {
  if (strlen(path) >= n)
    return rp_error_set(err, RP_EINVAL, "picture: path is too long (%zu characters)",
                        strlen(path));
  strcpy(out, path);
  for (int k = 0; k < MAX_LINKS; k++) {
    struct stat st;
    if (lstat(out, &st) != 0 || !S_ISLNK(st.st_mode)) return RP_OK;
    char link[RP_FIGFILE_PATH_MAX];
    ssize_t len = readlink(out, link, sizeof link - 1);
    if (len < 0) return RP_OK;
    link[len] = '\0';
    if (link[0] == '/') {
      if ((size_t)len >= n) break;
      strcpy(out, link);
    } else {
      char *slash = strrchr(out, '/');
      size_t dirlen = slash != NULL ? (size_t)(slash - out) + 1 : 0;
      if (dirlen + (size_t)len >= n) break;
      memmove(out + dirlen, link, (size_t)len + 1);
    }
  }
  return rp_error_set(err, RP_EIO, "picture '%s': too many or too long symbolic links", path);
}

/* Folder part of path ("." when none), into dir. */
static void folder_of(const char *path, char *dir, size_t n) {
  const char *slash = strrchr(path, '/');
  if (slash == NULL) {
    snprintf(dir, n, ".");
  } else if (slash == path) {
    snprintf(dir, n, "/");
  } else {
    snprintf(dir, n, "%.*s", (int)(slash - path), path);
  }
}

static ssize_t cookie_write(void *c, const char *buf, size_t n) {
  rp_figfile *f = c;
  size_t done = 0;
  while (done < n) {
    ssize_t w = write(f->fd, buf + done, n - done);
    if (w < 0) {
      if (errno == EINTR) continue;
      if (f->write_errno == 0) f->write_errno = errno;
      return -1;
    }
    done += (size_t)w;
  }
  return (ssize_t)n;
}

static int cookie_close(void *c) {
  rp_figfile *f = c;
  f->closed = 1;
  int rc = 0;
  if (fsync(f->fd) != 0 && errno != EINVAL && errno != EROFS) {
    if (f->write_errno == 0) f->write_errno = errno;
    rc = -1;
  }
  if (close(f->fd) != 0) {
    if (f->write_errno == 0) f->write_errno = errno;
    rc = -1;
  }
  f->fd = -1;
  return rc;
}

rp_status rp_figfile_open(const char *path, rp_figfile *f, rp_error *err) {
  memset(f, 0, sizeof *f);
  f->fd = -1;
  f->check_fd = -1;
  char target[RP_FIGFILE_PATH_MAX], dir[RP_FIGFILE_PATH_MAX];
  RP_TRY(resolve_target(path, target, sizeof target, err));
  folder_of(target, dir, sizeof dir);
  const char *ext = FORMAT_EXT[format_of(path)];
  for (int k = 0; k < TEMP_ATTEMPTS; k++) {
    int len = snprintf(f->tmp, sizeof f->tmp, "%s/.rp-picture-%ld-%d.%s", dir,
                       (long)getpid(), k, ext);
    if (len < 0 || (size_t)len >= sizeof f->tmp)
      return rp_error_set(err, RP_EINVAL, "picture '%s': path is too long", path);
    int fd = open(f->tmp, O_RDWR | O_CREAT | O_EXCL | O_CLOEXEC, 0666);
    if (fd < 0) {
      if (errno == EEXIST) continue;
      int e = errno;
      f->tmp[0] = '\0';
      return rp_error_set(err, RP_EIO, "picture '%s': cannot create a file in '%s': %s", path,
                          dir, strerror(e));
    }
    f->fd = fd;
    f->check_fd = fcntl(fd, F_DUPFD_CLOEXEC, 0);
    cookie_io_functions_t io = {NULL, cookie_write, NULL, cookie_close};
    f->fp = f->check_fd >= 0 ? fopencookie(f, "w", io) : NULL;
    if (f->fp == NULL) {
      int e = errno;
      rp_figfile_abandon(f);
      return rp_error_set(err, RP_EIO, "picture '%s': cannot open a stream: %s", path,
                          strerror(e));
    }
    return RP_OK;
  }
  f->tmp[0] = '\0';
  return rp_error_set(err, RP_EIO, "picture '%s': no free temporary file name in '%s'", path,
                      dir);
}

void rp_figfile_abandon(rp_figfile *f) {
  if (f->fp != NULL && !f->closed) fclose(f->fp);
  f->fp = NULL;
  if (f->fd >= 0) close(f->fd);
  f->fd = -1;
  if (f->check_fd >= 0) close(f->check_fd);
  f->check_fd = -1;
  if (f->tmp[0] != '\0') unlink(f->tmp);
  f->tmp[0] = '\0';
}

/* Completeness of the file behind fd (format fmt). Returns NULL when complete, else what
 * is missing. */
static const char *incomplete(int fd, pic_format fmt, char *why, size_t n) {
  struct stat st;
  if (fstat(fd, &st) != 0) return "cannot be read back";
  if (st.st_size <= 0) return "is empty";
  unsigned char head[8] = {0}, tail[TAIL_BYTES + 1];
  ssize_t hn = pread(fd, head, sizeof head, 0);
  off_t off = st.st_size > TAIL_BYTES ? st.st_size - TAIL_BYTES : 0;
  ssize_t tn = pread(fd, tail, TAIL_BYTES, off);
  if (hn < 0 || tn < 0) return "cannot be read back";
  tail[tn] = '\0';
  size_t len = (size_t)tn;
  if (fmt == FMT_PNG) {
    static const unsigned char sig[8] = {0x89, 'P', 'N', 'G', '\r', '\n', 0x1A, '\n'};
    static const unsigned char iend[12] = {0, 0, 0, 0, 'I', 'E', 'N', 'D', 0xAE, 0x42, 0x60, 0x82};
    if (hn < 8 || memcmp(head, sig, 8) != 0) return "has no PNG signature";
    if (len < 12 || memcmp(tail + len - 12, iend, 12) != 0) return "has no IEND chunk at its end";
    return NULL;
  }
  while (len > 0 && (tail[len - 1] == ' ' || tail[len - 1] == '\n' || tail[len - 1] == '\r' ||
                     tail[len - 1] == '\t'))
    len--;
  if (fmt == FMT_SVG) {
    if (len < 6 || memcmp(tail + len - 6, "</svg>", 6) != 0) return "does not end with </svg>";
    return NULL;
  }
  if (fmt == FMT_PDF) {
    if (hn < 5 || memcmp(head, "%PDF-", 5) != 0) return "has no %PDF- header";
    if (len < 5 || memcmp(tail + len - 5, "%%EOF", 5) != 0) return "does not end with %%EOF";
    return NULL;
  }
  snprintf(why, n, "has an unknown format");
  return why;
}

rp_status rp_figfile_finish(const char *path, rp_figfile *f, rp_error *err) {
  if (f->fp != NULL && !f->closed) fclose(f->fp); /* never handed to PLplot */
  f->fp = NULL;
  rp_status st = RP_OK;
  char why[64];
  const char *miss = NULL;
  if (f->write_errno != 0) {
    st = rp_error_set(err, RP_EIO, "picture '%s': writing failed: %s", path,
                      strerror(f->write_errno));
  } else if ((miss = incomplete(f->check_fd, format_of(path), why, sizeof why)) != NULL) {
    st = rp_error_set(err, RP_EPLOT, "picture '%s': the file PLplot wrote %s", path, miss);
  }
  if (f->check_fd >= 0) close(f->check_fd);
  f->check_fd = -1;
  if (st != RP_OK) rp_figfile_abandon(f);
  return st;
}

rp_status rp_figure_commit(const char *tmp, const char *path, rp_error *err) {
  if (tmp == NULL || path == NULL || tmp[0] == '\0')
    return rp_error_set(err, RP_EINVAL, "picture commit: temporary or final name is NULL");
  char target[RP_FIGFILE_PATH_MAX];
  rp_status st = resolve_target(path, target, sizeof target, err);
  if (st != RP_OK) {
    unlink(tmp);
    return st;
  }
  struct stat old;
  if (stat(target, &old) == 0 && S_ISREG(old.st_mode)) {
    if (chmod(tmp, old.st_mode & 07777) != 0) {
      int e = errno;
      unlink(tmp);
      return rp_error_set(err, RP_EIO, "picture '%s': cannot keep its permissions: %s", path,
                          strerror(e));
    }
  }
  if (rename(tmp, target) != 0) {
    int e = errno;
    unlink(tmp);
    return rp_error_set(err, RP_EIO,
                        "picture '%s': cannot rename the temporary file into place: %s", path,
                        strerror(e));
  }
  return RP_OK;
}

void rp_figure_discard(const char *tmp) {
  if (tmp != NULL && tmp[0] != '\0') unlink(tmp);
}

rp_status rp_figure_check_file(const char *path, rp_error *err) {
  if (path == NULL) return rp_error_set(err, RP_EINVAL, "picture check: path is NULL");
  pic_format fmt = format_of(path);
  if (fmt == FMT_NONE)
    return rp_error_set(err, RP_EINVAL,
                        "picture '%s': unknown extension (use .png, .svg or .pdf)", path);
  int fd = open(path, O_RDONLY | O_CLOEXEC);
  if (fd < 0)
    return rp_error_set(err, RP_EIO, "picture '%s': cannot open: %s", path, strerror(errno));
  char why[64];
  const char *miss = incomplete(fd, fmt, why, sizeof why);
  close(fd);
  if (miss != NULL) return rp_error_set(err, RP_EPLOT, "picture '%s' %s", path, miss);
  return RP_OK;
}
