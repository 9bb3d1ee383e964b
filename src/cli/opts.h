/* opts.h — the option framework of the tool: each command describes its options in a
 * table (name, kind, value name, help, allowed range or list of names, default shown in
 * the help) and gets, from one parser, the same behaviour everywhere:
 *   - "--name needs a value (MM)" for a value-taking option at the end of the line or
 *     followed by another option;
 *   - a misspelt option or enum value gets "did you mean ...?" (names.h);
 *   - an option given twice is refused (unless marked RP_OPTS_REPEAT), so are duplicate
 *     list items (--band S,S); conflicts between options are refused by rp_opts_exclusive;
 *   - numbers follow the plain-decimal rule of the input files (io/decimal.h) and must lie
 *     in the range the table gives, which is also what the help prints (one source);
 *   - -h / --help and --version work for every command; the help is generated from the
 *     table, with the command's examples (each of which must run as printed).
 * The parser keeps pointers into argv (valid for the life of the program). No global
 * state: everything lives in the rp_opts the caller owns. Only the tool uses this. */
#ifndef RP_CLI_OPTS_H
#define RP_CLI_OPTS_H

#include <stddef.h>
#include <stdio.h>

#include "rainprint/status.h"

typedef enum {
  RP_OPTS_FLAG,   /* no value */
  RP_OPTS_STRING, /* any text (a file name, a label) */
  RP_OPTS_DOUBLE, /* a plain decimal, optionally in [lo, hi] (RP_OPTS_RANGED) */
  RP_OPTS_LONG,   /* a whole number, base 10, optionally in [lo, hi] */
  RP_OPTS_ENUM,   /* one of names[] or accepted by resolve() */
  RP_OPTS_LIST    /* comma-separated items, each one of names[] / resolve() when given,
                     otherwise any non-empty text; no item twice */
} rp_opts_kind;

/* spec.flags */
#define RP_OPTS_RANGED 0x1u  /* lo/hi apply (DOUBLE, LONG) */
#define RP_OPTS_LO_OPEN 0x2u /* lo itself is not allowed: (lo, ... */
#define RP_OPTS_HI_OPEN 0x4u /* hi itself is not allowed: ..., hi) */
#define RP_OPTS_REPEAT 0x8u  /* may be given more than once (the last value counts) */
#define RP_OPTS_NO_HI 0x10u  /* with RP_OPTS_RANGED: only lo applies ("at least lo") */

/* Turns an enum/list item into a value, or fails with a message naming the valid values
 * (e.g. a wrapper of rp_shape_from_name). */
typedef rp_status (*rp_opts_resolver)(const char *text, int *value, rp_error *err);

typedef struct {
  const char *name;         /* long name without "--"; NULL ends a table */
  rp_opts_kind kind;
  const char *metavar;      /* value name in help and messages ("MM"); NULL for flags */
  const char *help;         /* what it does; the range and default are appended */
  double lo, hi;            /* allowed range, with RP_OPTS_RANGED */
  unsigned flags;
  const char *const *names; /* ENUM/LIST: the valid names (value = index) ... */
  size_t n_names;
  rp_opts_resolver resolve; /* ... or a resolver (used when names is NULL) */
  const char *default_text; /* shown as "(default X)"; NULL: none */
  /* ENUM/LIST with a resolver: the canonical names, listed in the help and used for "did
   * you mean" when the resolver's message has none (may be NULL). */
  const char *const *(*names_fn)(size_t *n);
} rp_opts_spec;

/* Table rows by kind (designated initializers: the fields a kind does not use stay zero).
 * flags: RP_OPTS_RANGED etc.; def: the default shown in the help, or NULL. */
#define RP_OPTS_END {.name = NULL}
#define RP_OPTS_FLAG_ROW(n, h) {.name = (n), .kind = RP_OPTS_FLAG, .help = (h)}
#define RP_OPTS_STRING_ROW(n, m, h) {.name = (n), .kind = RP_OPTS_STRING, .metavar = (m), .help = (h)}
#define RP_OPTS_DOUBLE_ROW(n, m, h, lo_, hi_, fl, def)                                         \
  {.name = (n), .kind = RP_OPTS_DOUBLE, .metavar = (m), .help = (h), .lo = (lo_), .hi = (hi_),  \
   .flags = (fl), .default_text = (def)}
#define RP_OPTS_LONG_ROW(n, m, h, lo_, hi_, fl, def)                                           \
  {.name = (n), .kind = RP_OPTS_LONG, .metavar = (m), .help = (h), .lo = (lo_), .hi = (hi_),    \
   .flags = (fl), .default_text = (def)}
/* names: a static array of names (value = index). */
#define RP_OPTS_ENUM_ROW(n, m, h, names_, def)                                                 \
  {.name = (n), .kind = RP_OPTS_ENUM, .metavar = (m), .help = (h), .names = (names_),           \
   .n_names = sizeof(names_) / sizeof((names_)[0]), .default_text = (def)}
/* res: resolver; nf: function listing the canonical names (or NULL). */
#define RP_OPTS_ENUM_FN_ROW(n, m, h, res, nf, def)                                             \
  {.name = (n), .kind = RP_OPTS_ENUM, .metavar = (m), .help = (h), .resolve = (res),            \
   .names_fn = (nf), .default_text = (def)}
#define RP_OPTS_LIST_ROW(n, m, h, names_)                                                      \
  {.name = (n), .kind = RP_OPTS_LIST, .metavar = (m), .help = (h), .names = (names_),           \
   .n_names = sizeof(names_) / sizeof((names_)[0])}
#define RP_OPTS_LIST_FN_ROW(n, m, h, res, nf)                                                  \
  {.name = (n), .kind = RP_OPTS_LIST, .metavar = (m), .help = (h), .resolve = (res),            \
   .names_fn = (nf)}
/* A list of free text items (no names). */
#define RP_OPTS_TEXT_LIST_ROW(n, m, h) {.name = (n), .kind = RP_OPTS_LIST, .metavar = (m), .help = (h)}

#define RP_OPTS_MAX 80      /* options of one command, all tables together */
#define RP_OPTS_LIST_MAX 16 /* items of one list option */
#define RP_OPTS_POS_MAX 4   /* positional words */
#define RP_OPTS_TABLES 4

typedef struct {
  const rp_opts_spec *spec;
  int given;                 /* times given (0: absent) */
  int position;              /* argv index of its last occurrence */
  const char *text;          /* the value as typed (NULL for flags) */
  double d;                  /* DOUBLE */
  long l;                    /* LONG */
  int e;                     /* ENUM: index in names or the resolver's value */
  size_t n_items;            /* LIST */
  const char *items[RP_OPTS_LIST_MAX];
  int item_values[RP_OPTS_LIST_MAX]; /* index or resolver value (-1 for free text) */
  char buf[256];             /* storage of the items */
} rp_opts_value;

/* One command: its options in up to RP_OPTS_TABLES tables (shared tables such as the
 * scattering options plus the command's own), each with a section title for the help. */
typedef struct {
  const char *cmd;                          /* "drop" */
  const char *usage;                        /* after "Usage: rainprint " */
  const char *about;                        /* paragraph(s) of the help, '\n'-separated */
  const char *examples;                     /* lines, each a command that runs as printed */
  const rp_opts_spec *tables[RP_OPTS_TABLES];
  const char *titles[RP_OPTS_TABLES];
  int max_positional;                       /* words allowed after the options */
  const char *positional;                   /* their name in messages ("list|clear") */
  const char *notes;                        /* text after the options (may be NULL) */
} rp_opts_command;

typedef struct {
  const rp_opts_command *c;
  size_t n;
  rp_opts_value v[RP_OPTS_MAX];
  int n_pos;
  const char *pos[RP_OPTS_POS_MAX];
} rp_opts;

/* rp_opts_parse's return when the command should go on. */
#define RP_OPTS_GO_ON (-1)

/* Parse argv[1..argc-1] (argv[0] is the command name) into *o. Returns RP_OPTS_GO_ON, or
 * an exit code to return at once: 0 after printing the help (-h, --help) or the version
 * (--version), 2 after a one-line message on stderr for bad usage. */
int rp_opts_parse(const rp_opts_command *c, int argc, char **argv, rp_opts *o);

/* Print the help of c (generated from its tables) to out. */
void rp_opts_help(const rp_opts_command *c, FILE *out);

/* The value record of option name (NULL if the command has no such option: a programming
 * error, reported on stderr once). */
const rp_opts_value *rp_opts_get(const rp_opts *o, const char *name);
int rp_opts_given(const rp_opts *o, const char *name);
/* Typed access with a fallback when not given. */
double rp_opts_double(const rp_opts *o, const char *name, double fallback);
long rp_opts_long(const rp_opts *o, const char *name, long fallback);
int rp_opts_enum(const rp_opts *o, const char *name, int fallback);
const char *rp_opts_string(const rp_opts *o, const char *name, const char *fallback);

/* 0 when at most one of the NULL-terminated option names is given, else the usage exit
 * code after "give either --a or --b, not both" (or "only one of --a, --b and --c"). */
int rp_opts_exclusive(const rp_opts *o, ...) __attribute__((sentinel));
/* 0 unless opt is given without needed: then exit code after "--opt needs --needed". */
int rp_opts_requires(const rp_opts *o, const char *opt, const char *needed);
/* 0 when the option is given, else the exit code after "--name is required". */
int rp_opts_required(const rp_opts *o, const char *name);

/* "(0, 10]" style text of a spec's range (empty when not ranged). */
void rp_opts_range_text(const rp_opts_spec *s, char *buf, size_t n);
/* 1 when x lies in the spec's range (always when not ranged). */
int rp_opts_in_range(const rp_opts_spec *s, double x);

#endif
