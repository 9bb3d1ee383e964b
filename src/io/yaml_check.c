/* yaml_check.c — shared pieces of rainprint's YAML loaders (see yaml_check.h).
 *
 * Why a pre-scan: libcyaml 1.3.1 accepts "nan", "inf", "-inf" and hex ("0x10") for FLOAT
 * fields and silently drops trailing text ("1.6mm" -> 1.6, "1_000" -> 1; fixed upstream
 * only in 1.4.0), and it reports YAML syntax errors without libyaml's own position
 * (seen on Debian 12's libcyaml 1.3.1; docs/method.md §7). So each file is first walked with libyaml's event
 * parser: a stack of open collections gives the field path ("clusters[1].d0_sd_mm")
 * and every scalar under a numeric key goes through rp_decimal_parse(). Positions are
 * libyaml's 0-based marks plus one. Nesting deeper than SCAN_MAX_DEPTH is still parsed
 * (syntax is checked) but its scalars are not checked and its path is cut there; no
 * schema of ours comes near that depth, and libcyaml refuses such files anyway.
 *
 * The log collector: libcyaml (1.3.1) writes one line per call, e.g.
 *   "Load: Invalid FLOAT value: fast\n", "Load: Backtrace:\n",
 *   "  in mapping field 'frequency_ghz' (line: 2, column: 16)\n";
 * the first position it gives is the innermost one, which is the one we keep.
 *
 * Files are read whole under the shared text rules (text_rules.h) and parsed from
 * memory, so the scan and libcyaml see the same bytes; a second document is refused
 * (libcyaml would silently load only the first). */
#include "yaml_check.h"

#include <errno.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <yaml.h>

#include "decimal.h"
#include "text_rules.h"

/* ---- pre-scan ------------------------------------------------------------------------ */

#define SCAN_MAX_DEPTH 16

typedef struct {
  bool is_mapping, expect_key;
  size_t index; /* number of entries started so far, when a sequence */
  char key[64]; /* last key seen, when a mapping */
} scan_level;

typedef struct {
  scan_level lv[SCAN_MAX_DEPTH];
  int depth; /* open collections, may exceed SCAN_MAX_DEPTH */
} scan_stack;

static bool is_numeric_key(const char *key, const char *const *keys, size_t n) {
  for (size_t i = 0; i < n; i++)
    if (strcmp(key, keys[i]) == 0) return true;
  return false;
}

/* The innermost tracked level, or NULL at top level or beyond the tracked depth. */
static scan_level *scan_top(scan_stack *st) {
  return (st->depth >= 1 && st->depth <= SCAN_MAX_DEPTH) ? &st->lv[st->depth - 1] : NULL;
}

/* Field path such as "clusters[1].d0_sd_mm" from the open levels. */
static void scan_path(const scan_stack *st, char *buf, size_t n) {
  buf[0] = '\0';
  for (int i = 0; i < st->depth && i < SCAN_MAX_DEPTH; i++) {
    size_t len = strlen(buf);
    if (st->lv[i].is_mapping)
      snprintf(buf + len, n - len, "%s%s", len ? "." : "", st->lv[i].key);
    else if (st->lv[i].index > 0)
      snprintf(buf + len, n - len, "[%zu]", st->lv[i].index - 1);
  }
}

/* A new value (scalar, alias or collection) starts: counts sequence entries. */
static void scan_value_start(scan_stack *st) {
  scan_level *top = scan_top(st);
  if (top && !top->is_mapping) top->index++;
}

/* A value is complete: the enclosing mapping expects a key next. */
static void scan_value_done(scan_stack *st) {
  scan_level *top = scan_top(st);
  if (top && top->is_mapping) top->expect_key = true;
}

/* Check a scalar that is a value (not a key) in the innermost level top (may be NULL);
 * RP_OK or RP_EPARSE. */
static rp_status scan_scalar(const char *path, const scan_stack *st, const scan_level *top,
                             const yaml_event_t *ev, const char *const *keys, size_t n_keys,
                             rp_error *err) {
  if (!top || !top->is_mapping || !is_numeric_key(top->key, keys, n_keys)) return RP_OK;
  const char *text = (const char *)ev->data.scalar.value;
  double v;
  rp_decimal_result r = rp_decimal_parse(text, &v);
  if (r == RP_DECIMAL_OK) return RP_OK;
  char field[256];
  scan_path(st, field, sizeof field);
  size_t line = (size_t)ev->start_mark.line + 1, col = (size_t)ev->start_mark.column + 1;
  if (r == RP_DECIMAL_NOT_PLAIN)
    return rp_error_set(err, RP_EPARSE, "%s:%zu:%zu: %s: '%s' is not a plain decimal number",
                        path, line, col, field, text);
  return rp_error_set(err, RP_EPARSE, "%s:%zu:%zu: %s: '%s' is out of the range of a double",
                      path, line, col, field, text);
}

/* The scan over an initialised parser (deleted here). */
static rp_status scan_parser(const char *path, yaml_parser_t *pp,
                             const char *const *numeric_keys, size_t n_keys, rp_error *err) {
  yaml_parser_t parser = *pp;
  size_t documents = 0;
  scan_stack st;
  memset(&st, 0, sizeof st);
  rp_status s = RP_OK;
  for (bool done = false; !done && s == RP_OK;) {
    yaml_event_t ev;
    if (!yaml_parser_parse(&parser, &ev)) {
      s = rp_error_set(err, RP_EPARSE, "%s:%zu:%zu: YAML syntax: %s%s%s", path,
                       (size_t)parser.problem_mark.line + 1,
                       (size_t)parser.problem_mark.column + 1,
                       parser.problem ? parser.problem : "error", parser.context ? " " : "",
                       parser.context ? parser.context : "");
      break;
    }
    switch (ev.type) {
      case YAML_MAPPING_START_EVENT:
      case YAML_SEQUENCE_START_EVENT:
        scan_value_start(&st);
        if (st.depth < SCAN_MAX_DEPTH) {
          scan_level *nl = &st.lv[st.depth];
          nl->is_mapping = ev.type == YAML_MAPPING_START_EVENT;
          nl->expect_key = true;
          nl->index = 0;
          nl->key[0] = '\0';
        }
        st.depth++;
        break;
      case YAML_MAPPING_END_EVENT:
      case YAML_SEQUENCE_END_EVENT:
        st.depth--;
        scan_value_done(&st);
        break;
      case YAML_SCALAR_EVENT: {
        scan_level *top = scan_top(&st);
        if (top && top->is_mapping && top->expect_key) {
          snprintf(top->key, sizeof top->key, "%s", (const char *)ev.data.scalar.value);
          top->expect_key = false;
          break;
        }
        scan_value_start(&st);
        s = scan_scalar(path, &st, top, &ev, numeric_keys, n_keys, err);
        scan_value_done(&st);
        break;
      }
      case YAML_ALIAS_EVENT:
        scan_value_start(&st);
        scan_value_done(&st);
        break;
      case YAML_DOCUMENT_START_EVENT:
        /* libcyaml loads the first document and ignores the rest: refuse them */
        if (++documents > 1)
          s = rp_error_set(err, RP_EPARSE, "%s:%zu:%zu: a second YAML document ('---'): a "
                           "file holds one document", path, (size_t)ev.start_mark.line + 1,
                           (size_t)ev.start_mark.column + 1);
        break;
      case YAML_STREAM_END_EVENT:
        done = true;
        break;
      default:
        break;
    }
    yaml_event_delete(&ev);
  }
  yaml_parser_delete(&parser);
  return s;
}

rp_status rp_yaml_scan_numbers(const char *path, FILE *f, const char *const *numeric_keys,
                               size_t n_keys, rp_error *err) {
  if (path == NULL || f == NULL || (numeric_keys == NULL && n_keys > 0))
    return rp_error_set(err, RP_EINVAL, "YAML number scan: path, file or key list is NULL");
  yaml_parser_t parser;
  if (!yaml_parser_initialize(&parser))
    return rp_error_set(err, RP_ENOMEM, "%s: cannot initialise the YAML parser", path);
  yaml_parser_set_input_file(&parser, f);
  return scan_parser(path, &parser, numeric_keys, n_keys, err);
}

rp_status rp_yaml_scan_numbers_data(const char *path, const char *data, size_t n,
                                    const char *const *numeric_keys, size_t n_keys,
                                    rp_error *err) {
  if (path == NULL || (data == NULL && n > 0) || (numeric_keys == NULL && n_keys > 0))
    return rp_error_set(err, RP_EINVAL, "YAML number scan: path, data or key list is NULL");
  yaml_parser_t parser;
  if (!yaml_parser_initialize(&parser))
    return rp_error_set(err, RP_ENOMEM, "%s: cannot initialise the YAML parser", path);
  yaml_parser_set_input_string(&parser, (const unsigned char *)(data ? data : ""), n);
  return scan_parser(path, &parser, numeric_keys, n_keys, err);
}

/* ---- libcyaml log collector ---------------------------------------------------------- */

void rp_yaml_log_fn(cyaml_log_t level, void *ctx, const char *fmt, va_list args) {
  rp_yaml_log *lc = ctx;
  if (lc == NULL || level < CYAML_LOG_ERROR) return;
  char piece[RP_ERROR_MSG_LEN];
  vsnprintf(piece, sizeof piece, fmt, args);
  char *p = piece;
  while (*p == ' ' || *p == '\t') p++;
  size_t n = strlen(p);
  while (n > 0 && (p[n - 1] == '\n' || p[n - 1] == ' ')) p[--n] = '\0';
  if (strncmp(p, "Load: ", 6) == 0) p += 6;
  if (*p == '\0' || strcmp(p, "Backtrace:") == 0) return;
  /* "(line: N, column: M)": keep the first (innermost) position, drop it from the text */
  char *pos = strstr(p, " (line: ");
  if (pos) {
    unsigned l, c;
    if (sscanf(pos, " (line: %u, column: %u)", &l, &c) == 2 && !lc->have_pos)
      lc->line = l, lc->column = c, lc->have_pos = true;
    *pos = '\0';
  }
  size_t len = strlen(lc->text);
  snprintf(lc->text + len, sizeof lc->text - len, "%s%s", len ? "; " : "", p);
}

rp_status rp_yaml_log_to_error(const rp_yaml_log *log, const char *path, cyaml_err_t ce,
                               rp_error *err) {
  if (ce == CYAML_ERR_OOM) return rp_error_set(err, RP_ENOMEM, "%s: out of memory", path);
  const char *text = log->text[0] ? log->text : cyaml_strerror(ce);
  if (log->have_pos)
    return rp_error_set(err, RP_EPARSE, "%s:%u:%u: %s", path, log->line, log->column, text);
  return rp_error_set(err, RP_EPARSE, "%s: %s", path, text);
}

/* ---- the whole load -------------------------------------------------------------------- */

static cyaml_config_t load_config(rp_yaml_log *lc) {
  const cyaml_config_t cfg = {.log_fn = rp_yaml_log_fn,
                              .log_ctx = lc,
                              .mem_fn = cyaml_mem,
                              .log_level = CYAML_LOG_ERROR,
                              .flags = CYAML_CFG_DEFAULT};
  return cfg;
}

rp_status rp_yaml_load_data(const char *path, const char *data, size_t n,
                            const cyaml_schema_value_t *schema, const char *const *numeric_keys,
                            size_t n_keys, const char *empty_hint, cyaml_data_t **doc,
                            rp_error *err) {
  if (doc) *doc = NULL;
  if (path == NULL || (data == NULL && n > 0) || schema == NULL || empty_hint == NULL ||
      doc == NULL)
    return rp_error_set(err, RP_EINVAL, "YAML load: path, data, schema, hint or output is NULL");
  size_t body = 0;
  RP_TRY(rp_text_check(path, data, n, &body, err));
  data += body;
  n -= body;
  RP_TRY(rp_yaml_scan_numbers_data(path, data, n, numeric_keys, n_keys, err));
  if (n == 0) return rp_error_set(err, RP_EPARSE, "%s: empty file: %s", path, empty_hint);
  rp_yaml_log lc;
  memset(&lc, 0, sizeof lc);
  const cyaml_config_t cfg = load_config(&lc);
  cyaml_data_t *out = NULL;
  cyaml_err_t ce = cyaml_load_data((const uint8_t *)data, n, &cfg, schema, &out, NULL);
  if (ce != CYAML_OK) return rp_yaml_log_to_error(&lc, path, ce, err);
  if (out == NULL) return rp_error_set(err, RP_EPARSE, "%s: empty file: %s", path, empty_hint);
  *doc = out;
  return RP_OK;
}

rp_status rp_yaml_load_file(const char *path, const cyaml_schema_value_t *schema,
                            const char *const *numeric_keys, size_t n_keys,
                            const char *empty_hint, cyaml_data_t **doc, rp_error *err) {
  if (doc) *doc = NULL;
  if (path == NULL || schema == NULL || empty_hint == NULL || doc == NULL)
    return rp_error_set(err, RP_EINVAL, "YAML load: path, schema, hint or output is NULL");
  char *text = NULL;
  size_t n = 0;
  RP_TRY(rp_text_read_file(path, &text, &n, err));
  rp_status s = rp_yaml_load_data(path, text, n, schema, numeric_keys, n_keys, empty_hint, doc,
                                  err);
  free(text);
  return s;
}

void rp_yaml_free(const cyaml_schema_value_t *schema, cyaml_data_t *doc) {
  if (schema == NULL || doc == NULL) return;
  rp_yaml_log lc; /* anything cyaml_free logs is discarded */
  memset(&lc, 0, sizeof lc);
  const cyaml_config_t cfg = load_config(&lc);
  cyaml_free(&cfg, schema, doc, 0);
}
