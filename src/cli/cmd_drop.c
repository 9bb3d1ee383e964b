/* cmd_drop.c — `rainprint drop`: scattering of one drop (rp_drop_eval, cross-sections by
 * rp_drop_cross_sections; nothing computed here). */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "rainprint/shape.h"

static const rp_opts_spec drop_opts[] = {
    RP_OPTS_DOUBLE_ROW("diameter", "MM", "equal-volume diameter (required)", 0.0,
                       RP_SHAPE_D_MAX_MM, RP_OPTS_RANGED | RP_OPTS_LO_OPEN, NULL),
    RP_OPTS_END};

static const rp_opts_command drop_cmd = {
    .cmd = "drop",
    .usage = "drop --diameter MM [options]",
    .about = "Scattering of one raindrop: backscatter and forward amplitudes at the mean\n"
             "orientation, and cross-sections averaged over the canting distribution.",
    .examples = "  rainprint drop --diameter 4 --band X --temperature 15 --json",
    .tables = {drop_opts, rp_cli_band_opts, rp_cli_scatter_opts, rp_cli_json_opts},
    .titles = {"Drop", "Band", "Scattering", "Output"},
};

static void print_complex(const char *label, double complex z, const char *unit) {
  printf("  %-26s %+.6e %+.6ei %s\n", label, creal(z), cimag(z), unit);
}

static void print_text(const rp_cli_scatter *s, const rp_drop_result *r) {
  const rp_drop_config *c = &s->cfg;
  const char *band = rp_band_of_frequency(c->freq_ghz);
  printf("Drop D = %.3f mm at %.4g GHz%s%s%s (wavelength %.3f mm), %.1f C\n", r->d_mm,
         c->freq_ghz, band ? " (" : "", band ? band : "", band ? " band)" : "", r->wavelength_mm,
         c->temp_c);
  printf("  permittivity             %.4f + %.4fi\n", creal(r->eps), cimag(r->eps));
  printf("  axis ratio               %.4f (%s)\n", r->axis_ratio,
         c->axis_ratio_fixed > 0.0 ? "fixed" : rp_shape_name(c->shape));
  printf("  method                   %s", rp_method_name(c->method));
  if (r->nmax > 0) printf(" (%d terms)", r->nmax);
  printf("\n  elevation                %.2f deg\n", c->elevation_deg);
  printf("  canting                  %s, SD %.2f deg%s\n", rp_canting_model_name(c->canting_model),
         c->canting_sd_deg, c->canting_approx ? " (angular-moment approximation)" : "");
  printf("Amplitudes at the mean orientation (mm):\n");
  print_complex("backscatter f_hh(pi)", r->back_hh_mm, "mm");
  print_complex("backscatter f_vv(pi)", r->back_vv_mm, "mm");
  print_complex("backscatter f_hv(pi)", r->back_hv_mm, "mm");
  print_complex("forward f_hh(0)", r->fwd_hh_mm, "mm");
  print_complex("forward f_vv(0)", r->fwd_vv_mm, "mm");
  rp_drop_xsec x;
  rp_drop_cross_sections(r, &x);
  printf("Canting-averaged cross-sections:\n");
  printf("  sigma_hh                 %.6e mm^2\n", x.sigma_hh_mm2);
  printf("  sigma_vv                 %.6e mm^2\n", x.sigma_vv_mm2);
  printf("  sigma_hv                 %.6e mm^2\n", x.sigma_hv_mm2);
  printf("  extinction h             %.6e mm^2\n", x.ext_h_mm2);
  printf("  extinction v             %.6e mm^2\n", x.ext_v_mm2);
  printf("  single-drop ZDR          %.4f dB\n", x.zdr_db);
}

static int print_json(const rp_cli_scatter *s, const rp_drop_result *r) {
  const rp_drop_config *c = &s->cfg;
  const char *band = rp_cli_scatter_band(s);
  json_t *o = json_object();
  json_object_set_new(o, "diameter_mm", rp_json_real(r->d_mm));
  json_object_set_new(o, "band", band ? json_string(band) : json_null());
  json_object_set_new(o, "frequency_ghz", rp_json_real(c->freq_ghz));
  json_object_set_new(o, "wavelength_mm", rp_json_real(r->wavelength_mm));
  json_object_set_new(o, "temperature_c", rp_json_real(c->temp_c));
  json_object_set_new(o, "permittivity", rp_json_complex(r->eps));
  json_object_set_new(o, "axis_ratio", rp_json_real(r->axis_ratio));
  json_object_set_new(o, "shape_model",
                      json_string(c->axis_ratio_fixed > 0.0 ? "fixed" : rp_shape_name(c->shape)));
  json_object_set_new(o, "canting_sd_deg", rp_json_real(c->canting_sd_deg));
  json_object_set_new(o, "canting_model", json_string(rp_canting_model_name(c->canting_model)));
  json_object_set_new(o, "canting_average",
                      json_string(c->canting_approx ? "angular-moments" : "quadrature"));
  json_object_set_new(o, "elevation_deg", rp_json_real(c->elevation_deg));
  json_object_set_new(o, "method", json_string(rp_method_name(c->method)));
  json_object_set_new(o, "tmatrix_terms", json_integer(r->nmax));
  json_object_set_new(o, "back_hh_mm", rp_json_complex(r->back_hh_mm));
  json_object_set_new(o, "back_vv_mm", rp_json_complex(r->back_vv_mm));
  json_object_set_new(o, "back_hv_mm", rp_json_complex(r->back_hv_mm));
  json_object_set_new(o, "fwd_hh_mm", rp_json_complex(r->fwd_hh_mm));
  json_object_set_new(o, "fwd_vv_mm", rp_json_complex(r->fwd_vv_mm));
  rp_drop_xsec x;
  rp_drop_cross_sections(r, &x);
  json_object_set_new(o, "sigma_hh_mm2", rp_json_real(x.sigma_hh_mm2));
  json_object_set_new(o, "sigma_vv_mm2", rp_json_real(x.sigma_vv_mm2));
  json_object_set_new(o, "sigma_hv_mm2", rp_json_real(x.sigma_hv_mm2));
  json_object_set_new(o, "ext_h_mm2", rp_json_real(x.ext_h_mm2));
  json_object_set_new(o, "ext_v_mm2", rp_json_real(x.ext_v_mm2));
  return rp_json_print(o);
}

int rp_cmd_drop(int argc, char **argv) {
  rp_opts o;
  int rc = rp_opts_parse(&drop_cmd, argc, argv, &o);
  if (rc != RP_OPTS_GO_ON) return rc;
  if ((rc = rp_opts_required(&o, "diameter"))) return rc;
  const double d_mm = rp_opts_double(&o, "diameter", NAN);
  rp_cli_scatter s;
  if ((rc = rp_cli_scatter_from_opts(&o, &s))) return rc;

  rp_drop_ws *ws = rp_drop_ws_alloc(&s.cfg);
  if (ws == NULL) return rp_cli_fail("drop", RP_ENOMEM, "out of memory");
  rp_drop_result r;
  rp_error err = {0};
  const rp_status st = rp_drop_eval(ws, d_mm, &r, &err);
  rp_drop_ws_free(ws);
  if (st != RP_OK) return rp_cli_fail_err("drop", &err);
  if (s.json) return print_json(&s, &r);
  print_text(&s, &r);
  return RP_EXIT_OK;
}
