/* relate.c — rain relations for one radar band: samples (rain and radar quantities of
 * many DSDs) and power-law fits between them, scored on held-out samples.
 *
 * Method (docs/method.md §10):
 *  - Ensemble members are normalised gamma DSDs in the D0 form (Bringi et al. 2003),
 *    N(D) = N0 D^mu exp(-Lambda D) on [dmin, dmax]. Their moments in closed form:
 *      M_n = N0 Lambda^-(mu+n+1) [gamma(mu+n+1, Lambda dmin) - gamma(mu+n+1, Lambda dmax)]
 *    (rp_dsd_moment), Nt = M0, LWC = (pi/6) 1e-3 M3, Dm = M4/M3,
 *    Nw = 4^4 LWC / (pi 1e-3 Dm^4) (Testud et al. 2001), and D0 from
 *    P(mu+4, Lambda D0) = [P(mu+4, Lambda dmin) + P(mu+4, Lambda dmax)] / 2
 *    (P the regularised lower incomplete gamma function, inverted by GSL's
 *    gsl_cdf_gamma_Pinv). Rain rate R = 6 pi 1e-4 ∫ v(D) D^3 N(D) dD with the fall law
 *    of Atlas, Srivastava & Sekhon (1973), v = 9.65 - 10.3 exp(-0.6 D) m/s, clipped at 0
 *    below Dc = ln(10.3/9.65)/0.6 = 0.1086 mm, integrated exactly:
 *      R = 6 pi 1e-4 [9.65 M3(Lambda) - 10.3 M3(Lambda + 0.6)] over [max(dmin, Dc), dmax].
 *    This replaces the adaptive quadrature of rp_dsd_moments_eval (17 us per DSD) by
 *    five incomplete gamma evaluations (3 us); the tests check that both agree.
 *  - Radar variables: gate.h (fast path for members inside its grid).
 *  - Fits: fit.h, on the samples passing each relation's thresholds, fit part = index
 *    not held out (rp_fit_is_held_out), skill on the held-out part.
 * Invariants: no global state; sample evaluation does not allocate; the fit driver
 * allocates its O(n) scratch once per call. */
#include "rainprint/relate.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_sf_gamma.h>

/* ---- relation table ---------------------------------------------------------------- */

static const rp_relate_info INFO[RP_REL_COUNT] = {
    {"R(Zh)", "R = a Zh^b", "R", "mm/h", "Zh", "mm^6 m^-3", NULL, NULL},
    {"Zh(R)", "Zh = a R^b", "Zh", "mm^6 m^-3", "R", "mm/h", NULL, NULL},
    {"R(KDP)", "R = a KDP^b", "R", "mm/h", "KDP", "deg/km", NULL, NULL},
    {"R(Zh,ZDR)", "R = a Zh^b Zdr^c", "R", "mm/h", "Zh", "mm^6 m^-3", "Zdr",
     "linear, 10^(ZDR/10)"},
    {"R(KDP,ZDR)", "R = a KDP^b Zdr^c", "R", "mm/h", "KDP", "deg/km", "Zdr",
     "linear, 10^(ZDR/10)"},
    {"AH(KDP)", "AH = a KDP^b", "AH", "dB/km", "KDP", "deg/km", NULL, NULL},
    {"ADP(KDP)", "ADP = a KDP^b", "ADP", "dB/km", "KDP", "deg/km", NULL, NULL},
    {"AH(Zh)", "AH = a Zh^b", "AH", "dB/km", "Zh", "mm^6 m^-3", NULL, NULL},
    {"Dm(ZDR)", "Dm = a ZDR^b", "Dm", "mm", "ZDR", "dB", NULL, NULL},
};

/* Which thresholds each relation uses. */
enum { USE_ZH = 1, USE_KDP = 2, USE_ZDR = 4 };
static const unsigned USES[RP_REL_COUNT] = {
    USE_ZH,          USE_ZH,           USE_KDP, USE_ZH | USE_ZDR, USE_KDP | USE_ZDR,
    USE_KDP,         USE_KDP,          USE_ZH,  USE_ZDR,
};

const rp_relate_info *rp_relate_info_get(rp_relate_id id) {
  return ((unsigned)id < RP_REL_COUNT) ? &INFO[id] : NULL;
}

static void valid_names(char *buf, size_t n) {
  size_t used = 0;
  buf[0] = '\0';
  for (int i = 0; i < RP_REL_COUNT && used < n; i++) {
    int w = snprintf(buf + used, n - used, "%s%s", i ? ", " : "", INFO[i].name);
    if (w < 0) break;
    used += (size_t)w;
  }
}

static int lookup(const char *name, size_t len) {
  for (int i = 0; i < RP_REL_COUNT; i++)
    if (strlen(INFO[i].name) == len && strncmp(INFO[i].name, name, len) == 0) return i;
  return -1;
}

rp_status rp_relate_from_name(const char *name, rp_relate_id *id, rp_error *err) {
  if (name == NULL || id == NULL)
    return rp_error_set(err, RP_EINVAL, "relation name or output is NULL");
  const int k = lookup(name, strlen(name));
  if (k < 0) {
    char names[256];
    valid_names(names, sizeof names);
    return rp_error_set(err, RP_EINVAL, "unknown relation '%s' (valid names, case-sensitive: %s)",
                        name, names);
  }
  *id = (rp_relate_id)k;
  return RP_OK;
}

rp_status rp_relate_parse_list(const char *text, unsigned *mask, rp_error *err) {
  if (text == NULL || mask == NULL)
    return rp_error_set(err, RP_EINVAL, "relation list or output is NULL");
  unsigned m = 0;
  const char *p = text;
  for (;;) {
    /* one entry: up to a comma outside parentheses */
    const char *q = p;
    int depth = 0;
    while (*q && !(*q == ',' && depth == 0)) {
      if (*q == '(') depth++;
      if (*q == ')' && depth > 0) depth--;
      q++;
    }
    const char *a = p, *b = q;
    while (a < b && (*a == ' ' || *a == '\t')) a++;
    while (b > a && (b[-1] == ' ' || b[-1] == '\t')) b--;
    if (a == b)
      return rp_error_set(err, RP_EINVAL, "relation list '%s' has an empty entry", text);
    const int k = lookup(a, (size_t)(b - a));
    if (k < 0) {
      char names[256];
      valid_names(names, sizeof names);
      return rp_error_set(err, RP_EINVAL,
                          "unknown relation '%.*s' (valid names, case-sensitive: %s)",
                          (int)(b - a), a, names);
    }
    m |= 1u << k;
    if (*q == '\0') break;
    p = q + 1;
  }
  *mask = m;
  return RP_OK;
}

/* ---- samples of ensemble members ---------------------------------------------------- */

/* Atlas, Srivastava & Sekhon (1973): v = 9.65 - 10.3 exp(-0.6 D) m/s (D in mm). */
#define ATLAS_A 9.65
#define ATLAS_B 10.3
#define ATLAS_C 0.6
#define RHO_W_G_MM3 1e-3 /* density of water, g mm^-3 */

static rp_status moment_on(const rp_dsd *d, double lambda, double lo, double hi, double n,
                           double *m, rp_error *err) {
  rp_dsd t = *d;
  t.lambda_per_mm = lambda;
  t.dmin_mm = lo;
  t.dmax_mm = hi;
  return rp_dsd_moment(&t, n, m, err);
}

/* Closed-form moments of an analytic gamma-family DSD (see the file header). */
static rp_status gamma_moments(const rp_dsd *d, rp_relate_sample *s, rp_error *err) {
  const double lam = d->lambda_per_mm, lo = d->dmin_mm, hi = d->dmax_mm;
  double m0, m3, m4;
  RP_TRY(rp_dsd_moment(d, 0.0, &m0, err));
  RP_TRY(rp_dsd_moment(d, 3.0, &m3, err));
  RP_TRY(rp_dsd_moment(d, 4.0, &m4, err));
  if (!(m3 > 0.0))
    return rp_error_set(err, RP_EDOM, "DSD holds no water in [%g, %g] mm", lo, hi);
  s->nt_m3 = m0;
  s->lwc_g_m3 = M_PI / 6.0 * RHO_W_G_MM3 * m3;
  s->dm_mm = m4 / m3;
  s->nw_m3_mm = 256.0 * s->lwc_g_m3 / (M_PI * RHO_W_G_MM3 * pow(s->dm_mm, 4.0));

  /* Rain rate: the fall speed is clipped at 0 below dc. */
  const double dc = log(ATLAS_B / ATLAS_A) / ATLAS_C;
  const double rlo = fmax(lo, dc);
  double r = 0.0;
  if (rlo < hi) {
    double m3a, m3b;
    RP_TRY(moment_on(d, lam, rlo, hi, 3.0, &m3a, err));
    RP_TRY(moment_on(d, lam + ATLAS_C, rlo, hi, 3.0, &m3b, err));
    r = 6.0 * M_PI * 1e-4 * (ATLAS_A * m3a - ATLAS_B * m3b);
  }
  s->rain_rate_mm_h = fmax(r, 0.0);

  /* D0: half of M3 on either side, P(a, Lambda D0) = (P(a, x1) + P(a, x2)) / 2. */
  const double a = d->mu + 4.0, x1 = lam * lo, x2 = lam * hi;
  gsl_sf_result p1, p2;
  int g1 = gsl_sf_gamma_inc_P_e(a, x1, &p1);
  int g2 = gsl_sf_gamma_inc_P_e(a, x2, &p2);
  if (g1 != GSL_SUCCESS || g2 != GSL_SUCCESS)
    return rp_error_set(err, RP_EGSL, "incomplete gamma P(%g, [%g, %g]) failed: %s", a, x1, x2,
                        gsl_strerror(g1 != GSL_SUCCESS ? g1 : g2));
  const double x0 = gsl_cdf_gamma_Pinv(0.5 * (p1.val + p2.val), a, 1.0);
  if (!isfinite(x0) || x0 <= 0.0)
    return rp_error_set(err, RP_ENOCONV,
                        "median volume diameter not found (gamma quantile of order %g, "
                        "shape %g)", 0.5 * (p1.val + p2.val), a);
  s->d0_mm = x0 / lam;
  return RP_OK;
}

static void fill_radar(rp_relate_sample *s, const rp_gate_result *g) {
  s->zh_mm6_m3 = g->zh_mm6_m3;
  s->zh_dbz = g->zh_dbz;
  s->zdr_db = g->zdr_db;
  s->kdp_deg_km = g->kdp_deg_km;
  s->ah_db_km = g->ah_db_km;
  s->adp_db_km = g->adp_db_km;
  s->rhohv = g->rhohv;
}

static int in_fast_grid(const rp_ensemble_member *m) {
  return m->d0_mm >= RP_GATE_FAST_D0_MIN_MM && m->d0_mm <= RP_GATE_FAST_D0_MAX_MM &&
         m->mu >= RP_GATE_FAST_MU_MIN && m->mu <= RP_GATE_FAST_MU_MAX;
}

static rp_status member_sample(const rp_gate_plan *plan, const rp_gate_fast *fast,
                               const rp_ensemble_member *m, size_t i, rp_relate_sample *s,
                               rp_error *err) {
  rp_dsd d;
  if (!isfinite(m->log10_nw) || !isfinite(m->d0_mm) || !isfinite(m->mu))
    return rp_error_set(err, RP_EINVAL, "log10 Nw %g, D0 %g mm, mu %g: not finite",
                        m->log10_nw, m->d0_mm, m->mu);
  RP_TRY(rp_ensemble_member_dsd(m, &d, err));
  if (!(fabs(d.dmin_mm - rp_gate_plan_dmin_mm(plan)) <= 1e-9) ||
      !(fabs(d.dmax_mm - rp_gate_plan_dmax_mm(plan)) <= 1e-9))
    return rp_error_set(err, RP_EINVAL,
                        "DSD truncation [%g, %g] mm differs from the plan's [%g, %g] mm",
                        d.dmin_mm, d.dmax_mm, rp_gate_plan_dmin_mm(plan),
                        rp_gate_plan_dmax_mm(plan));
  s->index = i;
  s->cluster = (long)m->cluster;
  s->log10_nw_param = m->log10_nw;
  s->d0_param_mm = m->d0_mm;
  s->mu_param = m->mu;
  RP_TRY(gamma_moments(&d, s, err));
  rp_gate_result g;
  if (fast != NULL && in_fast_grid(m)) {
    RP_TRY(rp_gate_fast_eval(fast, d.nw_m3_mm, m->d0_mm, m->mu, &g, err));
    s->fast = 1;
  } else {
    RP_TRY(rp_gate_eval(plan, &d, &g, err));
    s->fast = 0;
  }
  fill_radar(s, &g);
  return RP_OK;
}

/* Samples of members [lo, hi) (index = member index), in parallel; the first failing
 * member (lowest index) is reported, whatever the schedule. */
static rp_status eval_members(const rp_gate_plan *plan, const rp_gate_fast *fast,
                              const rp_ensemble_member *m, size_t lo, size_t hi,
                              rp_relate_sample *out, size_t *n_direct, rp_error *err) {
  size_t direct = 0, first_bad = hi;
  rp_status bad = RP_OK;
  rp_error bad_err = {0};
#pragma omp parallel for schedule(static) reduction(+ : direct)
  for (size_t i = lo; i < hi; i++) {
    rp_error local = {0};
    const rp_status st = member_sample(plan, fast, &m[i], i, &out[i], &local);
    if (st != RP_OK) {
#pragma omp critical(rp_relate_member_error)
      if (i < first_bad) {
        first_bad = i;
        bad = st;
        bad_err = local;
      }
      continue;
    }
    direct += out[i].fast ? 0 : 1;
  }
  if (bad != RP_OK) {
    if (err != NULL) *err = bad_err;
    rp_error_prefix(err, "ensemble member %zu: ", first_bad);
    return bad;
  }
  *n_direct += direct;
  return RP_OK;
}

rp_status rp_relate_ensemble_eval(const rp_gate_plan *plan, const rp_gate_fast *fast,
                                  const rp_ensemble_member *m, size_t n,
                                  rp_relate_sample *out, size_t *n_direct, rp_error *err) {
  if (plan == NULL || m == NULL || out == NULL)
    return rp_error_set(err, RP_EINVAL, "relate: NULL plan, members or output");
  if (n < RP_RELATE_MIN_MEMBERS)
    return rp_error_set(err, RP_EINVAL,
                        "ensemble of %zu members is too small: at least %d are needed (3 in 4 "
                        "are fitted, 1 in 4 scores the fit)", n, RP_RELATE_MIN_MEMBERS);
  size_t direct = 0;
  RP_TRY(eval_members(plan, fast, m, 0, n, out, &direct, err));
  if (n_direct) *n_direct = direct;
  return RP_OK;
}

/* ---- samples of measured spectra --------------------------------------------------- */

void rp_relate_quality_default(rp_relate_quality *q) {
  if (q == NULL) return;
  q->max_diameter_mm = RP_RELATE_DMAX_DEFAULT_MM;
  q->min_nt_m3 = RP_RELATE_NT_MIN_DEFAULT;
  q->min_rain_rate_mm_h = RP_RELATE_RAIN_MIN_DEFAULT;
}

rp_status rp_relate_spectra_eval(const rp_gate_plan *plan, const rp_dsd *rows, size_t n_rows,
                                 const rp_relate_quality *q, rp_relate_sample *out,
                                 rp_relate_quality_report *rep, rp_error *err) {
  if (plan == NULL || (rows == NULL && n_rows > 0) || q == NULL || out == NULL || rep == NULL)
    return rp_error_set(err, RP_EINVAL, "relate: NULL plan, spectra, filters or output");
  if (!(q->max_diameter_mm > 0.0) || !(q->min_nt_m3 >= 0.0) || !(q->min_rain_rate_mm_h >= 0.0) ||
      !isfinite(q->min_nt_m3) || !isfinite(q->min_rain_rate_mm_h))
    return rp_error_set(err, RP_EINVAL,
                        "quality filters: maximum diameter %g mm must be > 0, minimum Nt %g "
                        "m^-3 and minimum rain rate %g mm/h finite and >= 0",
                        q->max_diameter_mm, q->min_nt_m3, q->min_rain_rate_mm_h);
  const double table_max = rp_gate_plan_dmax_mm(plan);
  if (q->max_diameter_mm > table_max + 1e-9)
    return rp_error_set(err, RP_EDOM,
                        "maximum diameter %g mm is beyond the scattering table, which ends at "
                        "%g mm", q->max_diameter_mm, table_max);
  memset(rep, 0, sizeof *rep);
  rep->n_rows = n_rows;
  for (size_t r = 0; r < n_rows; r++) {
    const rp_dsd d = rows[r];
    if (d.model != RP_DSD_SPECTRUM || d.n_bins == 0 || d.bin_conc_m3_mm == NULL ||
        d.bin_center_mm == NULL || d.bin_width_mm == NULL)
      return rp_error_set(err, RP_EINVAL, "spectra row %zu: not a spectrum DSD with bins", r + 1);
    double top = 0.0; /* upper edge of the largest non-empty bin */
    for (size_t b = 0; b < d.n_bins; b++)
      if (d.bin_conc_m3_mm[b] > 0.0) top = d.bin_center_mm[b] + 0.5 * d.bin_width_mm[b];
    if (top == 0.0) {
      rep->n_empty++;
      continue;
    }
    if (top > q->max_diameter_mm + 1e-9) {
      rep->n_large_drop++;
      continue;
    }
    rp_dsd_moments mo;
    rp_gate_result g;
    rp_status st = rp_dsd_moments_eval(&d, RP_RELATE_FALL_MODEL, 1.0, &mo, err);
    if (st != RP_OK) {
      rp_error_prefix(err, "spectra row %zu: ", r + 1);
      return st;
    }
    if (mo.nt_m3 < q->min_nt_m3) {
      rep->n_low_nt++;
      continue;
    }
    if (mo.rain_rate_mm_h < q->min_rain_rate_mm_h) {
      rep->n_low_rain++;
      continue;
    }
    st = rp_gate_eval(plan, &d, &g, err);
    if (st != RP_OK) {
      rp_error_prefix(err, "spectra row %zu: ", r + 1);
      return st;
    }
    rp_relate_sample *o = &out[rep->n_kept++];
    memset(o, 0, sizeof *o);
    o->index = r;
    o->cluster = -1;
    o->log10_nw_param = o->d0_param_mm = o->mu_param = (double)NAN;
    o->nt_m3 = mo.nt_m3;
    o->lwc_g_m3 = mo.lwc_g_m3;
    o->rain_rate_mm_h = mo.rain_rate_mm_h;
    o->dm_mm = mo.dm_mm;
    o->d0_mm = mo.d0_mm;
    o->nw_m3_mm = mo.nw_m3_mm;
    o->fast = 0;
    fill_radar(o, &g);
  }
  if (rep->n_kept == 0)
    return rp_error_set(err, RP_EINVAL,
                        "no valid rows among %zu spectra: %zu empty, %zu with drops beyond "
                        "%g mm, %zu with Nt below %g m^-3, %zu with rain rate below %g mm/h",
                        rep->n_rows, rep->n_empty, rep->n_large_drop, q->max_diameter_mm,
                        rep->n_low_nt, q->min_nt_m3, rep->n_low_rain, q->min_rain_rate_mm_h);
  return RP_OK;
}

/* ---- fits -------------------------------------------------------------------------- */

void rp_relate_options_default(rp_relate_options *o) {
  if (o == NULL) return;
  o->zh_min_dbz = RP_RELATE_ZH_MIN_DBZ_DEFAULT;
  o->kdp_min_deg_km = RP_RELATE_KDP_MIN_DEFAULT;
  o->zdr_min_db = RP_RELATE_ZDR_MIN_DB_DEFAULT;
  o->nonlinear = 0;
  o->relations = RP_RELATE_ALL;
}

int rp_relate_sample_values(rp_relate_id id, const rp_relate_sample *s,
                            const rp_relate_options *o, double *x1, double *x2, double *y) {
  if (s == NULL || o == NULL || x1 == NULL || x2 == NULL || y == NULL ||
      (unsigned)id >= RP_REL_COUNT)
    return 0;
  const double zdr_lin = pow(10.0, 0.1 * s->zdr_db);
  *x2 = (double)NAN;
  switch (id) {
    case RP_REL_R_ZH: *x1 = s->zh_mm6_m3; *y = s->rain_rate_mm_h; break;
    case RP_REL_ZH_R: *x1 = s->rain_rate_mm_h; *y = s->zh_mm6_m3; break;
    case RP_REL_R_KDP: *x1 = s->kdp_deg_km; *y = s->rain_rate_mm_h; break;
    case RP_REL_R_ZH_ZDR: *x1 = s->zh_mm6_m3; *x2 = zdr_lin; *y = s->rain_rate_mm_h; break;
    case RP_REL_R_KDP_ZDR: *x1 = s->kdp_deg_km; *x2 = zdr_lin; *y = s->rain_rate_mm_h; break;
    case RP_REL_AH_KDP: *x1 = s->kdp_deg_km; *y = s->ah_db_km; break;
    case RP_REL_ADP_KDP: *x1 = s->kdp_deg_km; *y = s->adp_db_km; break;
    case RP_REL_AH_ZH: *x1 = s->zh_mm6_m3; *y = s->ah_db_km; break;
    case RP_REL_DM_ZDR: *x1 = s->zdr_db; *y = s->dm_mm; break;
    default: return 0;
  }
  const unsigned u = USES[id];
  /* NaN comparisons are false, so a NaN value fails every test below. */
  if ((u & USE_ZH) && !(s->zh_dbz >= o->zh_min_dbz)) return 0;
  if ((u & USE_KDP) && !(s->kdp_deg_km >= o->kdp_min_deg_km)) return 0;
  if ((u & USE_ZDR) && !(s->zdr_db >= o->zdr_min_db)) return 0;
  if (!(isfinite(*x1) && *x1 > 0.0 && isfinite(*y) && *y > 0.0)) return 0;
  if (INFO[id].x2 != NULL && !(isfinite(*x2) && *x2 > 0.0)) return 0;
  return 1;
}

/* "Zh >= 10 dBZ, ZDR >= 0.2 dB" for relation id. */
static void threshold_text(rp_relate_id id, const rp_relate_options *o, char *buf, size_t n) {
  const unsigned u = USES[id];
  size_t used = 0;
  buf[0] = '\0';
  const struct { unsigned bit; const char *fmt; double v; } t[3] = {
      {USE_ZH, "Zh >= %g dBZ", o->zh_min_dbz},
      {USE_KDP, "KDP >= %g deg/km", o->kdp_min_deg_km},
      {USE_ZDR, "ZDR >= %g dB", o->zdr_min_db}};
  for (int k = 0; k < 3; k++) {
    if (!(u & t[k].bit) || used >= n) continue;
    if (used > 0) used += (size_t)snprintf(buf + used, n - used, ", ");
    if (used < n) used += (size_t)snprintf(buf + used, n - used, t[k].fmt, t[k].v);
  }
}

typedef struct {
  double *x1, *x2, *y;      /* fit part */
  double *hx1, *hx2, *hy;   /* held-out part */
  double *est;
} fit_scratch;

static rp_status fit_one(rp_relate_id id, const rp_relate_sample *s, size_t n,
                         const rp_relate_options *o, const fit_scratch *w, rp_relate_fit *out,
                         rp_error *err) {
  size_t nf = 0, nh = 0, below = 0;
  for (size_t i = 0; i < n; i++) {
    double x1, x2, y;
    if (!rp_relate_sample_values(id, &s[i], o, &x1, &x2, &y)) {
      below++;
      continue;
    }
    if (rp_fit_is_held_out(s[i].index)) {
      w->hx1[nh] = x1; w->hx2[nh] = x2; w->hy[nh] = y; nh++;
    } else {
      w->x1[nf] = x1; w->x2[nf] = x2; w->y[nf] = y; nf++;
    }
  }
  if (nf < RP_FIT_MIN_POINTS || nh < RP_RELATE_MIN_HELD) {
    char th[128];
    threshold_text(id, o, th, sizeof th);
    return rp_error_set(err, RP_ESAMPLES,
                        "%s: too few samples above the thresholds (%s): %zu to fit and %zu "
                        "held out of %zu; at least %d and %d are needed",
                        INFO[id].name, th, nf, nh, n, RP_FIT_MIN_POINTS, RP_RELATE_MIN_HELD);
  }
  rp_relate_fit r;
  memset(&r, 0, sizeof r);
  r.id = id;
  r.n_candidates = n;
  r.n_below = below;
  r.n_held = nh;
  r.z_alpha = r.z_beta = (double)NAN;
  rp_status st = (INFO[id].x2 == NULL)
                     ? rp_fit_power1(w->x1, w->y, nf, 0.0, o->nonlinear, &r.fit, err)
                     : rp_fit_power2(w->x1, w->x2, w->y, nf, 0.0, o->nonlinear, &r.fit, err);
  if (st == RP_OK) {
    for (size_t i = 0; i < nh; i++) w->est[i] = rp_fit_power_eval(&r.fit, w->hx1[i], w->hx2[i]);
    st = rp_fit_skill_eval(w->est, w->hy, nh, &r.skill, err);
  }
  if (st != RP_OK) {
    rp_error_prefix(err, "%s: ", INFO[id].name);
    return st;
  }
  if (id == RP_REL_R_ZH && r.fit.b != 0.0) {
    r.z_beta = 1.0 / r.fit.b;
    r.z_alpha = pow(r.fit.a, -r.z_beta);
  }
  *out = r;
  return RP_OK;
}

rp_status rp_relate_fit_eval(const rp_relate_sample *s, size_t n, const rp_relate_options *o,
                             rp_relate_fit *out, size_t *n_out, rp_error *err) {
  if (s == NULL || o == NULL || out == NULL || n_out == NULL)
    return rp_error_set(err, RP_EINVAL, "relate: NULL samples, options or output");
  if (isnan(o->zh_min_dbz) || isnan(o->kdp_min_deg_km) || isnan(o->zdr_min_db))
    return rp_error_set(err, RP_EINVAL, "relate: thresholds Zh %g dBZ, KDP %g deg/km, ZDR %g "
                        "dB must be numbers", o->zh_min_dbz, o->kdp_min_deg_km, o->zdr_min_db);
  if ((o->relations & RP_RELATE_ALL) == 0)
    return rp_error_set(err, RP_EINVAL, "relate: no relation selected");
  if (n == 0) return rp_error_set(err, RP_EINVAL, "relate: no samples");
  fit_scratch w;
  double *block = malloc(7 * n * sizeof *block);
  if (block == NULL)
    return rp_error_set(err, RP_ENOMEM, "relate: no memory for %zu samples", n);
  w.x1 = block; w.x2 = block + n; w.y = block + 2 * n;
  w.hx1 = block + 3 * n; w.hx2 = block + 4 * n; w.hy = block + 5 * n; w.est = block + 6 * n;
  rp_status st = RP_OK;
  size_t k = 0;
  rp_relate_fit tmp[RP_REL_COUNT];
  for (int id = 0; id < RP_REL_COUNT && st == RP_OK; id++) {
    if (!(o->relations & (1u << id))) continue;
    st = fit_one((rp_relate_id)id, s, n, o, &w, &tmp[k], err);
    if (st == RP_OK) k++;
  }
  free(block);
  if (st != RP_OK) return st;
  memcpy(out, tmp, k * sizeof *out);
  *n_out = k;
  return RP_OK;
}

/* ---- the whole pipeline ------------------------------------------------------------ */

void rp_relate_request_default(rp_relate_request *r) {
  memset(r, 0, sizeof *r);
  r->source = RP_RELATE_FROM_ENSEMBLE;
  r->n_members = RP_ENSEMBLE_SIZE_DEFAULT;
  r->seed = 1;
  rp_relate_quality_default(&r->quality);
  rp_relate_options_default(&r->options);
}

void rp_relate_result_free(rp_relate_result *r) {
  if (r == NULL) return;
  free(r->members);
  free(r->samples);
  free(r);
}

rp_status rp_relate_run(rp_radar_model *model, int band, const rp_relate_request *req,
                        rp_relate_result **out, rp_error *err) {
  if (model == NULL || req == NULL || out == NULL)
    return rp_error_set(err, RP_EINVAL, "relate: NULL model, request or output");
  *out = NULL;
  const rp_radar_config *mc = rp_radar_model_config(model);
  rp_radar_entry en;
  RP_TRY(rp_radar_model_entry(model, band, mc->scatter.temp_c, mc->scatter.elevation_deg, &en,
                              err));
  rp_relate_result *r = calloc(1, sizeof *r);
  if (r == NULL) return rp_error_set(err, RP_ENOMEM, "relate: out of memory");
  r->origin = en.origin;
  rp_status st = RP_OK;
  if (req->source == RP_RELATE_FROM_SPECTRA) {
    r->samples = calloc(req->n_rows ? req->n_rows : 1, sizeof *r->samples);
    if (r->samples == NULL) {
      st = rp_error_set(err, RP_ENOMEM, "relate: out of memory for %zu samples", req->n_rows);
      goto fail;
    }
    st = rp_relate_spectra_eval(en.plan, req->rows, req->n_rows, &req->quality, r->samples,
                                &r->report, err);
    r->n_samples = r->report.n_kept;
  } else if (req->source == RP_RELATE_FROM_ENSEMBLE) {
    if (req->climate == NULL) {
      st = rp_error_set(err, RP_EINVAL, "relate: no climate for the ensemble");
      goto fail;
    }
    if (req->n_members < RP_RELATE_MIN_MEMBERS) {
      st = rp_error_set(err, RP_EINVAL, "ensemble of %zu members is too small: at least %d are "
                        "needed (3 in 4 are fitted, 1 in 4 scores the fit)", req->n_members,
                        RP_RELATE_MIN_MEMBERS);
      goto fail;
    }
    r->members = calloc(req->n_members, sizeof *r->members);
    r->samples = calloc(req->n_members, sizeof *r->samples);
    if (r->members == NULL || r->samples == NULL) {
      st = rp_error_set(err, RP_ENOMEM, "relate: out of memory for %zu members", req->n_members);
      goto fail;
    }
    st = rp_ensemble_draw(req->climate, req->n_members, req->seed, r->members, err);
    /* in chunks, so that a progress bar can move (the samples do not depend on them) */
    const size_t chunk = 20000;
    for (size_t lo = 0; st == RP_OK && lo < req->n_members; lo += chunk) {
      const size_t hi = lo + chunk < req->n_members ? lo + chunk : req->n_members;
      st = eval_members(en.plan, en.fast, r->members, lo, hi, r->samples, &r->n_direct, err);
      if (req->progress != NULL) req->progress(req->progress_ctx, 0.9 * (double)hi / (double)req->n_members);
    }
    r->n_samples = req->n_members;
  } else {
    st = rp_error_set(err, RP_EINVAL, "relate: unknown sample source %d", (int)req->source);
  }
  if (st == RP_OK)
    st = rp_relate_fit_eval(r->samples, r->n_samples, &req->options, r->fits, &r->n_fits, err);
  if (st != RP_OK) goto fail;
  if (req->progress != NULL) req->progress(req->progress_ctx, 1.0);
  *out = r;
  return RP_OK;
fail:
  rp_relate_result_free(r);
  return st;
}
