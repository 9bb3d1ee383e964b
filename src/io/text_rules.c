/* text_rules.c — the shared rules for text files (see text_rules.h).
 *
 * Method: the file is opened with O_NONBLOCK (so a FIFO cannot block the open) and
 * fstat()ed: only a regular file within the size cap is read, in one buffer. One pass
 * over the bytes then tracks line and column, refusing the first NUL byte and the first
 * over-long line. The byte-order marks are recognised at offset 0 only (UTF-8
 * EF BB BF; UTF-16 FF FE / FE FF; UTF-32 FF FE 00 00 / 00 00 FE FF). */
#include "text_rules.h"

#include <errno.h>
#include <fcntl.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

rp_status rp_text_check(const char *name, const char *data, size_t n, size_t *body,
                        rp_error *err) {
  if (name == NULL || (data == NULL && n > 0))
    return rp_error_set(err, RP_EINVAL, "text check: NULL name or data");
  if (n > RP_TEXT_MAX_FILE_BYTES)
    return rp_error_set(err, RP_EPARSE, "%s: %zu bytes, above the limit of %d bytes for a text "
                        "file", name, n, RP_TEXT_MAX_FILE_BYTES);
  const unsigned char *p = (const unsigned char *)data;
  size_t start = 0;
  if (n >= 3 && p[0] == 0xEF && p[1] == 0xBB && p[2] == 0xBF) start = 3;
  if (n >= 2 && ((p[0] == 0xFF && p[1] == 0xFE) || (p[0] == 0xFE && p[1] == 0xFF)))
    return rp_error_set(err, RP_EPARSE, "%s: UTF-16 or UTF-32 text (byte-order mark %02X %02X); "
                        "save it as UTF-8", name, p[0], p[1]);
  if (n >= 4 && p[0] == 0 && p[1] == 0 && p[2] == 0xFE && p[3] == 0xFF)
    return rp_error_set(err, RP_EPARSE, "%s: UTF-32 text; save it as UTF-8", name);
  size_t line = 1, line_start = start;
  for (size_t i = start; i < n; i++) {
    if (p[i] == '\0')
      return rp_error_set(err, RP_EPARSE, "%s:%zu:%zu: NUL byte (binary data in a text file)",
                          name, line, i - line_start + 1);
    if (p[i] == '\n') {
      size_t len = i - line_start;
      if (len > 0 && p[i - 1] == '\r') len--;
      if (len > RP_TEXT_MAX_LINE_BYTES)
        return rp_error_set(err, RP_EPARSE, "%s:%zu: line longer than %d bytes", name, line,
                            RP_TEXT_MAX_LINE_BYTES);
      line++;
      line_start = i + 1;
    }
  }
  if (n - line_start > RP_TEXT_MAX_LINE_BYTES)
    return rp_error_set(err, RP_EPARSE, "%s:%zu: line longer than %d bytes", name, line,
                        RP_TEXT_MAX_LINE_BYTES);
  if (body) *body = start;
  return RP_OK;
}

rp_status rp_text_read_file(const char *path, char **text, size_t *n, rp_error *err) {
  if (text) *text = NULL;
  if (n) *n = 0;
  if (path == NULL || text == NULL || n == NULL)
    return rp_error_set(err, RP_EINVAL, "text read: NULL argument");
  const int fd = open(path, O_RDONLY | O_NONBLOCK | O_CLOEXEC);
  if (fd < 0) return rp_error_set(err, RP_EIO, "%s: cannot open: %s", path, strerror(errno));
  struct stat st;
  rp_status s = RP_OK;
  char *buf = NULL;
  size_t got = 0;
  if (fstat(fd, &st) != 0) {
    s = rp_error_set(err, RP_EIO, "%s: cannot stat: %s", path, strerror(errno));
  } else if (!S_ISREG(st.st_mode)) {
    s = rp_error_set(err, RP_EIO, "%s: not a regular file (%s)", path,
                     S_ISDIR(st.st_mode) ? "a directory" : S_ISFIFO(st.st_mode) ? "a FIFO"
                                                            : "a device or socket");
  } else if (st.st_size > RP_TEXT_MAX_FILE_BYTES) {
    s = rp_error_set(err, RP_EPARSE, "%s: %lld bytes, above the limit of %d bytes for a text "
                     "file", path, (long long)st.st_size, RP_TEXT_MAX_FILE_BYTES);
  } else {
    const size_t size = (size_t)st.st_size;
    buf = malloc(size + 1);
    if (buf == NULL) s = rp_error_set(err, RP_ENOMEM, "%s: out of memory", path);
    while (s == RP_OK && got < size) {
      const ssize_t r = read(fd, buf + got, size - got);
      if (r < 0 && errno == EINTR) continue;
      if (r < 0) s = rp_error_set(err, RP_EIO, "%s: read error: %s", path, strerror(errno));
      if (r <= 0) break;
      got += (size_t)r;
    }
  }
  close(fd);
  size_t body = 0;
  if (s == RP_OK) s = rp_text_check(path, buf, got, &body, err);
  if (s != RP_OK) {
    free(buf);
    return s;
  }
  memmove(buf, buf + body, got - body);
  buf[got - body] = '\0';
  *text = buf;
  *n = got - body;
  return RP_OK;
}
