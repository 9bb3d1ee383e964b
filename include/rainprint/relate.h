/* relate.h — rain relations for one radar band: radar variables and rain quantities of
 * many DSDs (a seeded ensemble of normalised gamma DSDs, or rows of a measured spectra
 * file), then power-law fits between them with 95 % confidence intervals and skill on
 * held-out samples.
 *
 * Pipeline (equations and references in docs/method.md §10):
 *   1. samples: for every DSD, R (mm/h), Zh (mm^6 m^-3 and dBZ), ZDR (dB), KDP (deg/km),
 *      AH, ADP (dB/km, one way), Dm, D0 (mm), Nw (m^-3 mm^-1), LWC (g m^-3), Nt (m^-3).
 *      Radar variables from the gate integrator (gate.h) — the fast path for ensemble
 *      members inside its (D0, mu) grid, else direct integration with the same plan.
 *      Rain rate with the Atlas, Srivastava & Sekhon (1973) fall speeds at sea level
 *      (RP_RELATE_FALL_MODEL, density factor 1), as the gate command reports it.
 *   2. relations (names are a contract, case-sensitive):
 *        "R(Zh)"       R  = a Zh^b          (also given as Zh = alpha R^beta by inversion)
 *        "Zh(R)"       Zh = a R^b           (direct fit of Zh on R)
 *        "R(KDP)"      R  = a KDP^b
 *        "R(Zh,ZDR)"   R  = a Zh^b Zdr^c    (Zdr = 10^(ZDR/10), the linear ratio)
 *        "R(KDP,ZDR)"  R  = a KDP^b Zdr^c
 *        "AH(KDP)"     AH = a KDP^b
 *        "ADP(KDP)"    ADP = a KDP^b
 *        "AH(Zh)"      AH = a Zh^b
 *        "Dm(ZDR)"     Dm = a ZDR^b         (ZDR in dB)
 *      with Zh linear in mm^6 m^-3. Each relation uses the samples that pass its
 *      thresholds (rp_relate_options) and have every variable it uses finite and > 0.
 *   3. fit on the samples whose index i is not held out (rp_fit_is_held_out(i) == 0,
 *      3 in 4), log-space least squares (fit.h) or its nonlinear refinement; skill
 *      (bias %, RMSE, FSE %, correlation, fit.h) of the relation on the held-out ones.
 *
 * Caution (RP_RELATE_CAUTION): fitted relations describe the synthetic or measured DSDs
 * they came from; they must be validated against local gauges before any operational or
 * warning use, and the local authority's practice takes precedence. */
#ifndef RAINPRINT_RELATE_H
#define RAINPRINT_RELATE_H

#include <stddef.h>

#include "rainprint/ensemble.h"
#include "rainprint/fallspeed.h"
#include "rainprint/fit.h"
#include "rainprint/gate.h"
#include "rainprint/radar_model.h"
#include "rainprint/status.h"

#define RP_RELATE_CAUTION                                                                 \
  "Fitted relations describe the DSDs they were fitted to. Validate them against local " \
  "rain gauges before any operational or warning use, and defer to the local "          \
  "authority's practice."

/* Fall-speed model of every rain rate computed here (sea-level air, density factor 1). */
#define RP_RELATE_FALL_MODEL RP_FALL_ATLAS

/* Fewest ensemble members accepted: with the 3/4 : 1/4 split, 50 members give 38 to fit
 * and 12 to score, the least that leaves every relation RP_FIT_MIN_POINTS fit points
 * and a few held-out points when all members pass the thresholds. */
#define RP_RELATE_MIN_MEMBERS 50
/* Fewest held-out samples a relation's skill is computed from (RP_EINVAL below). */
#define RP_RELATE_MIN_HELD 3

/* Default thresholds (documented with their reasons in docs/method.md §10). */
#define RP_RELATE_ZH_MIN_DBZ_DEFAULT 10.0    /* R(Zh), Zh(R), R(Zh,ZDR), AH(Zh) */
#define RP_RELATE_KDP_MIN_DEFAULT 0.1        /* deg/km: R(KDP), R(KDP,ZDR), AH(KDP), ADP(KDP) */
#define RP_RELATE_ZDR_MIN_DB_DEFAULT 0.2     /* dB: Dm(ZDR), R(Zh,ZDR), R(KDP,ZDR) */
/* Default quality filters of measured spectra. */
#define RP_RELATE_NT_MIN_DEFAULT 10.0        /* m^-3 */
#define RP_RELATE_RAIN_MIN_DEFAULT 0.1       /* mm/h */
#define RP_RELATE_DMAX_DEFAULT_MM 8.0        /* upper edge of the largest non-empty bin */

typedef enum {
  RP_REL_R_ZH = 0,
  RP_REL_ZH_R,
  RP_REL_R_KDP,
  RP_REL_R_ZH_ZDR,
  RP_REL_R_KDP_ZDR,
  RP_REL_AH_KDP,
  RP_REL_ADP_KDP,
  RP_REL_AH_ZH,
  RP_REL_DM_ZDR,
  RP_REL_COUNT
} rp_relate_id;

/* Bit mask of every relation. */
#define RP_RELATE_ALL ((1u << RP_REL_COUNT) - 1u)

/* Static description of a relation. */
typedef struct {
  const char *name;     /* "R(KDP)" */
  const char *form;     /* "R = a KDP^b" */
  const char *y, *y_units;   /* predicted variable and its units ("R", "mm/h") */
  const char *x1, *x1_units; /* first predictor ("KDP", "deg/km") */
  const char *x2, *x2_units; /* second predictor or NULL */
} rp_relate_info;

/* Description of relation id (static storage), NULL for an invalid id. */
const rp_relate_info *rp_relate_info_get(rp_relate_id id);

/* Relation from its exact name ("R(KDP)"). Returns RP_OK; RP_EINVAL for NULL arguments
 * or an unknown name (the message lists the valid names). *id unchanged on error. */
rp_status rp_relate_from_name(const char *name, rp_relate_id *id, rp_error *err);

/* Parse a comma-separated list of names ("R(KDP),R(Zh,ZDR),AH(KDP)"; commas inside
 * parentheses belong to the name; spaces around names are ignored) into a bit mask
 * (bit id). Returns RP_OK; RP_EINVAL for NULL arguments, an empty list or entry, or an
 * unknown name (message names it and lists the valid names). *mask unchanged on error. */
rp_status rp_relate_parse_list(const char *text, unsigned *mask, rp_error *err);

/* One DSD's rain and radar quantities. */
typedef struct {
  size_t index;      /* member index or 0-based spectra row: decides the held-out split */
  long cluster;      /* ensemble cluster index, -1 for spectra */
  double log10_nw_param, d0_param_mm, mu_param; /* member parameters; NaN for spectra */
  double nt_m3, lwc_g_m3, rain_rate_mm_h, dm_mm, d0_mm, nw_m3_mm; /* DSD moments */
  double zh_mm6_m3, zh_dbz, zdr_db, kdp_deg_km, ah_db_km, adp_db_km, rhohv;
  int fast;          /* 1: radar variables from the fast path; 0: direct integration */
} rp_relate_sample;

/* Samples of ensemble members m[0..n-1] (index = member index). The DSD of member i is
 * rp_ensemble_member_dsd(m[i]) (default truncation, which must equal the plan's); its
 * moments are computed in closed form (regularised incomplete gamma functions, the
 * clipped Atlas fall law integrated exactly; equal to rp_dsd_moments_eval within
 * 1e-8). Radar variables from rp_gate_fast_eval when fast != NULL and (D0, mu) lies in
 * its grid, else rp_gate_eval with plan. No allocation. *n_direct (may be NULL) gets the
 * number of members integrated directly.
 * Preconditions: plan from rp_gate_plan_alloc; fast (may be NULL) built from the same
 * plan; out has room for n samples (caller-allocated).
 * Returns RP_OK; RP_EINVAL (NULL plan/m/out, n < RP_RELATE_MIN_MEMBERS, a malformed
 * member, a truncation that differs from the plan's); RP_EDOM (a member outside the DSD
 * model's domain, or one with no echo); RP_ENOCONV (the median volume diameter could
 * not be found); RP_EGSL. The message names the member index. */
rp_status rp_relate_ensemble_eval(const rp_gate_plan *plan, const rp_gate_fast *fast,
                                  const rp_ensemble_member *m, size_t n,
                                  rp_relate_sample *out, size_t *n_direct, rp_error *err);

/* Quality filters for measured spectra; a row is removed by the first filter it fails,
 * in this order. */
typedef struct {
  double max_diameter_mm;   /* upper edge of the largest non-empty bin must be <= this
                               (and <= the plan's dmax, whose table ends there) */
  double min_nt_m3;         /* total concentration Nt >= this (0 disables) */
  double min_rain_rate_mm_h;/* R >= this (0 disables) */
} rp_relate_quality;

/* Counts of rows removed by each filter. */
typedef struct {
  size_t n_rows;            /* rows in the file */
  size_t n_empty;           /* every concentration 0 */
  size_t n_large_drop;      /* a non-empty bin beyond max_diameter_mm */
  size_t n_low_nt;          /* Nt below min_nt_m3 */
  size_t n_low_rain;        /* R below min_rain_rate_mm_h */
  size_t n_kept;            /* samples written */
} rp_relate_quality_report;

/* The defaults RP_RELATE_DMAX_DEFAULT_MM, RP_RELATE_NT_MIN_DEFAULT,
 * RP_RELATE_RAIN_MIN_DEFAULT. */
void rp_relate_quality_default(rp_relate_quality *q);

/* Samples of the measured spectra rows[0..n_rows-1] (spectrum DSDs, e.g. the rows of a
 * spectrum file: spectrum.h) that pass the filters q, in row order (index = row,
 * 0-based), into out (room for n_rows entries, caller-allocated);
 * *rep gets the counts. Moments by rp_dsd_moments_eval (RP_RELATE_FALL_MODEL, sea
 * level), radar variables by rp_gate_eval with plan (fast = 0).
 * Returns RP_OK; RP_EINVAL (NULL arguments; a filter value that is NaN or negative;
 * no row passes the filters: the message gives the counts of each filter);
 * RP_EDOM (max_diameter_mm above the plan's dmax); or the status of the DSD and gate
 * functions for a row (message names the row). *rep is filled also on RP_EINVAL for
 * "no valid rows". */
rp_status rp_relate_spectra_eval(const rp_gate_plan *plan, const rp_dsd *rows, size_t n_rows,
                                 const rp_relate_quality *q, rp_relate_sample *out,
                                 rp_relate_quality_report *rep, rp_error *err);

/* Thresholds and choices of the fits. */
typedef struct {
  double zh_min_dbz;      /* relations with Zh, as predictor or predicted variable */
  double kdp_min_deg_km;  /* relations with KDP */
  double zdr_min_db;      /* relations with ZDR */
  int nonlinear;          /* 1: refine each fit by nonlinear least squares on y */
  unsigned relations;     /* bit mask of rp_relate_id to fit */
} rp_relate_options;

/* The default thresholds, log-space fits, every relation. */
void rp_relate_options_default(rp_relate_options *o);

/* One fitted relation. */
typedef struct {
  rp_relate_id id;
  rp_fit_power fit;       /* a, b, c, 95 % intervals, n_fit, resid_sd (fit.h) */
  rp_fit_skill skill;     /* on the held-out samples */
  size_t n_candidates;    /* samples given */
  size_t n_below;         /* samples failing a threshold (or with a variable <= 0) */
  size_t n_held;          /* held-out samples the skill was computed on */
  /* R(Zh) only (NaN otherwise): Zh = z_alpha R^z_beta, the inverted fit
   * (z_alpha = a^(-1/b), z_beta = 1/b). */
  double z_alpha, z_beta;
} rp_relate_fit;

/* Predictors and predicted value of relation id for sample s in the fit's units
 * (x2 = NaN for one-predictor relations). Returns 1 when s passes the relation's
 * thresholds in o and every value used is finite and > 0, else 0 (values still
 * written). NULL arguments give 0. */
int rp_relate_sample_values(rp_relate_id id, const rp_relate_sample *s,
                            const rp_relate_options *o, double *x1, double *x2, double *y);

/* Fit every relation selected in o->relations, in rp_relate_id order, into
 * out[0..*n_out-1] (room for RP_REL_COUNT, caller-allocated). Allocates O(n) scratch
 * (freed before returning).
 * Returns RP_OK; RP_EINVAL (NULL arguments, a threshold that is NaN, an empty
 * selection); RP_ESAMPLES (fewer than RP_FIT_MIN_POINTS fit samples or
 * RP_RELATE_MIN_HELD held-out samples pass a relation's thresholds: the message names the
 * relation, the thresholds and the counts); RP_EDOM (skill undefined: held-out truth or estimate
 * without spread); RP_ENOCONV (nonlinear refinement did not converge); RP_EGSL;
 * RP_ENOMEM; or another status of fit.h with the relation's name prefixed. */
rp_status rp_relate_fit_eval(const rp_relate_sample *s, size_t n, const rp_relate_options *o,
                             rp_relate_fit *out, size_t *n_out, rp_error *err);

/* ---- the whole pipeline: DSDs -> samples -> fits -> skill, one call ------------------ */

typedef enum { RP_RELATE_FROM_ENSEMBLE, RP_RELATE_FROM_SPECTRA } rp_relate_source;

typedef struct {
  rp_relate_source source;
  /* ensemble: n_members drawn from climate with seed (rp_ensemble_draw) */
  const rp_climate *climate;  /* borrowed */
  size_t n_members;
  unsigned long seed;
  /* spectra: rows (spectrum DSDs, borrowed) filtered by quality */
  const rp_dsd *rows;
  size_t n_rows;
  rp_relate_quality quality;
  /* thresholds and the relations to fit */
  rp_relate_options options;
  /* called now and then with the fraction done (may be NULL) */
  rp_progress_fn progress;
  void *progress_ctx;
} rp_relate_request;

/* An ensemble of RP_ENSEMBLE_SIZE_DEFAULT members, seed 1, no climate (set one), the
 * default quality filters and options. */
void rp_relate_request_default(rp_relate_request *r);

typedef struct {
  rp_ensemble_member *members;   /* ensemble members (NULL for spectra) */
  rp_relate_sample *samples;     /* n_samples of them */
  size_t n_samples, n_direct;    /* n_direct: members integrated directly, not by the fast path */
  rp_relate_quality_report report; /* spectra: rows removed by each filter */
  rp_relate_fit fits[RP_REL_COUNT];
  size_t n_fits;
  rp_table_origin origin;        /* where the band's table came from */
} rp_relate_result;

/* Fit the relations of request req at band b of model (its temperature, elevation and
 * |K_w|^2): samples of the ensemble members or of the spectra rows (rp_relate_ensemble_eval
 * with the model's fast path, or rp_relate_spectra_eval), then rp_relate_fit_eval. Caller
 * frees *out with rp_relate_result_free.
 * Statuses: those of the model, the draw and the sample and fit functions; in particular
 * RP_ESAMPLES when too few samples pass a relation's thresholds (an input error: lower the
 * thresholds or give more samples) and RP_EINVAL for "no valid rows" among spectra. */
rp_status rp_relate_run(rp_radar_model *model, int band, const rp_relate_request *req,
                        rp_relate_result **out, rp_error *err);
void rp_relate_result_free(rp_relate_result *r); /* NULL ok */

#endif
