/* main.c — the rainprint tool: parse the command name, hand over, exit.
 * Exit codes: 0 success, 2 bad usage or input, 1 failure while computing. */
#include <errno.h>
#include <stdio.h>
#include <string.h>

#include <fftw3.h>
#include <gsl/gsl_errno.h>

#include "cli/cli.h"
#include "rainprint/names.h"
#include "rainprint/version.h"

static const rp_cli_command commands[] = {
    {"drop", "scattering of one drop: amplitudes, cross-sections, axis ratio", rp_cmd_drop},
    {"table", "build a scattering table (netCDF) for a band, temperature, shape, canting",
     rp_cmd_table},
    {"gate", "radar variables of one DSD at one or more bands, with the DSD's moments", rp_cmd_gate},
    {"curve", "one DSD or scattering parameter varied over a range: CSV/JSON and a picture", rp_cmd_curve},
    {"presets", "list the named rains with their parameters and S-band values", rp_cmd_presets},
    {"relate", "fit rain relations (R(Zh), R(KDP), AH(KDP), ...) for a band from DSDs", rp_cmd_relate},
    {"cache", "list or clear the cache of computed scattering tables", rp_cmd_cache},
    {"scene", "synthesise a radar volume with known truth from a scenario file", rp_cmd_scene},
    {"picture", "draw fields of a volume: plan view of a sweep, overview, range-height cut",
     rp_cmd_picture},
    {"score", "compare a retrieval with the truth stored in a volume", rp_cmd_score},
    {"pulses", "synthesise I/Q pulses of one gate and the statistics of their estimates", rp_cmd_pulses},
};
#define N_COMMANDS (sizeof commands / sizeof commands[0])

static void usage(FILE *out) {
  fprintf(out,
          "rainprint %s — a forward simulator of dual-polarisation weather-radar returns in rain\n"
          "\n"
          "Usage: rainprint COMMAND [options]     (rainprint COMMAND --help for details)\n"
          "\n"
          "Commands:\n",
          RP_VERSION_STRING);
  for (size_t i = 0; i < N_COMMANDS; i++)
    fprintf(out, "  %-10s %s\n", commands[i].name, commands[i].summary);
  fprintf(out,
          "\nOptions:\n  --help      this help\n  --version   print the version\n"
          "\nExample:\n  rainprint drop --diameter 3 --band S\n");
}

/* Output that did not reach its destination (a full disk, a closed pipe) turns a success
 * into a failure: exit 1 with a message, never 0 with a silently cut result. */
static int check_stdout(const char *cmd, int rc) {
  errno = 0;
  if (fflush(stdout) == 0 && !ferror(stdout)) return rc;
  if (rc != RP_EXIT_OK) return rc;
  return rp_cli_write_failed(cmd, "the standard output", NULL, errno);
}

int main(int argc, char **argv) {
  gsl_set_error_handler_off();
  if (argc < 2) {
    usage(stderr);
    return RP_EXIT_USAGE;
  }
  if (strcmp(argv[1], "--help") == 0 || strcmp(argv[1], "-h") == 0 ||
      strcmp(argv[1], "help") == 0) {
    usage(stdout);
    return RP_EXIT_OK;
  }
  if (strcmp(argv[1], "--version") == 0) {
    printf("rainprint %s\n", RP_VERSION_STRING);
    return RP_EXIT_OK;
  }
  for (size_t i = 0; i < N_COMMANDS; i++) {
    if (strcmp(argv[1], commands[i].name) == 0) {
      const int rc = commands[i].run(argc - 1, argv + 1);
      fftw_cleanup(); /* FFTW keeps planner state for the life of the process */
      return check_stdout(argv[1], rc);
    }
  }
  const char *names[N_COMMANDS];
  for (size_t i = 0; i < N_COMMANDS; i++) names[i] = commands[i].name;
  const char *hint = rp_names_suggest(names, N_COMMANDS, argv[1]);
  if (hint != NULL)
    fprintf(stderr, "rainprint: unknown command '%s' (did you mean '%s'?)\n", argv[1], hint);
  else
    fprintf(stderr, "rainprint: unknown command '%s' (rainprint --help lists the commands)\n",
            argv[1]);
  return RP_EXIT_USAGE;
}
