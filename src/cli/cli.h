/* cli.h — shared pieces of the command-line tool: option parsing that reports bad
 * values clearly, the scattering options every command shares, and JSON output.
 * No numerics here: commands parse, call the library, print. */
#ifndef RP_CLI_H
#define RP_CLI_H

#include <getopt.h>
#include <jansson.h>
#include <stdio.h>

#include "rainprint/drop.h"
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

/* Strict number parsing: the whole text must be a finite number. */
int rp_cli_parse_double(const char *cmd, const char *opt, const char *text, double *out);
int rp_cli_parse_long(const char *cmd, const char *opt, const char *text, long *out);

/* The scattering options shared by drop/table/gate/...: --band, --frequency,
 * --temperature, --shape, --axis-ratio, --canting-sd, --canting-model,
 * --canting-approx, --elevation, --method. Option codes start at 1000. */
enum {
  RP_OPT_BAND = 1000, RP_OPT_FREQUENCY, RP_OPT_TEMPERATURE, RP_OPT_SHAPE, RP_OPT_AXIS_RATIO,
  RP_OPT_CANTING_SD, RP_OPT_CANTING_MODEL, RP_OPT_CANTING_APPROX, RP_OPT_ELEVATION,
  RP_OPT_METHOD, RP_OPT_JSON, RP_OPT_HELP, RP_OPT_FIRST_FREE
};
#define RP_CLI_SCATTER_LONGOPTS                                            \
  {"band", required_argument, NULL, RP_OPT_BAND},                          \
  {"frequency", required_argument, NULL, RP_OPT_FREQUENCY},                \
  {"temperature", required_argument, NULL, RP_OPT_TEMPERATURE},            \
  {"shape", required_argument, NULL, RP_OPT_SHAPE},                        \
  {"axis-ratio", required_argument, NULL, RP_OPT_AXIS_RATIO},              \
  {"canting-sd", required_argument, NULL, RP_OPT_CANTING_SD},              \
  {"canting-model", required_argument, NULL, RP_OPT_CANTING_MODEL},        \
  {"canting-approx", no_argument, NULL, RP_OPT_CANTING_APPROX},            \
  {"elevation", required_argument, NULL, RP_OPT_ELEVATION},                \
  {"method", required_argument, NULL, RP_OPT_METHOD},                      \
  {"json", no_argument, NULL, RP_OPT_JSON},                                \
  {"help", no_argument, NULL, RP_OPT_HELP}

/* Help text for the shared scattering options. */
extern const char rp_cli_scatter_help[];

/* State of the shared options while parsing. */
typedef struct {
  rp_drop_config cfg;
  const char *band;      /* band letter given, or NULL */
  int have_frequency;
  int json;
  int help;
} rp_cli_scatter;

void rp_cli_scatter_init(rp_cli_scatter *s);
/* Handle one getopt code. Returns 1 if handled, 0 if not one of ours,
 * -RP_EXIT_USAGE on a bad value (message printed). */
int rp_cli_scatter_option(const char *cmd, rp_cli_scatter *s, int code, const char *arg);
/* After parsing: resolves band/frequency, checks the config. 0 or an exit code. */
int rp_cli_scatter_finish(const char *cmd, rp_cli_scatter *s);

/* JSON helpers: {re, im}; a real that is non-finite becomes null. */
json_t *rp_json_complex(double complex z);
json_t *rp_json_real(double x);
/* Print a JSON value to stdout (indent 2, 10 significant digits) and release it. */
int rp_json_print(json_t *root);

/* Commands. */
int rp_cmd_drop(int argc, char **argv);
int rp_cmd_table(int argc, char **argv);

#endif
