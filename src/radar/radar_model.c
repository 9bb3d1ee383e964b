/* radar_model.c — the radar model: scattering configuration of one or several bands and a
 * thread-safe cache of tables, plans and fast paths (see radar_model.h).
 *
 * Cache: a linked list of entries keyed by (band, temperature, elevation), guarded by one
 * mutex. An entry is created in the "building" state under the lock, then built outside
 * it (table from the source, default plan, fast path), then marked ready or failed; other
 * threads asking for the same key wait on a condition variable, so each key is built once
 * and a failure is reported identically to every caller. Entries and their plans are
 * freed only with the model, so the pointers handed out stay valid.
 *
 * Temperature interpolation (rp_radar_temps_eval): linear in temperature between nodes of
 * the extensive integrals (Z_h, Z_v, Z_hv, <f_hh f_vv*>, K_DP, A_H, A_DP are sums over drops
 * of quantities that vary smoothly with the permittivity); the intensive variables (ZDR,
 * rho_hv, delta_hv, LDR) are formed from the interpolated sums. */
#include "rainprint/radar_model.h"

#include <complex.h>
#include <math.h>
#include <pthread.h>
#include <stdlib.h>
#include <string.h>

/* Two temperatures or elevations closer than this are the same key. */
static const double KEY_SLACK = 1e-9;

typedef struct plan_node {
  double dmin_mm, dmax_mm;
  rp_gate_plan *plan;
  struct plan_node *next;
} plan_node;

enum { ENTRY_BUILDING, ENTRY_READY, ENTRY_FAILED };

typedef struct entry {
  int band;
  double temp_c, elevation_deg;
  int state;
  rp_error err; /* the failure, for every caller */
  rp_table *table;
  rp_table_origin origin;
  rp_gate_plan *plan;
  rp_gate_fast *fast;
  plan_node *plans; /* other truncations */
  struct entry *next;
} entry;

struct rp_radar_model {
  rp_radar_config cfg;
  pthread_mutex_t lock;
  pthread_cond_t built;
  entry *entries;
};

void rp_radar_config_default(rp_radar_config *c) {
  memset(c, 0, sizeof *c);
  rp_drop_config_default(&c->scatter);
  c->n_bands = 1;
  c->freq_ghz[0] = c->scatter.freq_ghz;
  c->kw2 = RP_KW2_DEFAULT;
  c->temp_step_c = RP_RADAR_TEMP_STEP_DEFAULT_C;
}

rp_status rp_radar_config_check(const rp_radar_config *c, rp_error *err) {
  if (c == NULL) return rp_error_set(err, RP_EINVAL, "radar model: NULL configuration");
  if (c->n_bands < 1 || c->n_bands > RP_RADAR_MAX_BANDS)
    return rp_error_set(err, RP_EINVAL, "radar model: %d bands outside [1, %d]", c->n_bands,
                        RP_RADAR_MAX_BANDS);
  if (!(c->kw2 > 0.0 && c->kw2 <= 1.0))
    return rp_error_set(err, RP_EDOM, "radar model: |K_w|^2 = %g outside (0, 1]", c->kw2);
  if (!(c->temp_step_c >= 0.5 && c->temp_step_c <= 10.0))
    return rp_error_set(err, RP_EDOM, "radar model: temperature step %g C outside [0.5, 10] C",
                        c->temp_step_c);
  for (int b = 0; b < c->n_bands; b++) {
    rp_drop_config d = c->scatter;
    d.freq_ghz = c->freq_ghz[b];
    RP_TRY(rp_drop_config_check(&d, err));
    for (int k = 0; k < b; k++)
      if (c->freq_ghz[k] == c->freq_ghz[b])
        return rp_error_set(err, RP_EINVAL, "radar model: band %d repeats %g GHz", b + 1,
                            c->freq_ghz[b]);
  }
  return RP_OK;
}

rp_status rp_radar_model_alloc(const rp_radar_config *c, rp_radar_model **out, rp_error *err) {
  if (out == NULL) return rp_error_set(err, RP_EINVAL, "radar model: NULL output");
  *out = NULL;
  RP_TRY(rp_radar_config_check(c, err));
  rp_radar_model *m = calloc(1, sizeof *m);
  if (m == NULL) return rp_error_set(err, RP_ENOMEM, "radar model: out of memory");
  m->cfg = *c;
  if (pthread_mutex_init(&m->lock, NULL) != 0) {
    free(m);
    return rp_error_set(err, RP_ENOMEM, "radar model: cannot create its lock");
  }
  if (pthread_cond_init(&m->built, NULL) != 0) {
    pthread_mutex_destroy(&m->lock);
    free(m);
    return rp_error_set(err, RP_ENOMEM, "radar model: cannot create its condition variable");
  }
  *out = m;
  return RP_OK;
}

static void entry_free(entry *e) {
  for (plan_node *p = e->plans; p != NULL;) {
    plan_node *next = p->next;
    rp_gate_plan_free(p->plan);
    free(p);
    p = next;
  }
  rp_gate_fast_free(e->fast);
  rp_gate_plan_free(e->plan);
  rp_table_free(e->table);
  free(e);
}

void rp_radar_model_free(rp_radar_model *m) {
  if (m == NULL) return;
  for (entry *e = m->entries; e != NULL;) {
    entry *next = e->next;
    entry_free(e);
    e = next;
  }
  pthread_cond_destroy(&m->built);
  pthread_mutex_destroy(&m->lock);
  free(m);
}

const rp_radar_config *rp_radar_model_config(const rp_radar_model *m) {
  return m != NULL ? &m->cfg : NULL;
}

rp_drop_config rp_radar_model_drop_config(const rp_radar_model *m, int band, double temp_c,
                                          double elevation_deg) {
  rp_drop_config d = m->cfg.scatter;
  if (band >= 0 && band < m->cfg.n_bands) d.freq_ghz = m->cfg.freq_ghz[band];
  d.temp_c = temp_c;
  d.elevation_deg = elevation_deg;
  return d;
}

/* ---- entries ----------------------------------------------------------------------- */

static rp_status check_key(const rp_radar_model *m, int band, double temp_c, double elev,
                           rp_error *err) {
  if (band < 0 || band >= m->cfg.n_bands)
    return rp_error_set(err, RP_EINVAL, "radar model: band %d outside [0, %d]", band,
                        m->cfg.n_bands - 1);
  if (!(temp_c >= RP_RADAR_TEMP_MIN_C && temp_c <= RP_RADAR_TEMP_MAX_C))
    return rp_error_set(err, RP_EDOM, "radar model: temperature %g C outside [%g, %g] C", temp_c,
                        RP_RADAR_TEMP_MIN_C, RP_RADAR_TEMP_MAX_C);
  if (!(elev >= 0.0 && elev <= 90.0))
    return rp_error_set(err, RP_EDOM, "radar model: elevation %g deg outside [0, 90] deg", elev);
  return RP_OK;
}

static entry *find_locked(rp_radar_model *m, int band, double temp_c, double elev) {
  for (entry *e = m->entries; e != NULL; e = e->next)
    if (e->band == band && fabs(e->temp_c - temp_c) <= KEY_SLACK &&
        fabs(e->elevation_deg - elev) <= KEY_SLACK)
      return e;
  return NULL;
}

/* Table, default plan and fast path of entry e (outside the lock). */
static rp_status build_entry(const rp_radar_model *m, entry *e, rp_error *err) {
  const rp_drop_config cfg = rp_radar_model_drop_config(m, e->band, e->temp_c, e->elevation_deg);
  RP_TRY(rp_table_source_get(&m->cfg.source, &cfg, &e->table, &e->origin, err));
  RP_TRY(rp_gate_plan_alloc(e->table, RP_DSD_DMIN_DEFAULT_MM, RP_DSD_DMAX_DEFAULT_MM, m->cfg.kw2,
                            &e->plan, err));
  return rp_gate_fast_alloc(e->plan, &e->fast, err);
}

static rp_status get_entry(rp_radar_model *m, int band, double temp_c, double elev, entry **out,
                           rp_error *err) {
  if (m == NULL || out == NULL) return rp_error_set(err, RP_EINVAL, "radar model: NULL argument");
  RP_TRY(check_key(m, band, temp_c, elev, err));
  pthread_mutex_lock(&m->lock);
  entry *e = find_locked(m, band, temp_c, elev);
  if (e == NULL) {
    e = calloc(1, sizeof *e);
    if (e == NULL) {
      pthread_mutex_unlock(&m->lock);
      return rp_error_set(err, RP_ENOMEM, "radar model: out of memory for a cache entry");
    }
    e->band = band;
    e->temp_c = temp_c;
    e->elevation_deg = elev;
    e->state = ENTRY_BUILDING;
    e->next = m->entries;
    m->entries = e;
    pthread_mutex_unlock(&m->lock);
    rp_error local = {0};
    const rp_status st = build_entry(m, e, &local);
    pthread_mutex_lock(&m->lock);
    e->state = st == RP_OK ? ENTRY_READY : ENTRY_FAILED;
    e->err = local;
    e->err.status = st;
    pthread_cond_broadcast(&m->built);
  } else {
    while (e->state == ENTRY_BUILDING) pthread_cond_wait(&m->built, &m->lock);
  }
  const int state = e->state;
  const rp_error failure = e->err;
  pthread_mutex_unlock(&m->lock);
  if (state == ENTRY_FAILED) {
    if (err != NULL) *err = failure;
    return failure.status;
  }
  *out = e;
  return RP_OK;
}

rp_status rp_radar_model_entry(rp_radar_model *m, int band, double temp_c, double elevation_deg,
                               rp_radar_entry *out, rp_error *err) {
  if (out == NULL) return rp_error_set(err, RP_EINVAL, "radar model: NULL output");
  entry *e = NULL;
  RP_TRY(get_entry(m, band, temp_c, elevation_deg, &e, err));
  out->table = e->table;
  out->plan = e->plan;
  out->fast = e->fast;
  out->origin = e->origin;
  return RP_OK;
}

rp_status rp_radar_model_plan(rp_radar_model *m, int band, double temp_c, double elevation_deg,
                              double dmin_mm, double dmax_mm, const rp_gate_plan **plan,
                              rp_table_origin *origin, rp_error *err) {
  if (plan == NULL) return rp_error_set(err, RP_EINVAL, "radar model: NULL plan output");
  entry *e = NULL;
  RP_TRY(get_entry(m, band, temp_c, elevation_deg, &e, err));
  if (origin != NULL) *origin = e->origin;
  if (fabs(dmin_mm - rp_gate_plan_dmin_mm(e->plan)) <= KEY_SLACK &&
      fabs(dmax_mm - rp_gate_plan_dmax_mm(e->plan)) <= KEY_SLACK) {
    *plan = e->plan;
    return RP_OK;
  }
  pthread_mutex_lock(&m->lock);
  for (plan_node *p = e->plans; p != NULL; p = p->next)
    if (fabs(p->dmin_mm - dmin_mm) <= KEY_SLACK && fabs(p->dmax_mm - dmax_mm) <= KEY_SLACK) {
      *plan = p->plan;
      pthread_mutex_unlock(&m->lock);
      return RP_OK;
    }
  /* A plan takes a fraction of a millisecond: built under the lock. */
  plan_node *node = calloc(1, sizeof *node);
  rp_status st = RP_OK;
  if (node == NULL)
    st = rp_error_set(err, RP_ENOMEM, "radar model: out of memory for a plan");
  else
    st = rp_gate_plan_alloc(e->table, dmin_mm, dmax_mm, m->cfg.kw2, &node->plan, err);
  if (st == RP_OK) {
    node->dmin_mm = dmin_mm;
    node->dmax_mm = dmax_mm;
    node->next = e->plans;
    e->plans = node;
    *plan = node->plan;
  } else {
    free(node);
  }
  pthread_mutex_unlock(&m->lock);
  return st;
}

rp_status rp_radar_model_gate(rp_radar_model *m, int band, double temp_c, double elevation_deg,
                              const rp_dsd *d, rp_gate_result *out, rp_table_origin *origin,
                              rp_error *err) {
  if (d == NULL || out == NULL) return rp_error_set(err, RP_EINVAL, "radar model: NULL DSD or output");
  entry *e = NULL;
  RP_TRY(get_entry(m, band, temp_c, elevation_deg, &e, err));
  /* Spectra are integrated over the whole table (gate.h); analytic DSDs over their
   * truncation. */
  double dmin = d->dmin_mm, dmax = d->dmax_mm;
  if (d->model == RP_DSD_SPECTRUM) {
    dmin = e->table->d_mm[0];
    dmax = e->table->d_mm[e->table->n - 1];
  }
  const rp_gate_plan *p = NULL;
  RP_TRY(rp_radar_model_plan(m, band, temp_c, elevation_deg, dmin, dmax, &p, origin, err));
  return rp_gate_eval(p, d, out, err);
}

/* ---- temperature nodes ----------------------------------------------------------------- */

/* Temperature of the table at node k: t0 + k dt clipped into the permittivity model's
 * range (with a step that does not divide the range's ends, an end node lies outside). */
static double node_temp_c(const rp_radar_temps *view, size_t k) {
  return fmin(fmax(view->t0_c + (double)k * view->dt_c, RP_RADAR_TEMP_MIN_C),
              RP_RADAR_TEMP_MAX_C);
}

rp_status rp_radar_model_temps(rp_radar_model *m, int band, double elevation_deg, double tmin_c,
                               double tmax_c, rp_radar_temps *view, rp_error *err) {
  if (m == NULL || view == NULL) return rp_error_set(err, RP_EINVAL, "radar model: NULL argument");
  if (!(tmin_c <= tmax_c))
    return rp_error_set(err, RP_EINVAL, "radar model: temperature range [%g, %g] C is empty",
                        tmin_c, tmax_c);
  RP_TRY(check_key(m, band, tmin_c, elevation_deg, err));
  RP_TRY(check_key(m, band, tmax_c, elevation_deg, err));
  const double dt = m->cfg.temp_step_c;
  const double k0 = floor(tmin_c / dt + 1e-9), k1 = ceil(tmax_c / dt - 1e-9);
  const double n = k1 - k0 + 1.0;
  const size_t cap = sizeof view->fast / sizeof view->fast[0];
  if (n > (double)cap)
    return rp_error_set(err, RP_EINVAL, "radar model: temperatures %g..%g C need %.0f nodes of "
                        "%g C, more than %zu", tmin_c, tmax_c, n, dt, cap);
  memset(view, 0, sizeof *view);
  view->t0_c = k0 * dt;
  view->dt_c = dt;
  view->n_nodes = (size_t)n;
  for (size_t k = 0; k < view->n_nodes; k++) {
    const double t = node_temp_c(view, k);
    rp_radar_entry en;
    RP_TRY(rp_radar_model_entry(m, band, t, elevation_deg, &en, err));
    view->fast[k] = en.fast;
  }
  return RP_OK;
}

rp_status rp_radar_temps_eval(const rp_radar_temps *view, double temp_c, double nw_m3_mm,
                              double d0_mm, double mu, rp_gate_linear *out, rp_error *err) {
  if (view == NULL || out == NULL || view->n_nodes == 0)
    return rp_error_set(err, RP_EINVAL, "radar model: NULL or empty temperature view");
  const double x = (temp_c - view->t0_c) / view->dt_c;
  const double top = (double)(view->n_nodes - 1);
  if (!(x >= -1e-9 && x <= top + 1e-9))
    return rp_error_set(err, RP_EDOM, "radar model: temperature %g C outside the view's %g..%g C",
                        temp_c, view->t0_c, view->t0_c + top * view->dt_c);
  const double xc = fmin(fmax(x, 0.0), top);
  size_t k = (size_t)xc;
  double w = xc - (double)k;
  if (k >= view->n_nodes - 1) { /* the last node itself */
    k = view->n_nodes - 1;
    w = 0.0;
  } else {
    /* An end node beyond the model's range holds the table at the range's end
     * (rp_radar_model_temps clips it): weigh with the temperatures the nodes hold. */
    const double ta = node_temp_c(view, k), tb = node_temp_c(view, k + 1);
    w = fmin(fmax((temp_c - ta) / (tb - ta), 0.0), 1.0);
  }
  rp_gate_result r;
  memset(out, 0, sizeof *out);
  RP_TRY(rp_gate_fast_eval(view->fast[k], nw_m3_mm, d0_mm, mu, &r, err));
  rp_gate_linear lin;
  rp_gate_linear_from_result(&r, &lin);
  rp_gate_linear_axpy(1.0 - w, &lin, out);
  if (w > 0.0) {
    RP_TRY(rp_gate_fast_eval(view->fast[k + 1], nw_m3_mm, d0_mm, mu, &r, err));
    rp_gate_linear_from_result(&r, &lin);
    rp_gate_linear_axpy(w, &lin, out);
  }
  return RP_OK;
}

rp_status rp_radar_model_prepare(rp_radar_model *m, double tmin_c, double tmax_c,
                                 const double *elevations_deg, size_t n, rp_error *err) {
  if (m == NULL || (elevations_deg == NULL && n > 0))
    return rp_error_set(err, RP_EINVAL, "radar model: NULL argument");
  for (int b = 0; b < m->cfg.n_bands; b++)
    for (size_t i = 0; i < n; i++) {
      rp_radar_temps view;
      RP_TRY(rp_radar_model_temps(m, b, elevations_deg[i], tmin_c, tmax_c, &view, err));
    }
  return RP_OK;
}
