/* cmd_table.c — `rainprint table`: build a scattering table and write it to netCDF. */
#include <math.h>
#include <string.h>

#include "cli/cli.h"
#include "cli/progress.h"
#include "rainprint/table_file.h"

/* Ranges as rp_table_build's grid check (scatter/table.c): 0 < dmin < dmax <= 10 mm, a step
 * of at least 0.001 mm and at most dmax - dmin (checked after parsing). */
static const rp_opts_spec table_opts[] = {
    RP_OPTS_STRING_ROW("out", "FILE.nc", "output file (written whole or not at all; required)"),
    RP_OPTS_DOUBLE_ROW("dmin", "MM", "smallest diameter", 0.0, 10.0,
                       RP_OPTS_RANGED | RP_OPTS_LO_OPEN | RP_OPTS_HI_OPEN, "0.1"),
    RP_OPTS_DOUBLE_ROW("dmax", "MM", "largest diameter", 0.0, 10.0,
                       RP_OPTS_RANGED | RP_OPTS_LO_OPEN, "8"),
    RP_OPTS_DOUBLE_ROW("dstep", "MM", "diameter step, at most dmax - dmin", 0.001, 10.0,
                       RP_OPTS_RANGED, "0.1"),
    RP_OPTS_FLAG_ROW("json", "machine-readable output (JSON on stdout)"),
    RP_OPTS_END};

static const rp_opts_command table_cmd = {
    .cmd = "table",
    .usage = "table --out FILE.nc [options]",
    .about = "Build a scattering table: per diameter, the canting-averaged quantities a DSD\n"
             "integral needs, written as netCDF-4 (CF conventions). Give it to gate --table.",
    .examples = "  rainprint table --band X --temperature 20 --out x_20c.nc",
    .tables = {table_opts, rp_cli_band_opts, rp_cli_scatter_opts},
    .titles = {"Table", "Band", "Scattering"},
};

/* The library's progress (fraction done) on the terminal's bar (progress.h). */
static void progress_step(void *ctx, double fraction) {
  rp_cli_progress_step(ctx, (size_t)lround(100.0 * fraction));
}

int rp_cmd_table(int argc, char **argv) {
  rp_opts o;
  int rc = rp_opts_parse(&table_cmd, argc, argv, &o);
  if (rc != RP_OPTS_GO_ON) return rc;
  if ((rc = rp_opts_required(&o, "out"))) return rc;
  const char *out = rp_opts_string(&o, "out", NULL);
  const double dmin = rp_opts_double(&o, "dmin", RP_TABLE_DMIN_DEFAULT_MM);
  const double dmax = rp_opts_double(&o, "dmax", RP_TABLE_DMAX_DEFAULT_MM);
  const double dstep = rp_opts_double(&o, "dstep", RP_TABLE_DSTEP_DEFAULT_MM);
  if (!(dmin < dmax))
    return rp_cli_fail("table", RP_EINVAL, "--dmin %g must be less than --dmax %g", dmin, dmax);
  if (dstep > dmax - dmin)
    return rp_cli_fail("table", RP_EINVAL, "--dstep %g is more than --dmax - --dmin = %g", dstep,
                       dmax - dmin);
  /* The grid is dmin + i dstep up to dmax (rp_table_build): say so when it stops short of
   * --dmax, since gate and curve then refuse the default 8 mm truncation with this table. */
  const double last = dmin + floor((dmax - dmin) / dstep + 1e-9) * dstep;
  if (dmax - last > 1e-9)
    fprintf(stderr, "rainprint table: note: --dmax %g - --dmin %g is not a multiple of --dstep "
            "%g: the table ends at %.4g mm (give a --dstep that divides the range to reach "
            "%g mm)\n", dmax, dmin, dstep, last, dmax);
  rp_cli_scatter s;
  if ((rc = rp_cli_scatter_from_opts(&o, &s))) return rc;
  s.json = rp_opts_given(&o, "json");
  if ((rc = rp_cli_check_output("table", "out", out))) return rc;

  rp_table *t = NULL;
  rp_error err = {0};
  rp_cli_progress bar;
  rp_cli_progress_start(&bar, "table", "% done", 100);
  const rp_status built =
      rp_table_build_progress(&s.cfg, dmin, dmax, dstep, progress_step, &bar, &t, &err);
  rp_cli_progress_end(&bar);
  if (built != RP_OK) return rp_cli_fail_err("table", &err);
  const rp_status st = rp_table_save(t, out, &err);
  const size_t n = t->n;
  const double d0 = t->d_mm[0], d1 = t->d_mm[n - 1];
  rp_table_free(t);
  if (st != RP_OK) return rp_cli_fail_err("table", &err);
  if (s.json) {
    const char *band = rp_cli_scatter_band(&s);
    return rp_json_print(json_pack("{s:o, s:o, s:f, s:f, s:I, s:f, s:f}", "out",
                                   rp_json_text(out), "band",
                                   band ? json_string(band) : json_null(), "frequency_ghz",
                                   s.cfg.freq_ghz, "temperature_c", s.cfg.temp_c, "diameters",
                                   (json_int_t)n, "dmin_mm", d0, "dmax_mm", d1));
  }
  printf("Wrote %s: %zu diameters %.3f..%.3f mm at %.4g GHz, %.1f C, %s canting SD %.1f deg, "
         "elevation %.1f deg, %s\n",
         out, n, d0, d1, s.cfg.freq_ghz, s.cfg.temp_c, rp_canting_model_name(s.cfg.canting_model),
         s.cfg.canting_sd_deg, s.cfg.elevation_deg, rp_method_name(s.cfg.method));
  return RP_EXIT_OK;
}
