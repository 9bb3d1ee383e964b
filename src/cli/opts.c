/* opts.c — the tool's option parser and help generator (see opts.h for the rules).
 * Grammar: "--name VALUE", "--name=VALUE", flags "--name", "-h", "--" ends the options;
 * other words are positional. A value that looks like an option ("--x...") is taken as a
 * missing value, so "--diameter --band S" says "--diameter needs a value" rather than
 * reading "--band" as a diameter; negative numbers ("-5") are values. */
#include "cli/opts.h"

#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "io/decimal.h"
#include "rainprint/names.h"
#include "rainprint/version.h"

static void collect(const rp_opts_command *c, rp_opts *o) {
  memset(o, 0, sizeof *o);
  o->c = c;
  for (int t = 0; t < RP_OPTS_TABLES && c->tables[t] != NULL; t++)
    for (const rp_opts_spec *s = c->tables[t]; s->name != NULL && o->n < RP_OPTS_MAX; s++)
      o->v[o->n++].spec = s;
}

static rp_opts_value *find(rp_opts *o, const char *name, size_t len) {
  for (size_t i = 0; i < o->n; i++)
    if (strlen(o->v[i].spec->name) == len && strncmp(o->v[i].spec->name, name, len) == 0)
      return &o->v[i];
  return NULL;
}

static int fail(const rp_opts_command *c, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));
static int fail(const rp_opts_command *c, const char *fmt, ...) {
  fprintf(stderr, "rainprint %s: ", c->cmd);
  va_list ap;
  va_start(ap, fmt);
  vfprintf(stderr, fmt, ap);
  va_end(ap);
  fputc('\n', stderr);
  return RP_EXIT_USAGE;
}

static void fmt_num(double x, char *buf, size_t n) { snprintf(buf, n, "%.10g", x); }

void rp_opts_range_text(const rp_opts_spec *s, char *buf, size_t n) {
  if (!(s->flags & RP_OPTS_RANGED)) {
    if (n) buf[0] = '\0';
    return;
  }
  char lo[32], hi[32];
  fmt_num(s->lo, lo, sizeof lo);
  fmt_num(s->hi, hi, sizeof hi);
  if (s->flags & RP_OPTS_NO_HI) {
    snprintf(buf, n, "%s %s", (s->flags & RP_OPTS_LO_OPEN) ? "above" : "at least", lo);
    return;
  }
  snprintf(buf, n, "%c%s, %s%c", (s->flags & RP_OPTS_LO_OPEN) ? '(' : '[', lo, hi,
           (s->flags & RP_OPTS_HI_OPEN) ? ')' : ']');
}

int rp_opts_in_range(const rp_opts_spec *s, double x) {
  if (!(s->flags & RP_OPTS_RANGED)) return 1;
  const int lo_ok = (s->flags & RP_OPTS_LO_OPEN) ? x > s->lo : x >= s->lo;
  const int hi_ok = (s->flags & RP_OPTS_NO_HI) || ((s->flags & RP_OPTS_HI_OPEN) ? x < s->hi : x <= s->hi);
  return lo_ok && hi_ok;
}

static int out_of_range(const rp_opts_command *c, const rp_opts_spec *s, const char *text) {
  char r[80];
  rp_opts_range_text(s, r, sizeof r);
  if (s->flags & RP_OPTS_NO_HI) return fail(c, "--%s %s: the value must be %s", s->name, text, r);
  return fail(c, "--%s %s is outside the allowed range %s", s->name, text, r);
}

/* One enum item: by the names list (with suggestion) or the resolver. */
static int resolve_item(const rp_opts_command *c, const rp_opts_spec *s, const char *text,
                        int *value) {
  rp_error err = {0};
  char what[64];
  snprintf(what, sizeof what, "--%s value", s->name);
  if (s->names != NULL) {
    if (rp_names_find(s->names, s->n_names, NULL, 0, what, text, value, &err) == RP_OK) return 0;
    return fail(c, "%s", err.msg);
  }
  if (s->resolve != NULL) {
    if (s->resolve(text, value, &err) == RP_OK) return 0;
    const char *msg = err.msg[0] ? err.msg : rp_status_message(err.status);
    const char *hint = NULL;
    if (s->names_fn != NULL && strstr(msg, "did you mean") == NULL) {
      size_t n = 0;
      const char *const *names = s->names_fn(&n);
      if (strlen(text) > 1) hint = rp_names_suggest(names, n, text); /* 1 letter: any is near */
    }
    if (hint != NULL) return fail(c, "--%s: %s (did you mean '%s'?)", s->name, msg, hint);
    return fail(c, "--%s: %s", s->name, msg);
  }
  *value = -1;
  return 0;
}

static int parse_value(const rp_opts_command *c, rp_opts_value *v, const char *text) {
  const rp_opts_spec *s = v->spec;
  v->text = text;
  switch (s->kind) {
    case RP_OPTS_FLAG: return 0;
    case RP_OPTS_STRING:
      if (text[0] == '\0') return fail(c, "--%s: the value is empty (%s)", s->name, s->metavar);
      return 0;
    case RP_OPTS_DOUBLE:
      switch (rp_decimal_parse(text, &v->d)) {
        case RP_DECIMAL_OK: break;
        case RP_DECIMAL_OUT_OF_RANGE:
          return fail(c, "--%s: '%s' is out of the range of a double", s->name, text);
        default:
          return fail(c, "--%s: '%s' is not a finite number (plain decimal, e.g. 2.5 or 1e3)",
                      s->name, text);
      }
      return rp_opts_in_range(s, v->d) ? 0 : out_of_range(c, s, text);
    case RP_OPTS_LONG: {
      char *end = NULL;
      errno = 0;
      v->l = strtol(text, &end, 10);
      if (end == text || *end != '\0' || errno == ERANGE || text[0] == ' ')
        return fail(c, "--%s: '%s' is not a whole number", s->name, text);
      return rp_opts_in_range(s, (double)v->l) ? 0 : out_of_range(c, s, text);
    }
    case RP_OPTS_ENUM: return resolve_item(c, s, text, &v->e);
    case RP_OPTS_LIST: {
      const size_t len = strlen(text);
      if (len == 0) return fail(c, "--%s: the list is empty (%s)", s->name, s->metavar);
      if (len >= sizeof v->buf) return fail(c, "--%s: the list is too long", s->name);
      memcpy(v->buf, text, len + 1);
      v->n_items = 0;
      char *p = v->buf;
      for (;;) {
        char *comma = strchr(p, ',');
        if (comma) *comma = '\0';
        if (*p == '\0')
          return fail(c, "--%s: '%s' has an empty item (a list such as %s)", s->name, text,
                      s->metavar);
        if (v->n_items == RP_OPTS_LIST_MAX)
          return fail(c, "--%s: more than %d items", s->name, RP_OPTS_LIST_MAX);
        int value = -1;
        if (resolve_item(c, s, p, &value)) return RP_EXIT_USAGE;
        for (size_t k = 0; k < v->n_items; k++) {
          const int same = (value >= 0) ? v->item_values[k] == value : strcmp(v->items[k], p) == 0;
          if (same)
            return fail(c, "--%s: '%s' is listed twice in '%s'", s->name, p, text);
        }
        v->items[v->n_items] = p;
        v->item_values[v->n_items++] = value;
        if (!comma) break;
        p = comma + 1;
      }
      return 0;
    }
  }
  return 0;
}

static int unknown_option(const rp_opts_command *c, const rp_opts *o, const char *arg) {
  const char *names[RP_OPTS_MAX + 2];
  size_t n = 0;
  for (size_t i = 0; i < o->n; i++) names[n++] = o->v[i].spec->name;
  names[n++] = "help";
  names[n++] = "version";
  char bare[64];
  const char *p = arg;
  while (*p == '-') p++;
  snprintf(bare, sizeof bare, "%.*s", (int)strcspn(p, "="), p);
  const char *hint = rp_names_suggest(names, n, bare);
  if (hint != NULL)
    return fail(c, "unknown option '%s' (did you mean '--%s'?)", arg, hint);
  return fail(c, "unknown option '%s' (rainprint %s --help lists the options)", arg, c->cmd);
}

static int looks_like_option(const char *a) {
  return a[0] == '-' && a[1] == '-' && a[2] != '\0' && !(a[2] >= '0' && a[2] <= '9') &&
         a[2] != '.';
}

int rp_opts_parse(const rp_opts_command *c, int argc, char **argv, rp_opts *o) {
  collect(c, o);
  /* -h/--help/--version anywhere before "--" win over everything else. */
  for (int i = 1; i < argc; i++) {
    if (strcmp(argv[i], "--") == 0) break;
    if (strcmp(argv[i], "-h") == 0 || strcmp(argv[i], "--help") == 0) {
      rp_opts_help(c, stdout);
      return RP_EXIT_OK;
    }
    if (strcmp(argv[i], "--version") == 0) {
      printf("rainprint %s\n", RP_VERSION_STRING);
      return RP_EXIT_OK;
    }
  }
  int only_positional = 0;
  for (int i = 1; i < argc; i++) {
    const char *a = argv[i];
    if (!only_positional && strcmp(a, "--") == 0) {
      only_positional = 1;
      continue;
    }
    if (only_positional || a[0] != '-' || a[1] == '\0') {
      if (o->n_pos >= c->max_positional || o->n_pos >= RP_OPTS_POS_MAX) {
        if (c->max_positional == 0)
          return fail(c, "unexpected argument '%s' (options start with --)", a);
        return fail(c, "unexpected argument '%s' after %s", a, c->positional);
      }
      o->pos[o->n_pos++] = a;
      continue;
    }
    if (a[1] != '-') return unknown_option(c, o, a);
    const char *name = a + 2;
    const char *eq = strchr(name, '=');
    const size_t len = eq ? (size_t)(eq - name) : strlen(name);
    rp_opts_value *v = find(o, name, len);
    if (v == NULL) return unknown_option(c, o, a);
    const rp_opts_spec *s = v->spec;
    if (v->given && !(s->flags & RP_OPTS_REPEAT))
      return fail(c, "--%s is given twice (give it once)", s->name);
    const char *text = NULL;
    if (s->kind == RP_OPTS_FLAG) {
      if (eq) return fail(c, "--%s takes no value", s->name);
    } else if (eq) {
      text = eq + 1;
    } else {
      if (i + 1 >= argc || looks_like_option(argv[i + 1]))
        return fail(c, "--%s needs a value (%s)", s->name, s->metavar ? s->metavar : "VALUE");
      text = argv[++i];
    }
    v->given++;
    v->position = i;
    if (text != NULL && parse_value(c, v, text)) return RP_EXIT_USAGE;
  }
  return RP_OPTS_GO_ON;
}

/* ---- help ----------------------------------------------------------------------------- */

#define HELP_COL 26
#define HELP_WIDTH 79

/* Write text wrapped to HELP_WIDTH, continuation lines indented by indent, the first line
 * starting at column col. */
static void wrap(FILE *out, const char *text, int col, int indent) {
  const char *p = text;
  while (*p) {
    while (*p == ' ') p++;
    size_t w = strcspn(p, " ");
    if (w == 0) break;
    if (col > indent && col + 1 + (int)w > HELP_WIDTH) {
      fprintf(out, "\n%*s", indent, "");
      col = indent;
    } else if (col > indent) {
      fputc(' ', out);
      col++;
    }
    fwrite(p, 1, w, out);
    col += (int)w;
    p += w;
  }
  fputc('\n', out);
}

static void help_line(FILE *out, const rp_opts_spec *s) {
  char head[64];
  snprintf(head, sizeof head, "  --%s%s%s", s->name, s->metavar ? " " : "",
           s->metavar ? s->metavar : "");
  char text[600];
  size_t k = (size_t)snprintf(text, sizeof text, "%s", s->help ? s->help : "");
  char r[80];
  rp_opts_range_text(s, r, sizeof r);
  if (r[0] && k < sizeof text) k += (size_t)snprintf(text + k, sizeof text - k, "; %s%s",
                          (s->flags & RP_OPTS_NO_HI) ? "" : "allowed ", r);
  const char *const *names = s->names;
  size_t n_names = s->n_names;
  if (names == NULL && s->names_fn != NULL) names = s->names_fn(&n_names);
  if ((s->kind == RP_OPTS_ENUM || s->kind == RP_OPTS_LIST) && names != NULL && k < sizeof text) {
    char list[300];
    rp_names_list(names, n_names, list, sizeof list);
    k += (size_t)snprintf(text + k, sizeof text - k, ": %s", list);
  }
  if (s->default_text && k < sizeof text)
    snprintf(text + k, sizeof text - k, " (default %s)", s->default_text);
  fputs(head, out);
  int col = (int)strlen(head);
  if (col >= HELP_COL - 1) {
    fprintf(out, "\n%*s", HELP_COL, "");
  } else {
    fprintf(out, "%*s", HELP_COL - col, "");
  }
  wrap(out, text, HELP_COL, HELP_COL);
}

void rp_opts_help(const rp_opts_command *c, FILE *out) {
  fprintf(out, "Usage: rainprint %s\n\n", c->usage);
  if (c->about) fprintf(out, "%s\n\n", c->about);
  for (int t = 0; t < RP_OPTS_TABLES && c->tables[t] != NULL; t++) {
    fprintf(out, "%s:\n", c->titles[t] ? c->titles[t] : "Options");
    for (const rp_opts_spec *s = c->tables[t]; s->name != NULL; s++) help_line(out, s);
    fputc('\n', out);
  }
  fprintf(out, "Common options:\n  -h, --help              this help\n"
               "  --version               the version of rainprint\n\n");
  if (c->notes) fprintf(out, "%s\n\n", c->notes);
  if (c->examples) fprintf(out, "Example%s:\n%s\n", strchr(c->examples, '\n') ? "s" : "",
                           c->examples);
}

/* ---- access --------------------------------------------------------------------------- */

const rp_opts_value *rp_opts_get(const rp_opts *o, const char *name) {
  for (size_t i = 0; i < o->n; i++)
    if (strcmp(o->v[i].spec->name, name) == 0) return &o->v[i];
  fprintf(stderr, "rainprint %s: internal error: no option --%s\n", o->c ? o->c->cmd : "?", name);
  return NULL;
}

int rp_opts_given(const rp_opts *o, const char *name) {
  const rp_opts_value *v = rp_opts_get(o, name);
  return v != NULL && v->given > 0;
}

double rp_opts_double(const rp_opts *o, const char *name, double fallback) {
  const rp_opts_value *v = rp_opts_get(o, name);
  return v != NULL && v->given ? v->d : fallback;
}

long rp_opts_long(const rp_opts *o, const char *name, long fallback) {
  const rp_opts_value *v = rp_opts_get(o, name);
  return v != NULL && v->given ? v->l : fallback;
}

int rp_opts_enum(const rp_opts *o, const char *name, int fallback) {
  const rp_opts_value *v = rp_opts_get(o, name);
  return v != NULL && v->given ? v->e : fallback;
}

const char *rp_opts_string(const rp_opts *o, const char *name, const char *fallback) {
  const rp_opts_value *v = rp_opts_get(o, name);
  return v != NULL && v->given ? v->text : fallback;
}

int rp_opts_exclusive(const rp_opts *o, ...) {
  const char *given[RP_OPTS_MAX];
  size_t n_given = 0, n_all = 0;
  va_list ap;
  va_start(ap, o);
  for (const char *name; (name = va_arg(ap, const char *)) != NULL && n_all < RP_OPTS_MAX;) {
    n_all++;
    if (rp_opts_given(o, name)) given[n_given++] = name;
  }
  va_end(ap);
  if (n_given <= 1) return 0;
  if (n_given == 2) return fail(o->c, "give either --%s or --%s, not both", given[0], given[1]);
  return fail(o->c, "--%s, --%s and --%s cannot be given together (give only one of them)",
              given[0], given[1], given[2]);
}

int rp_opts_requires(const rp_opts *o, const char *opt, const char *needed) {
  if (rp_opts_given(o, opt) && !rp_opts_given(o, needed))
    return fail(o->c, "--%s needs --%s", opt, needed);
  return 0;
}

int rp_opts_required(const rp_opts *o, const char *name) {
  if (rp_opts_given(o, name)) return 0;
  return fail(o->c, "--%s is required (rainprint %s --help)", name, o->c->cmd);
}
