/* spectrum.c — reader of rainprint's drop-spectrum CSV format.
 *
 * Method: the file is read whole under the shared text rules (text_rules.h: regular
 * file, size cap, UTF-8 BOM skipped, NUL bytes and over-long lines refused with their
 * position), then parsed line by line with getline() on the buffer; each line is split on ',' in place,
 * fields are trimmed of blanks, numbers must be complete plain decimals (checked
 * character by character before strtod by rp_decimal_parse, decimal.c, so "nan",
 * "inf", "0x10" and "1.2mm" are refused). Every error names the file, the line and the column (with the bin it
 * belongs to). The format is specified in docs/guide.md §6.
 *
 * Invariants of a loaded set: n_bins >= 1, n_rows >= 1, the bin geometry passes
 * rp_dsd_spectrum()'s checks, every concentration is finite and >= 0. */
#include "rainprint/spectrum.h"

#include <errno.h>
#include <stdint.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "decimal.h"
#include "text_rules.h"

static const char KEY_CENTER[] = "bin_center_mm";
static const char KEY_WIDTH[] = "bin_width_mm";

void rp_spectrum_free(rp_spectrum_set *s) {
  if (s == NULL) return;
  if (s->labels != NULL)
    for (size_t i = 0; i < s->n_rows; i++) free(s->labels[i]);
  free(s->labels);
  free(s->center_mm);
  free(s->width_mm);
  free(s->conc);
  free(s);
}

static char *trim(char *s) {
  while (*s == ' ' || *s == '\t') s++;
  size_t n = strlen(s);
  while (n > 0 && (s[n - 1] == ' ' || s[n - 1] == '\t' || s[n - 1] == '\r' ||
                   s[n - 1] == '\n'))
    s[--n] = '\0';
  return s;
}

/* Split line in place on ','; fields[] receives trimmed pointers. Returns the number of
 * fields found (which may exceed max; only the first max are stored). */
static size_t split(char *line, char **fields, size_t max) {
  size_t n = 0;
  char *p = line;
  for (;;) {
    char *comma = strchr(p, ',');
    if (comma) *comma = '\0';
    if (n < max) fields[n] = trim(p);
    n++;
    if (!comma) break;
    p = comma + 1;
  }
  return n;
}

static size_t count_fields(const char *line) {
  size_t n = 1;
  for (const char *p = line; *p; p++)
    if (*p == ',') n++;
  return n;
}

typedef struct {
  const char *path;
  size_t line;
  rp_error *err;
} where;

static rp_status parse_number(const where *w, const char *field, const char *column,
                              double *x) {
  if (field[0] == '\0')
    return rp_error_set(w->err, RP_EPARSE, "%s:%zu: %s: empty field (write 0 for no drops)",
                        w->path, w->line, column);
  switch (rp_decimal_parse(field, x)) {
    case RP_DECIMAL_OK:
      return RP_OK;
    case RP_DECIMAL_NOT_PLAIN:
      return rp_error_set(w->err, RP_EPARSE, "%s:%zu: %s: '%s' is not a number", w->path,
                          w->line, column, field);
    case RP_DECIMAL_OUT_OF_RANGE:
      break;
  }
  return rp_error_set(w->err, RP_EPARSE, "%s:%zu: %s: '%s' is out of the range of a double",
                      w->path, w->line, column, field);
}

/* Read the next line that is neither blank nor a comment. Returns 1 with *line set,
 * 0 at end of file, -1 on a read error. */
static int next_line(FILE *f, char **buf, size_t *cap, size_t *lineno, char **line) {
  for (;;) {
    errno = 0;
    ssize_t n = getline(buf, cap, f);
    if (n < 0) return ferror(f) ? -1 : 0;
    (*lineno)++;
    char *t = trim(*buf);
    if (t[0] == '\0' || t[0] == '#') continue;
    *line = t;
    return 1;
  }
}

static rp_status parse_bin_line(const where *w, char *line, const char *key,
                                size_t expect_bins, size_t *n_bins, double **values) {
  size_t nf = count_fields(line);
  char **fields = malloc(nf * sizeof *fields);
  if (fields == NULL) return rp_error_set(w->err, RP_ENOMEM, "%s: out of memory", w->path);
  split(line, fields, nf);
  rp_status s = RP_OK;
  if (strcmp(fields[0], key) != 0) {
    s = rp_error_set(w->err, RP_EPARSE, "%s:%zu: column 1: expected '%s', found '%s'",
                     w->path, w->line, key, fields[0]);
    goto done;
  }
  if (nf < 2) {
    s = rp_error_set(w->err, RP_EPARSE, "%s:%zu: %s declares no bins", w->path, w->line,
                     key);
    goto done;
  }
  if (expect_bins != 0 && nf - 1 != expect_bins) {
    s = rp_error_set(w->err, RP_EPARSE, "%s:%zu: %s has %zu bins but bin_center_mm has %zu",
                     w->path, w->line, key, nf - 1, expect_bins);
    goto done;
  }
  *values = malloc((nf - 1) * sizeof **values);
  if (*values == NULL) {
    s = rp_error_set(w->err, RP_ENOMEM, "%s: out of memory", w->path);
    goto done;
  }
  for (size_t j = 1; j < nf; j++) {
    char column[64];
    snprintf(column, sizeof column, "column %zu (%s of bin %zu)", j + 1, key, j);
    double x;
    s = parse_number(w, fields[j], column, &x);
    if (s != RP_OK) goto done;
    if (x <= 0.0) {
      s = rp_error_set(w->err, RP_EPARSE, "%s:%zu: %s: %g mm must be > 0", w->path, w->line,
                       column, x);
      goto done;
    }
    (*values)[j - 1] = x;
  }
  *n_bins = nf - 1;
done:
  free(fields);
  return s;
}

/* Geometry checks that need both header lines: increasing centres, no overlap, lower
 * edges >= 0. Reported at the width line (where the geometry is complete). */
static rp_status check_geometry(const where *w, size_t center_line, const double *c,
                                const double *wd, size_t n) {
  /* rp_dsd_spectrum refuses such rows; refuse the file here, with its line (found by
   * fuzz_spectrum) */
  if (c[0] - 0.5 * wd[0] >= RP_DSD_D_LIMIT_MM)
    return rp_error_set(w->err, RP_EPARSE, "%s:%zu: column 2 (bin 1): every bin lies above "
                        "%g mm (first bin centre %g mm, width %g mm)", w->path, w->line,
                        RP_DSD_D_LIMIT_MM, c[0], wd[0]);
  for (size_t j = 0; j < n; j++) {
    if (c[j] - 0.5 * wd[j] < -RP_DSD_BIN_SLACK_MM)
      return rp_error_set(w->err, RP_EPARSE, "%s:%zu: column %zu (bin %zu): centre %g mm "
                          "with width %g mm extends below 0 mm", w->path, w->line, j + 2,
                          j + 1, c[j], wd[j]);
    if (j == 0) continue;
    if (!(c[j] > c[j - 1]))
      return rp_error_set(w->err, RP_EPARSE, "%s:%zu: column %zu (bin %zu): bin centres "
                          "not increasing (%g mm after %g mm)", w->path, center_line, j + 2,
                          j + 1, c[j], c[j - 1]);
    double upper_prev = c[j - 1] + 0.5 * wd[j - 1], lower = c[j] - 0.5 * wd[j];
    if (upper_prev > lower + RP_DSD_BIN_SLACK_MM)
      return rp_error_set(w->err, RP_EPARSE, "%s:%zu: column %zu (bin %zu): bin [%g, %g] "
                          "mm overlaps bin %zu [%g, %g] mm", w->path, w->line, j + 2, j + 1,
                          lower, c[j] + 0.5 * wd[j], j, c[j - 1] - 0.5 * wd[j - 1],
                          upper_prev);
  }
  return RP_OK;
}

/* Append one data row (label + n_bins concentrations) to s. */
static rp_status parse_row(const where *w, char *line, rp_spectrum_set *s, char **fields,
                           size_t *cap_rows) {
  size_t nf = count_fields(line);
  if (nf != s->n_bins + 1)
    return rp_error_set(w->err, RP_EPARSE, "%s:%zu: %zu fields, expected %zu (label and "
                        "%zu bins)", w->path, w->line, nf, s->n_bins + 1, s->n_bins);
  split(line, fields, nf);
  if (s->n_rows == *cap_rows) {
    size_t cap = *cap_rows ? 2 * *cap_rows : 16;
    double *conc = realloc(s->conc, cap * s->n_bins * sizeof *conc);
    if (conc == NULL) return rp_error_set(w->err, RP_ENOMEM, "%s: out of memory", w->path);
    s->conc = conc;
    char **labels = realloc(s->labels, cap * sizeof *labels);
    if (labels == NULL) return rp_error_set(w->err, RP_ENOMEM, "%s: out of memory", w->path);
    s->labels = labels;
    *cap_rows = cap;
  }
  double *row = s->conc + s->n_rows * s->n_bins;
  for (size_t j = 0; j < s->n_bins; j++) {
    char column[96];
    snprintf(column, sizeof column, "column %zu (bin %zu, centre %g mm)", j + 2, j + 1,
             s->center_mm[j]);
    double x;
    RP_TRY(parse_number(w, fields[j + 1], column, &x));
    if (x < 0.0)
      return rp_error_set(w->err, RP_EPARSE, "%s:%zu: %s: concentration %g m^-3 mm^-1 must "
                          "be >= 0", w->path, w->line, column, x);
    if (x > RP_DSD_CONC_MAX)
      return rp_error_set(w->err, RP_EPARSE, "%s:%zu: %s: concentration %g m^-3 mm^-1 above "
                          "%g m^-3 mm^-1 (RP_DSD_CONC_MAX)", w->path, w->line, column, x,
                          RP_DSD_CONC_MAX);
    row[j] = x;
  }
  char *label = malloc(strlen(fields[0]) + 1);
  if (label == NULL) return rp_error_set(w->err, RP_ENOMEM, "%s: out of memory", w->path);
  strcpy(label, fields[0]);
  s->labels[s->n_rows++] = label;
  return RP_OK;
}

static rp_status parse_stream(const char *path, FILE *f, rp_spectrum_set **out, rp_error *err);

rp_status rp_spectrum_load(const char *path, rp_spectrum_set **out, rp_error *err) {
  if (out == NULL) return rp_error_set(err, RP_EINVAL, "spectrum load: output is NULL");
  *out = NULL;
  if (path == NULL) return rp_error_set(err, RP_EINVAL, "spectrum load: path is NULL");
  char *text = NULL;
  size_t n = 0;
  RP_TRY(rp_text_read_file(path, &text, &n, err));
  rp_status s = rp_spectrum_load_data(path, text, n, out, err);
  free(text);
  return s;
}

rp_status rp_spectrum_load_data(const char *name, const char *data, size_t n,
                                rp_spectrum_set **out, rp_error *err) {
  if (out == NULL) return rp_error_set(err, RP_EINVAL, "spectrum load: output is NULL");
  *out = NULL;
  if (name == NULL || (data == NULL && n > 0))
    return rp_error_set(err, RP_EINVAL, "spectrum load: name or data is NULL");
  size_t body = 0;
  RP_TRY(rp_text_check(name, data, n, &body, err));
  if (n - body == 0)
    return rp_error_set(err, RP_EPARSE, "%s: no '%s' line: the file is empty or only "
                        "comments", name, KEY_CENTER);
  FILE *f = fmemopen((void *)(uintptr_t)(data + body), n - body, "r");
  if (f == NULL) return rp_error_set(err, RP_ENOMEM, "%s: out of memory", name);
  rp_status s = parse_stream(name, f, out, err);
  fclose(f);
  return s;
}

static rp_status parse_stream(const char *path, FILE *f, rp_spectrum_set **out, rp_error *err) {
  rp_status s = RP_OK;
  char *buf = NULL, *line = NULL;
  char **fields = NULL;
  size_t cap = 0, cap_rows = 0, center_line = 0;
  where w = {path, 0, err};
  rp_spectrum_set *set = calloc(1, sizeof *set);
  if (set == NULL) {
    s = rp_error_set(err, RP_ENOMEM, "%s: out of memory", path);
    goto done;
  }
  int got = next_line(f, &buf, &cap, &w.line, &line);
  if (got < 0) {
    s = rp_error_set(err, RP_EIO, "%s:%zu: read error", path, w.line + 1);
    goto done;
  }
  if (got == 0) {
    s = rp_error_set(err, RP_EPARSE, "%s: no '%s' line: the file is empty or only "
                     "comments", path, KEY_CENTER);
    goto done;
  }
  s = parse_bin_line(&w, line, KEY_CENTER, 0, &set->n_bins, &set->center_mm);
  if (s != RP_OK) goto done;
  center_line = w.line;
  got = next_line(f, &buf, &cap, &w.line, &line);
  if (got < 0) {
    s = rp_error_set(err, RP_EIO, "%s:%zu: read error", path, w.line + 1);
    goto done;
  }
  if (got == 0) {
    s = rp_error_set(err, RP_EPARSE, "%s:%zu: end of file where the '%s' line belongs",
                     path, w.line, KEY_WIDTH);
    goto done;
  }
  size_t n_width = 0;
  s = parse_bin_line(&w, line, KEY_WIDTH, set->n_bins, &n_width, &set->width_mm);
  if (s != RP_OK) goto done;
  s = check_geometry(&w, center_line, set->center_mm, set->width_mm, set->n_bins);
  if (s != RP_OK) goto done;
  fields = malloc((set->n_bins + 1) * sizeof *fields);
  if (fields == NULL) {
    s = rp_error_set(err, RP_ENOMEM, "%s: out of memory", path);
    goto done;
  }
  while ((got = next_line(f, &buf, &cap, &w.line, &line)) == 1) {
    s = parse_row(&w, line, set, fields, &cap_rows);
    if (s != RP_OK) goto done;
  }
  if (got < 0) {
    s = rp_error_set(err, RP_EIO, "%s:%zu: read error", path, w.line + 1);
    goto done;
  }
  if (set->n_rows == 0) {
    s = rp_error_set(err, RP_EPARSE, "%s:%zu: no data rows after the bin header", path,
                     w.line);
    goto done;
  }
done:
  free(fields);
  free(buf);
  if (s != RP_OK) {
    rp_spectrum_free(set);
    return s;
  }
  *out = set;
  return RP_OK;
}

rp_status rp_spectrum_row_dsd(const rp_spectrum_set *s, size_t row, rp_dsd *d,
                              rp_error *err) {
  if (s == NULL || d == NULL)
    return rp_error_set(err, RP_EINVAL, "spectrum row: set or output is NULL");
  if (row >= s->n_rows)
    return rp_error_set(err, RP_EINVAL, "spectrum row %zu out of range (%zu rows)", row,
                        s->n_rows);
  return rp_dsd_spectrum(d, s->center_mm, s->width_mm, s->conc + row * s->n_bins,
                         s->n_bins, err);
}

rp_status rp_spectrum_rows_dsd(const rp_spectrum_set *s, rp_dsd *rows, rp_error *err) {
  if (s == NULL || (rows == NULL && s->n_rows > 0))
    return rp_error_set(err, RP_EINVAL, "spectrum rows: NULL set or output");
  for (size_t r = 0; r < s->n_rows; r++) RP_TRY(rp_spectrum_row_dsd(s, r, &rows[r], err));
  return RP_OK;
}
