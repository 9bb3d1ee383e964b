/* gate_run.c — one DSD at several bands through the radar model (tool layer): the model
 * (radar_model.h) obtains tables from the store (shipped, cached, computed and cached) and
 * keeps tables and plans for the session; a table the user gives (--table) gets a plan for
 * the call. Printing and JSON come from the table of fields (field.h). */
#include "cli/gate_run.h"

#include <math.h>
#include <stddef.h>
#include <stdlib.h>
#include <string.h>

#include "rainprint/field.h"
#include "rainprint/shape.h"

void rp_gate_session_close(rp_gate_session *s) {
  rp_radar_model_free(s->model);
  rp_table_store_free(s->store);
  s->model = NULL;
  s->store = NULL;
}

/* Same scattering configuration apart from temperature and elevation (which the model
 * takes per call). */
static int same_model(const rp_radar_config *a, const rp_radar_config *b) {
  const rp_drop_config *x = &a->scatter, *y = &b->scatter;
  if (a->n_bands != b->n_bands || a->kw2 != b->kw2) return 0;
  for (int i = 0; i < a->n_bands; i++)
    if (a->freq_ghz[i] != b->freq_ghz[i]) return 0;
  return x->shape == y->shape && x->axis_ratio_fixed == y->axis_ratio_fixed &&
         x->canting_sd_deg == y->canting_sd_deg && x->canting_model == y->canting_model &&
         x->canting_approx == y->canting_approx && x->method == y->method;
}

static int session_model(const char *cmd, rp_gate_session *s, const rp_gate_request *req) {
  rp_radar_config c;
  rp_radar_config_default(&c);
  c.scatter = req->cfg;
  c.n_bands = req->n_bands;
  for (int b = 0; b < req->n_bands; b++) c.freq_ghz[b] = req->freq_ghz[b];
  c.scatter.freq_ghz = req->freq_ghz[0];
  c.kw2 = req->kw2;
  if (s->model != NULL && same_model(&s->config, &c)) return 0;
  if (s->store == NULL) {
    s->store = rp_table_store_alloc(rp_cli_tables_dir(), rp_cli_cache_dir());
    if (s->store == NULL) return rp_cli_fail(cmd, RP_ENOMEM, "out of memory (table store)");
  }
  c.source = rp_table_store_source(s->store);
  rp_radar_model_free(s->model);
  s->model = NULL;
  rp_error err = {0};
  if (rp_radar_model_alloc(&c, &s->model, &err) != RP_OK) return rp_cli_fail_err(cmd, &err);
  s->config = c;
  return 0;
}

double rp_gate_water_outside(const rp_dsd *d, double dmin_mm, double dmax_mm) {
  rp_dsd inside = *d;
  double all = 0.0, in = 0.0;
  const double lo = fmax(d->dmin_mm, dmin_mm), hi = fmin(d->dmax_mm, dmax_mm);
  if (!(lo < hi)) return 1.0;
  inside.dmin_mm = lo;
  inside.dmax_mm = hi;
  if (rp_dsd_moment(d, 3.0, &all, NULL) != RP_OK || rp_dsd_moment(&inside, 3.0, &in, NULL) != RP_OK ||
      !(all > 0.0))
    return 0.0;
  const double lost = 1.0 - in / all;
  return lost > 0.0 ? lost : 0.0;
}

/* Drops the table does not cover are never left out silently: an analytic DSD beyond the
 * table is refused by the plan (RP_EDOM, naming both ranges); a spectrum keeps its bins,
 * so the water outside the table is reported. Below 1e-6 of the water is noise of the
 * bin edges (RP_DSD_BIN_SLACK_MM) and not worth a line. */
static void warn_water(const char *cmd, const rp_dsd *dsd, double tmin, double tmax,
                       double *lost) {
  *lost = 0.0;
  if (dsd->model != RP_DSD_SPECTRUM) return;
  *lost = rp_gate_water_outside(dsd, tmin, tmax);
  if (*lost > 1e-6)
    fprintf(stderr,
            "rainprint %s: warning: %.3g %% of the spectrum's water lies in drops outside the "
            "table's %g..%g mm and is left out\n",
            cmd, 100.0 * *lost, tmin, tmax);
}

/* An analytic DSD reaching past the table would lose its largest drops: refused up front,
 * with the share of water concerned and what to give instead. */
static int check_truncation(const char *cmd, const char *label, const rp_dsd *dsd, double tmin,
                            double tmax) {
  if (dsd->model == RP_DSD_SPECTRUM) {
    /* The gate integrator refuses drops above the table; say which bin (counted from 1),
     * how much water it holds and what to do, naming the file and row. */
    for (size_t i = 0; i < dsd->n_bins; i++) {
      const double c = dsd->bin_center_mm[i], hi = c + 0.5 * dsd->bin_width_mm[i];
      if (dsd->bin_conc_m3_mm[i] > 0.0 && c >= dsd->dmin_mm && c <= dsd->dmax_mm &&
          hi > tmax + RP_DSD_BIN_SLACK_MM) {
        const double lost = rp_gate_water_outside(dsd, 0.0, tmax);
        return rp_cli_fail(cmd, RP_EDOM,
                           "%s%sbin %zu (%g..%g mm) has drops above the scattering table's "
                           "largest diameter %g mm (%.3g %% of the water); give a table that "
                           "reaches %g mm (rainprint table --dmax ..., then --table)",
                           label ? label : "", label ? ": " : "", i + 1,
                           c - 0.5 * dsd->bin_width_mm[i], hi, tmax, 100.0 * lost, hi);
      }
    }
    return 0;
  }
  const double slack = RP_DSD_BIN_SLACK_MM;
  if (dsd->dmin_mm >= tmin - slack && dsd->dmax_mm <= tmax + slack) return 0;
  const double lost = rp_gate_water_outside(dsd, tmin, tmax);
  return rp_cli_fail(cmd, RP_EDOM,
                     "the DSD's truncation %g..%g mm (--dmin/--dmax, or the preset's) reaches "
                     "beyond the scattering table's %g..%g mm: %.3g %% of its water would be "
                     "left out; give --dmin/--dmax within %g..%g",
                     dsd->dmin_mm, dsd->dmax_mm, tmin, tmax, 100.0 * lost, tmin, tmax);
}

int rp_gate_run(const char *cmd, rp_gate_session *s, const rp_gate_request *req,
                const rp_dsd *dsd, rp_gate_run_result *out) {
  rp_error err = {0};
  memset(out, 0, sizeof *out);
  const int bad = req->table != NULL
                      ? check_truncation(cmd, req->dsd_label, dsd, req->table->d_mm[0],
                                         req->table->d_mm[req->table->n - 1])
                      : check_truncation(cmd, req->dsd_label, dsd, RP_TABLE_DMIN_DEFAULT_MM,
                                         RP_TABLE_DMAX_DEFAULT_MM);
  if (bad) return bad;
  double factor = 1.0; /* fall speeds as the formula gives them (1013 hPa, 20 C air) */
  if (req->correct_fall_speed &&
      rp_fallspeed_density_factor(req->height_km, &factor, &err) != RP_OK)
    return rp_cli_fail_err(cmd, &err);
  if (rp_dsd_moments_eval(dsd, RP_FALL_DEFAULT, factor, &out->moments, &err) != RP_OK)
    return rp_cli_fail_err(cmd, &err);
  const rp_table *given = req->table;
  if (given != NULL) { /* the user's table: a plan for this call only, over its range for spectra */
    const int spectrum = dsd->model == RP_DSD_SPECTRUM;
    const double tmin = given->d_mm[0], tmax = given->d_mm[given->n - 1];
    rp_gate_plan *plan = NULL;
    if (rp_gate_plan_alloc(given, spectrum ? tmin : dsd->dmin_mm, spectrum ? tmax : dsd->dmax_mm,
                           req->kw2, &plan, &err) != RP_OK)
      return rp_cli_fail_err(cmd, &err);
    const rp_status st = rp_gate_eval(plan, dsd, &out->r[0], &err);
    rp_gate_plan_free(plan);
    if (st != RP_OK) return rp_cli_fail_err(cmd, &err);
    out->origin[0] = RP_TABLE_GIVEN;
    warn_water(cmd, dsd, tmin, tmax, &out->water_lost[0]);
    return 0;
  }
  int rc = session_model(cmd, s, req);
  if (rc) return rc;
  for (int b = 0; b < req->n_bands; b++) {
    if (rp_radar_model_gate(s->model, b, req->cfg.temp_c, req->cfg.elevation_deg, dsd, &out->r[b],
                            &out->origin[b], &err) != RP_OK)
      return rp_cli_fail_err(cmd, &err);
    rp_radar_entry e;
    if (dsd->model == RP_DSD_SPECTRUM &&
        rp_radar_model_entry(s->model, b, req->cfg.temp_c, req->cfg.elevation_deg, &e, &err) ==
            RP_OK)
      warn_water(cmd, dsd, e.table->d_mm[0], e.table->d_mm[e.table->n - 1], &out->water_lost[b]);
  }
  return 0;
}

static const char *band_label(const rp_gate_request *req, int b, char *buf, size_t n) {
  if (req->band[b] != NULL)
    snprintf(buf, n, "%s band", req->band[b]);
  else
    snprintf(buf, n, "%.4g GHz", req->freq_ghz[b]);
  return buf;
}

static void print_dsd(const rp_cli_dsd_built *dsd, const rp_dsd_moments *m) {
  const rp_dsd *d = &dsd->dsd;
  printf("DSD %s (%s", dsd->label, rp_dsd_model_name(d->model));
  if (d->model != RP_DSD_SPECTRUM)
    printf(": N0 %.4g, mu %.3g, Lambda %.4g mm^-1, %.2g..%.3g mm", d->n0, d->mu, d->lambda_per_mm,
           d->dmin_mm, d->dmax_mm);
  else
    printf(": %zu bins", d->n_bins);
  printf(")\n");
  printf("  Nt %.4g m^-3   LWC %.4g g m^-3   R %.4g mm/h   Dm %.3f mm   D0 %.3f mm   "
         "sigma_m %.3f mm\n  Nw (Dm-based, 4^4 W / (pi rho_w Dm^4)) %.4g m^-3 mm^-1   "
         "Z (Rayleigh, 6th moment) %.2f dBZ\n",
         m->nt_m3, m->lwc_g_m3, m->rain_rate_mm_h, m->dm_mm, m->d0_mm, m->sigma_m_mm, m->nw_m3_mm,
         m->z_rayleigh_dbz);
}

void rp_gate_run_print(const rp_gate_request *req, const rp_cli_dsd_built *dsd,
                       const rp_gate_run_result *res) {
  print_dsd(dsd, &res->moments);
  if (req->correct_fall_speed)
    printf("  (rain rate with fall speeds corrected to the standard-atmosphere air at %.2f km)\n",
           req->height_km);
  const rp_drop_config *c = &req->cfg;
  printf("Scattering: %.1f C, shape %s, %s canting SD %.1f deg, elevation %.1f deg, %s, |Kw|^2 %.3f\n",
         c->temp_c, c->axis_ratio_fixed > 0.0 ? "fixed axis ratio" : rp_shape_name(c->shape),
         rp_canting_model_name(c->canting_model), c->canting_sd_deg, c->elevation_deg,
         rp_method_name(c->method), req->kw2);
  char buf[32];
  printf("  %-18s", "");
  for (int b = 0; b < req->n_bands; b++) printf("%12s", band_label(req, b, buf, sizeof buf));
  printf("\n");
  for (int id = RP_FIELD_FIRST_RADAR; id <= RP_FIELD_LAST_RADAR; id++) {
    const rp_field_desc *f = rp_field_get((rp_field_id)id);
    char label[48];
    if (f->units_text[0])
      snprintf(label, sizeof label, "%s (%s)", f->label, f->units_text);
    else
      snprintf(label, sizeof label, "%s", f->label);
    printf("  %-18s", label);
    for (int b = 0; b < req->n_bands; b++) {
      char cell[32];
      snprintf(cell, sizeof cell, f->format, rp_field_value((rp_field_id)id, &res->r[b], NULL));
      printf("%12s", cell);
    }
    printf("\n");
  }
  printf("  %-18s", "table");
  for (int b = 0; b < req->n_bands; b++) printf("%12s", rp_table_origin_name(res->origin[b]));
  printf("\n");
}

json_t *rp_gate_dsd_json(const rp_gate_request *req, const rp_cli_dsd_built *dsd,
                         const rp_dsd_moments *m) {
  const rp_dsd *d = &dsd->dsd;
  json_t *o = json_object();
  json_object_set_new(o, "label", rp_json_text(dsd->label));
  json_object_set_new(o, "model", json_string(rp_dsd_model_name(d->model)));
  if (d->model != RP_DSD_SPECTRUM) {
    json_object_set_new(o, "n0", rp_json_real(d->n0));
    json_object_set_new(o, "lambda_per_mm", rp_json_real(d->lambda_per_mm));
    json_object_set_new(o, "mu", rp_json_real(d->mu));
    json_object_set_new(o, "dmin_mm", rp_json_real(d->dmin_mm));
    json_object_set_new(o, "dmax_mm", rp_json_real(d->dmax_mm));
  } else {
    json_object_set_new(o, "bins", json_integer((json_int_t)d->n_bins));
  }
  for (int id = RP_FIELD_FIRST_DSD; id <= RP_FIELD_LAST_DSD; id++)
    json_object_set_new(o, rp_field_get((rp_field_id)id)->key,
                        rp_json_real(rp_field_value((rp_field_id)id, NULL, m)));
  json_object_set_new(o, "fall_speed_model", json_string(rp_fallspeed_name(RP_FALL_DEFAULT)));
  /* --height: the rain rate's fall speeds were corrected to the air at this height */
  json_object_set_new(o, "fall_speed_height_km",
                      req->correct_fall_speed ? rp_json_real(req->height_km) : json_null());
  return o;
}

json_t *rp_gate_result_json(const rp_gate_request *req, int b, const rp_gate_result *r) {
  const rp_drop_config *c = &req->cfg;
  json_t *o = json_object();
  json_object_set_new(o, "band", req->band[b] ? json_string(req->band[b]) : json_null());
  json_object_set_new(o, "frequency_ghz", rp_json_real(req->freq_ghz[b]));
  json_object_set_new(o, "temperature_c", rp_json_real(c->temp_c));
  json_object_set_new(o, "elevation_deg", rp_json_real(c->elevation_deg));
  json_object_set_new(o, "shape_model",
                      json_string(c->axis_ratio_fixed > 0.0 ? "fixed" : rp_shape_name(c->shape)));
  json_object_set_new(o, "canting_sd_deg", rp_json_real(c->canting_sd_deg));
  for (int id = RP_FIELD_FIRST_RADAR; id <= RP_FIELD_LAST_RADAR; id++)
    json_object_set_new(o, rp_field_get((rp_field_id)id)->key,
                        rp_json_real(rp_field_value((rp_field_id)id, r, NULL)));
  json_object_set_new(o, "kw2", rp_json_real(req->kw2));
  json_object_set_new(o, "canting_model", json_string(rp_canting_model_name(c->canting_model)));
  json_object_set_new(o, "method", json_string(rp_method_name(c->method)));
  return o;
}

json_t *rp_gate_run_json(const rp_gate_request *req, const rp_cli_dsd_built *dsd,
                         const rp_gate_run_result *res) {
  json_t *results = json_array();
  for (int b = 0; b < req->n_bands; b++) {
    json_t *r = rp_gate_result_json(req, b, &res->r[b]);
    json_object_set_new(r, "table", json_string(rp_table_origin_name(res->origin[b])));
    json_array_append_new(results, r);
  }
  return json_pack("{s:o, s:o}", "dsd", rp_gate_dsd_json(req, dsd, &res->moments), "results",
                   results);
}
