/* spectrum.h — measured drop-size spectra read from rainprint's CSV format.
 *
 * The format (full description with an example in docs/guide.md §6):
 *   # comment lines start with '#'; blank lines are ignored
 *   bin_center_mm,0.0625,0.1875,...     bin centres (mm), declared once
 *   bin_width_mm,0.125,0.125,...        bin widths (mm), declared once
 *   <label>,<conc 1>,<conc 2>,...       one spectrum per row, N(D) in m^-3 mm^-1
 * The first field of a data row is a free label (an ISO 8601 time or any text without
 * commas; it may be empty). Numbers are plain decimals ("nan", "inf", hex and units are
 * refused). Bins: centres > 0 and strictly increasing, widths > 0, no overlap, lower
 * edges >= 0. Concentrations: finite, >= 0 and <= RP_DSD_CONC_MAX (dsd.h).
 * Text rules shared by every reader: a regular file of at most 64 MiB, UTF-8 (a
 * byte-order mark is accepted), no NUL bytes, lines of at most 65536 bytes. */
#ifndef RAINPRINT_SPECTRUM_H
#define RAINPRINT_SPECTRUM_H

#include <stddef.h>

#include "rainprint/dsd.h"
#include "rainprint/status.h"

/* A set of spectra sharing one bin geometry. conc holds n_rows * n_bins values, row
 * after row (conc[row * n_bins + bin]); labels holds n_rows NUL-terminated strings. */
typedef struct {
  size_t n_bins, n_rows;
  double *center_mm, *width_mm;
  double *conc;
  char **labels;
} rp_spectrum_set;

/* Read a spectrum CSV file. On RP_OK *out is a new set that the caller frees with
 * rp_spectrum_free(); on error *out is NULL.
 * Returns RP_OK; RP_EINVAL (NULL path or out); RP_EIO (the file cannot be opened or
 * read, or is not a regular file); RP_EPARSE (malformed content, a NUL byte, an
 * over-long line or file: the message gives "path:line: column ...");
 * RP_ENOMEM. */
rp_status rp_spectrum_load(const char *path, rp_spectrum_set **out, rp_error *err);

/* rp_spectrum_load from n bytes in memory (name is used in messages); the same rules
 * and statuses (no RP_EIO). data is not modified and need not be NUL-terminated. */
rp_status rp_spectrum_load_data(const char *name, const char *data, size_t n,
                                rp_spectrum_set **out, rp_error *err);

/* Free a set from rp_spectrum_load (NULL is a no-op). */
void rp_spectrum_free(rp_spectrum_set *s);

/* The DSD of one row: a spectrum DSD (see rp_dsd_spectrum) that borrows the set's
 * arrays, so it is valid until the set is freed. Returns RP_OK, or RP_EINVAL for a
 * NULL argument or row >= n_rows. */
rp_status rp_spectrum_row_dsd(const rp_spectrum_set *s, size_t row, rp_dsd *d,
                              rp_error *err);

/* The DSDs of every row: rows (caller-allocated, s->n_rows entries) get
 * rp_spectrum_row_dsd of each row (they borrow the set's arrays). Returns RP_OK or
 * RP_EINVAL for NULL arguments. */
rp_status rp_spectrum_rows_dsd(const rp_spectrum_set *s, rp_dsd *rows, rp_error *err);

#endif
