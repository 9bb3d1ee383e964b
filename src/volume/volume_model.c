/* volume_model.c — binds the radar model to the volume synthesis (volume_model.h).
 *
 * Method: one rp_radar_temps view per sweep elevation covering [0 C, T_surface] (the
 * temperatures at which rain exists), the fast path interpolated linearly between 5 C
 * nodes by rp_radar_temps_eval; fall-speed moments from the entry table at 10 C and
 * the first elevation (the table's fall speeds do not depend on temperature or
 * elevation; its back_hh2 weight does, weakly, which the moments neglect).
 * Invariants: the views are read-only, so the evaluator needs no lock. */
#include "rainprint/volume_model.h"

#include <stdlib.h>
#include <string.h>

#include "rainprint/fallmoments.h"

struct rp_volume_model {
  size_t n;
  rp_radar_temps views[RP_SCENARIO_MAX_ELEVATIONS];
  rp_fallmom *fall;
  rp_volume_physics physics;
};

rp_status rp_volume_radar_config(const rp_scenario *s, rp_radar_config *c, rp_error *err) {
  if (s == NULL || c == NULL) return rp_error_set(err, RP_EINVAL, "volume radar config: NULL");
  rp_radar_config_default(c);
  c->n_bands = 1;
  c->freq_ghz[0] = s->radar.frequency_ghz;
  c->scatter.freq_ghz = s->radar.frequency_ghz;
  return RP_OK;
}

static rp_status eval_view(const void *ctx, size_t sweep, double temp_c, double nw, double d0,
                           double mu, rp_gate_linear *out, rp_error *err) {
  const rp_volume_model *vm = ctx;
  const rp_radar_temps *view = &vm->views[sweep];
  /* the view's nodes cover [0, T_s]; a beam sample just above 0 C rounding, or below the
   * radar (negative elevations), stays inside by clamping */
  const double lo = view->t0_c, hi = view->t0_c + view->dt_c * (double)(view->n_nodes - 1);
  if (temp_c < lo) temp_c = lo;
  if (temp_c > hi) temp_c = hi;
  return rp_radar_temps_eval(view, temp_c, nw, d0, mu, out, err);
}

rp_status rp_volume_model_alloc(rp_radar_model *m, const rp_scenario *s,
                                rp_volume_model **out, rp_error *err) {
  if (out != NULL) *out = NULL;
  if (m == NULL || s == NULL || out == NULL)
    return rp_error_set(err, RP_EINVAL, "volume model: NULL argument");
  RP_TRY(rp_scenario_check(s, NULL, 0, err));
  rp_volume_model *vm = calloc(1, sizeof *vm);
  if (vm == NULL) return rp_error_set(err, RP_ENOMEM, "volume model: out of memory");
  rp_status st;
  const double tmin = 0.0;
  double tmax = s->surface_temperature_c;
  /* beam samples below the radar's altitude (negative elevations) are a little warmer */
  tmax += 0.5 * s->lapse_rate_c_per_km;
  if (tmax > RP_RADAR_TEMP_MAX_C) tmax = RP_RADAR_TEMP_MAX_C;
  vm->n = s->radar.n_elevations;
  st = rp_radar_model_prepare(m, tmin, tmax, s->radar.elevations_deg, vm->n, err);
  if (st != RP_OK) goto fail;
  for (size_t k = 0; k < vm->n; k++) {
    st = rp_radar_model_temps(m, 0, s->radar.elevations_deg[k], tmin, tmax, &vm->views[k], err);
    if (st != RP_OK) goto fail;
  }
  rp_radar_entry e;
  st = rp_radar_model_entry(m, 0, 10.0, s->radar.elevations_deg[0], &e, err);
  if (st != RP_OK) goto fail;
  st = rp_fallmom_alloc(e.table, &vm->fall, err);
  if (st != RP_OK) goto fail;
  vm->physics.eval = eval_view;
  vm->physics.ctx = vm;
  vm->physics.fall = vm->fall;
  *out = vm;
  return RP_OK;
fail:
  rp_volume_model_free(vm);
  return st;
}

void rp_volume_model_free(rp_volume_model *vm) {
  if (vm == NULL) return;
  rp_fallmom_free(vm->fall);
  free(vm);
}

const rp_volume_physics *rp_volume_model_physics(const rp_volume_model *vm) {
  return vm == NULL ? NULL : &vm->physics;
}
