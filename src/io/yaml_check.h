/* yaml_check.h — internal (uninstalled) helpers shared by rainprint's YAML loaders
 * (presets.c, ensemble.c): a libyaml pre-scan that refuses numbers libcyaml 1.3.1 would
 * accept silently, and a libcyaml log collector that turns libcyaml's log lines into
 * one rp_error message instead of printing them.
 *
 * A loader calls rp_yaml_load_file() (scan, then libcyaml against its schema, errors
 * as "path:line:column: ..." with RP_EPARSE), validates the returned document itself
 * and releases it with rp_yaml_free(). The pieces are public for loaders that need
 * another libcyaml entry point. Method and caveats in yaml_check.c. */
#ifndef RP_IO_YAML_CHECK_H
#define RP_IO_YAML_CHECK_H

#include <stdarg.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>

#include <cyaml/cyaml.h>

#include "rainprint/status.h"

/* Scan the YAML stream f (opened by the caller, read to its end, not closed; path is
 * used in messages only). Every scalar that is the value of a mapping key listed in
 * numeric_keys[0..n_keys-1], at any depth, must be a plain decimal (see decimal.h)
 * whose value is a finite double; the stream holds at most one document (a second
 * "---" document is refused: "path:line:column: a second YAML document").
 * Returns RP_OK; RP_EPARSE for a YAML syntax error ("path:line:column: YAML syntax:
 * <libyaml's problem and context>") or a refused number ("path:line:column:
 * field.path[k].key: 'text' is not a plain decimal number" or "... is out of the range
 * of a double"; line and column are 1-based, from libyaml); RP_ENOMEM when libyaml
 * cannot be initialised; RP_EINVAL when path or f is NULL, or numeric_keys is NULL
 * with n_keys > 0. Only the first problem is reported. */
rp_status rp_yaml_scan_numbers(const char *path, FILE *f, const char *const *numeric_keys,
                               size_t n_keys, rp_error *err);

/* rp_yaml_scan_numbers on n bytes of memory (need not be NUL-terminated). */
rp_status rp_yaml_scan_numbers_data(const char *path, const char *data, size_t n,
                                    const char *const *numeric_keys, size_t n_keys,
                                    rp_error *err);

/* What rp_yaml_log_fn gathered: libcyaml's ERROR lines joined with "; " (without the
 * "Load: " prefix, the "Backtrace:" line and the "(line: N, column: M)" positions), and
 * the first (innermost) position seen. Zero-initialise before use. */
typedef struct {
  char text[RP_ERROR_MSG_LEN];
  unsigned line, column;
  bool have_pos;
} rp_yaml_log;

/* A cyaml_log_fn_t: ctx is an rp_yaml_log *. Lines below CYAML_LOG_ERROR are dropped.
 * Never prints; a message longer than the buffer is truncated. */
void rp_yaml_log_fn(cyaml_log_t level, void *ctx, const char *fmt, va_list args);

/* Turn a failed libcyaml call (ce != CYAML_OK) and what log collected into err:
 * RP_ENOMEM ("path: out of memory") for CYAML_ERR_OOM, otherwise RP_EPARSE with
 * "path:line:column: text" when a position was collected, "path: text" when not; text
 * is the collected text or, when nothing was logged, cyaml_strerror(ce).
 * log must not be NULL. Returns the status it set. */
rp_status rp_yaml_log_to_error(const rp_yaml_log *log, const char *path, cyaml_err_t ce,
                               rp_error *err);

/* rp_yaml_load_file on n bytes in memory (path names them in messages): the text
 * rules (text_rules.h), the scan, then libcyaml's cyaml_load_data. Same statuses but
 * RP_EIO. This is the entry point of the fuzz targets and of loaders that hold text. */
rp_status rp_yaml_load_data(const char *path, const char *data, size_t n,
                            const cyaml_schema_value_t *schema, const char *const *numeric_keys,
                            size_t n_keys, const char *empty_hint, cyaml_data_t **doc,
                            rp_error *err);

/* Read path under the shared text rules (text_rules.h: regular file, size cap, UTF-8
 * BOM accepted, NUL bytes and over-long lines refused), rp_yaml_scan_numbers() it (one
 * document only), then load it with libcyaml against schema
 * (CYAML_CFG_DEFAULT: unknown keys are errors), its log collected as above.
 * libcyaml loads an empty stream as a NULL document without an error; that is refused
 * here as RP_EPARSE "path: empty file: <empty_hint>" (empty_hint says what the document
 * needs, e.g. "a climate needs name, source and clusters").
 * On RP_OK, *doc holds the loaded document (never NULL); the caller owns it and
 * releases it with rp_yaml_free(schema, *doc). On error *doc is NULL.
 * Returns RP_OK; RP_EINVAL for a NULL path, schema, empty_hint or doc; RP_EIO when the
 * file cannot be opened ("path: cannot open: <strerror>") or is not a regular file;
 * RP_EPARSE and RP_ENOMEM as from rp_text_check(), rp_yaml_scan_numbers() and
 * rp_yaml_log_to_error(), and for the empty file. */
rp_status rp_yaml_load_file(const char *path, const cyaml_schema_value_t *schema,
                            const char *const *numeric_keys, size_t n_keys,
                            const char *empty_hint, cyaml_data_t **doc, rp_error *err);

/* Release a document from rp_yaml_load_file() (doc may be NULL). */
void rp_yaml_free(const cyaml_schema_value_t *schema, cyaml_data_t *doc);

#endif
