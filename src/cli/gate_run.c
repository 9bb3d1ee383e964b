/* gate_run.c — one DSD through the gate integrator at several bands (tool layer).
 * Tables and plans are kept for the life of the process, keyed by scattering config,
 * truncation and |K_w|^2, so a curve of many steps builds each table once. */
#include "cli/gate_run.h"

#include <math.h>
#include <stddef.h>
#include <stdlib.h>
#include <string.h>

#include "rainprint/shape.h"
#include "rainprint/table_file.h"

#define MAX_KEPT 64

typedef struct {
  rp_drop_config cfg;
  double dmin, dmax, kw2;
  rp_table *table;
  rp_gate_plan *plan;
  rp_table_origin origin;
} kept_plan;

static kept_plan kept[MAX_KEPT]; /* tool layer: one thread */
static int n_kept;

void rp_gate_run_cleanup(void) {
  for (int i = 0; i < n_kept; i++) {
    rp_gate_plan_free(kept[i].plan);
    rp_table_free(kept[i].table);
  }
  n_kept = 0;
}

static int same_cfg(const rp_drop_config *a, const rp_drop_config *b) {
  return a->freq_ghz == b->freq_ghz && a->temp_c == b->temp_c && a->shape == b->shape &&
         a->axis_ratio_fixed == b->axis_ratio_fixed && a->canting_sd_deg == b->canting_sd_deg &&
         a->canting_model == b->canting_model && a->canting_approx == b->canting_approx &&
         a->elevation_deg == b->elevation_deg && a->method == b->method;
}

static const kept_plan *get_plan(const rp_drop_config *cfg, double dmin, double dmax, double kw2,
                                 rp_error *err) {
  for (int i = 0; i < n_kept; i++) {
    if (same_cfg(&kept[i].cfg, cfg) && kept[i].dmin == dmin && kept[i].dmax == dmax &&
        kept[i].kw2 == kw2)
      return &kept[i];
  }
  if (n_kept == MAX_KEPT) rp_gate_run_cleanup();
  kept_plan k = {.cfg = *cfg, .dmin = dmin, .dmax = dmax, .kw2 = kw2};
  if (rp_table_obtain(cfg, rp_cli_tables_dir(), rp_cli_cache_dir(), &k.table, &k.origin, err) != RP_OK)
    return NULL;
  if (rp_gate_plan_alloc(k.table, dmin, dmax, kw2, &k.plan, err) != RP_OK) {
    rp_table_free(k.table);
    return NULL;
  }
  kept[n_kept] = k;
  return &kept[n_kept++];
}

int rp_gate_run(const char *cmd, const rp_gate_request *req, const rp_dsd *dsd,
                rp_gate_run_result *out) {
  rp_error err = {0};
  memset(out, 0, sizeof *out);
  double factor = 1.0; /* fall speeds as the formula gives them (1013 hPa, 20 C air) */
  if (req->correct_fall_speed &&
      rp_fallspeed_density_factor(req->height_km, &factor, &err) != RP_OK)
    return rp_cli_fail_err(cmd, &err);
  if (rp_dsd_moments_eval(dsd, RP_FALL_DEFAULT, factor, &out->moments, &err) != RP_OK)
    return rp_cli_fail_err(cmd, &err);
  /* Spectra are integrated over the whole table (the user's own, or the default grid of
   * shipped, cached and computed ones); analytic DSDs over their truncation. */
  const int spectrum = dsd->model == RP_DSD_SPECTRUM;
  const rp_table *given = req->table;
  for (int b = 0; b < req->n_bands; b++) {
    rp_drop_config cfg = req->cfg;
    cfg.freq_ghz = req->freq_ghz[b];
    double dmin = dsd->dmin_mm, dmax = dsd->dmax_mm;
    if (spectrum) {
      dmin = given != NULL ? given->d_mm[0] : RP_TABLE_DMIN_DEFAULT_MM;
      dmax = given != NULL ? given->d_mm[given->n - 1] : RP_TABLE_DMAX_DEFAULT_MM;
    }
    if (given != NULL) { /* the user's table: a plan for this call only */
      rp_gate_plan *plan = NULL;
      if (rp_gate_plan_alloc(given, dmin, dmax, req->kw2, &plan, &err) != RP_OK)
        return rp_cli_fail_err(cmd, &err);
      const rp_status st = rp_gate_eval(plan, dsd, &out->r[b], &err);
      rp_gate_plan_free(plan);
      if (st != RP_OK) return rp_cli_fail_err(cmd, &err);
      out->origin[b] = RP_TABLE_GIVEN;
      continue;
    }
    const kept_plan *k = get_plan(&cfg, dmin, dmax, req->kw2, &err);
    if (k == NULL) return rp_cli_fail_err(cmd, &err);
    if (rp_gate_eval(k->plan, dsd, &out->r[b], &err) != RP_OK) return rp_cli_fail_err(cmd, &err);
    out->origin[b] = k->origin;
  }
  return 0;
}

static void print_row(const char *label, const rp_gate_request *req, const rp_gate_run_result *res,
                      size_t offset, const char *fmt) {
  printf("  %-18s", label);
  for (int b = 0; b < req->n_bands; b++) {
    const double x = *(const double *)(const void *)((const char *)&res->r[b] + offset);
    printf(fmt, x);
  }
  printf("\n");
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
         "sigma_m %.3f mm\n  Nw %.4g m^-3 mm^-1   Z (Rayleigh, 6th moment) %.2f dBZ\n",
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
#define ROW(label, field, fmt) print_row(label, req, res, offsetof(rp_gate_result, field), fmt)
  ROW("Zh (dBZ)", zh_dbz, "%12.2f");
  ROW("Zv (dBZ)", zv_dbz, "%12.2f");
  ROW("ZDR (dB)", zdr_db, "%12.3f");
  ROW("KDP (deg/km)", kdp_deg_km, "%12.4f");
  ROW("rhoHV", rhohv, "%12.5f");
  ROW("delta_hv (deg)", delta_hv_deg, "%12.3f");
  ROW("LDR (dB)", ldr_db, "%12.2f");
  ROW("AH (dB/km)", ah_db_km, "%12.5f");
  ROW("AV (dB/km)", av_db_km, "%12.5f");
  ROW("ADP (dB/km)", adp_db_km, "%12.5f");
#undef ROW
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
  json_object_set_new(o, "nt_m3", rp_json_real(m->nt_m3));
  json_object_set_new(o, "lwc_g_m3", rp_json_real(m->lwc_g_m3));
  json_object_set_new(o, "rain_rate_mm_h", rp_json_real(m->rain_rate_mm_h));
  json_object_set_new(o, "dm_mm", rp_json_real(m->dm_mm));
  json_object_set_new(o, "d0_mm", rp_json_real(m->d0_mm));
  json_object_set_new(o, "sigma_m_mm", rp_json_real(m->sigma_m_mm));
  json_object_set_new(o, "nw_m3_mm", rp_json_real(m->nw_m3_mm));
  json_object_set_new(o, "z_rayleigh_dbz", rp_json_real(m->z_rayleigh_dbz));
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
  json_object_set_new(o, "zh_dbz", rp_json_real(r->zh_dbz));
  json_object_set_new(o, "zv_dbz", rp_json_real(r->zv_dbz));
  json_object_set_new(o, "zdr_db", rp_json_real(r->zdr_db));
  json_object_set_new(o, "kdp_deg_km", rp_json_real(r->kdp_deg_km));
  json_object_set_new(o, "rhohv", rp_json_real(r->rhohv));
  json_object_set_new(o, "delta_hv_deg", rp_json_real(r->delta_hv_deg));
  json_object_set_new(o, "ldr_db", rp_json_real(r->ldr_db));
  json_object_set_new(o, "ah_db_km", rp_json_real(r->ah_db_km));
  json_object_set_new(o, "av_db_km", rp_json_real(r->av_db_km));
  json_object_set_new(o, "adp_db_km", rp_json_real(r->adp_db_km));
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
