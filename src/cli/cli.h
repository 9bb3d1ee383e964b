/* cli.h — shared pieces of the command-line tool: option parsing that reports bad
 * values clearly, the scattering options every command shares, and JSON output.
 * No numerics here: commands parse, call the library, print. */
#ifndef RP_CLI_H
#define RP_CLI_H

#include <jansson.h>
#include <stdio.h>

#include "cli/opts.h"
#include "rainprint/drop.h"
#include "rainprint/dsd.h"
#include "rainprint/status.h"

/* Exit codes of the tool. */
enum { RP_EXIT_OK = 0, RP_EXIT_COMPUTE = 1, RP_EXIT_USAGE = 2 };

/* One command: name, one-line summary, entry point. */
typedef struct {
  const char *name;
  const char *summary;
  int (*run)(int argc, char **argv);
} rp_cli_command;

/* Print "rainprint CMD: message" to stderr and return the exit code for status s. */
int rp_cli_fail(const char *cmd, rp_status s, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));
/* Same, from an rp_error filled by the library. */
int rp_cli_fail_err(const char *cmd, const rp_error *err);

/* The scattering configuration a command works with, from the shared option tables
 * (rp_cli_scatter_from_opts below). */
typedef struct {
  rp_drop_config cfg;
  const char *band;      /* band letter given, or NULL */
  int have_frequency;
  int n_scatter_given;   /* how many scattering options (not --json/--help) were given */
  int json;
  int help;
} rp_cli_scatter;

void rp_cli_scatter_init(rp_cli_scatter *s);
/* The band letter for JSON output: the canonical letter of the band given (or of the
 * default band), NULL (JSON null) for an explicit --frequency, even one at a band centre. */
const char *rp_cli_scatter_band(const rp_cli_scatter *s);

/* After parsing: resolves band/frequency, checks the config. 0 or an exit code. */
int rp_cli_scatter_finish(const char *cmd, rp_cli_scatter *s);

/* JSON helpers: {re, im}; a real that is non-finite becomes null; text (a label, a file
 * name) as a JSON string, with the bytes of text that is not valid UTF-8 replaced by '?'
 * (jansson refuses such text, and the key would silently go missing); NULL -> null. */
json_t *rp_json_complex(double complex z);
json_t *rp_json_real(double x);
json_t *rp_json_text(const char *text);
/* Print a JSON value to stdout (indent 2, 10 significant digits) and release it. */
int rp_json_print(json_t *root);

/* Output files written whole or not at all when a command writes several: create an
 * empty temporary file "PATH.tmp-XXXXXX" next to path (name into tmp, n bytes) with the
 * permissions a new file gets, fill it, then rp_cli_temp_commit renames it over path.
 * rp_cli_temp_create returns an open descriptor, or -1 after a message naming opt
 * (e.g. "csv"); rp_cli_temp_commit returns 0, or an exit code after a message (tmp is
 * removed). */
int rp_cli_temp_create(const char *cmd, const char *opt, const char *path, char *tmp, size_t n);
int rp_cli_temp_commit(const char *cmd, const char *opt, const char *tmp, const char *path);
/* 0 when a --plot name ends in .png, .svg or .pdf (any case), else an exit code after a
 * message: checked before any work is done. */
int rp_cli_check_plot_path(const char *cmd, const char *path);

/* Where the tool finds its data: $RAINPRINT_TABLES / $RAINPRINT_PRESETS, else the
 * source tree's scattering/ and dsd-presets/; the table cache is $RAINPRINT_CACHE, else
 * $XDG_CACHE_HOME/rainprint, else $HOME/.cache/rainprint (NULL if none). */
const char *rp_cli_tables_dir(void);
const char *rp_cli_presets_dir(void);
const char *rp_cli_cache_dir(void);
const char *rp_cli_climates_dir(void);

/* The DSD options shared by gate/curve (table rp_cli_dsd_opts): --preset NAME, --dsd MODEL
 * with --n0, --lambda, --mu, --nw, --d0, --dm, --rain-rate; --spectrum FILE.csv with
 * --row N; --dmin, --dmax; --kw2; --height. The parameters' bits in rp_cli_dsd.given are
 * 1 << (RP_OPT_x - RP_OPT_N0). */
enum { RP_OPT_N0 = 1100, RP_OPT_LAMBDA, RP_OPT_MU, RP_OPT_NW, RP_OPT_D0, RP_OPT_DM, RP_OPT_RAIN_RATE };
typedef struct {
  const char *preset, *model, *spectrum;
  double n0, lambda, mu, nw, d0, dm, rain_rate, kw2;
  double dmin, dmax;     /* NaN: not given (a preset's own truncation, else the default) */
  double height_km;      /* NaN: fall speeds as the formula gives them */
  unsigned given;   /* bit per RP_OPT_N0..RP_OPT_RAIN_RATE */
  long row;         /* 1-based spectrum row */
} rp_cli_dsd;

void rp_cli_dsd_init(rp_cli_dsd *o);

/* A built DSD with what it borrows. */
typedef struct {
  rp_dsd dsd;
  char label[128];       /* preset name, model name or "file row N (label)" */
  void *spectrum_set;    /* owned rp_spectrum_set, or NULL */
} rp_cli_dsd_built;

/* Build the DSD from the options (RP_OK) or report (returns the exit code). */
int rp_cli_dsd_build(const char *cmd, const rp_cli_dsd *o, rp_cli_dsd_built *out);
void rp_cli_dsd_release(rp_cli_dsd_built *b);

/* Parse "S,C,X" into up to max frequencies and band letters (NULL for none).
 * Returns the count, or -1 after printing a message. */
int rp_cli_parse_bands(const char *cmd, const char *text, double *freqs, const char **names,
                       int max);

/* ---- the shared option tables of the framework (opts.h) ------------------------------ */

/* --temperature, --shape, --axis-ratio, --canting-sd, --canting-model, --canting-approx,
 * --elevation, --method (the scattering configuration without the band). */
extern const rp_opts_spec rp_cli_scatter_opts[];
/* --band B (one band) and --frequency GHZ. */
extern const rp_opts_spec rp_cli_band_opts[];
/* --band LIST (several bands, no band twice) and --frequency GHZ. */
extern const rp_opts_spec rp_cli_bands_opts[];
/* --json. */
extern const rp_opts_spec rp_cli_json_opts[];
/* The DSD options (--preset, --dsd, parameters, --spectrum, --row, --dmin, --dmax, --kw2,
 * --height). */
extern const rp_opts_spec rp_cli_dsd_opts[];
/* Band names of the band table ("S", "C", "X", "Ku", "Ka"): resolver value = index. */
rp_status rp_cli_band_resolve(const char *text, int *value, rp_error *err);
extern const char *const rp_cli_band_names[];

/* Fill s from parsed options (tables rp_cli_scatter_opts and one of the band tables, if
 * the command has them; --json if present). Refuses conflicts (--band with --frequency,
 * --axis-ratio with --shape, --method mie with a non-sphere) and checks the configuration
 * (rp_drop_config_check). With a band list, cfg.freq_ghz is the first band's. 0 or an
 * exit code after a message. */
int rp_cli_scatter_from_opts(const rp_opts *o, rp_cli_scatter *s);
/* The same on top of s->cfg as it is (e.g. a table's configuration): only the options
 * given change it. */
int rp_cli_scatter_apply(const rp_opts *o, rp_cli_scatter *s);
/* The bands of --band LIST / --frequency (or default_list, e.g. "S,C,X"): up to max
 * frequencies and band letters (NULL for an explicit frequency). Count, or -exit code. */
int rp_cli_bands_from_opts(const rp_opts *o, const char *default_list, double *freqs,
                           const char **names, int max);
/* Fill d from parsed options of rp_cli_dsd_opts. 0 or an exit code. */
int rp_cli_dsd_from_opts(const rp_opts *o, rp_cli_dsd *d);

/* Output paths checked before any work starts (rp_output_check: the folder exists, a file
 * can be created there, the name is not a folder, FIFO or temporary name; a picture's name
 * ends in .png, .svg or .pdf). NULL paths are skipped. 0 or the usage exit code after a
 * message naming the option. */
int rp_cli_check_outputs(const char *cmd, const char *csv_path, const char *plot_path);
int rp_cli_check_output(const char *cmd, const char *opt, const char *path);

/* A file that could not be written: the one message every command gives,
 * "could not write <what> 'path': <system reason>" (path may be NULL, e.g. for standard
 * output). Returns the exit code (1). */
int rp_cli_write_failed(const char *cmd, const char *what, const char *path, int errnum);

/* Commands. */
int rp_cmd_drop(int argc, char **argv);
int rp_cmd_table(int argc, char **argv);
int rp_cmd_gate(int argc, char **argv);
int rp_cmd_curve(int argc, char **argv);
int rp_cmd_presets(int argc, char **argv);
int rp_cmd_relate(int argc, char **argv);
int rp_cmd_cache(int argc, char **argv);
int rp_cmd_pulses(int argc, char **argv);
int rp_cmd_scene(int argc, char **argv);
int rp_cmd_picture(int argc, char **argv);
int rp_cmd_score(int argc, char **argv);

#endif
