/* ensemble.h — seeded ensembles of normalised-gamma rain DSDs drawn from a "climate":
 * a mixture of clusters (stratiform, convective, ...) in the space of the parameters
 * (log10 Nw, D0, mu) of the normalised gamma DSD in its D0 form (Bringi et al. 2003,
 * J. Atmos. Sci. 60, 354-365; c = 3.67, see dsd.h).
 *
 * A climate is a weighted mixture of up to RP_CLIMATE_MAX_CLUSTERS clusters. In each
 * cluster, (D0, log10 Nw) follow a bivariate normal law given by two means, two
 * standard deviations and one correlation, drawn as
 *   D0       ~ N(m_D, s_D) truncated to [RP_ENSEMBLE_D0_MIN_MM, RP_ENSEMBLE_D0_MAX_MM]
 *   log10 Nw ~ N(m_N + rho s_N (D0 - m_D)/s_D, s_N sqrt(1 - rho^2)) truncated to
 *              [RP_ENSEMBLE_LOG10_NW_MIN, RP_ENSEMBLE_LOG10_NW_MAX]
 * (the conditional normal law; each truncated normal is drawn by inverting its CDF).
 * mu is drawn either from N(mu_mean, mu_sd) truncated to [RP_ENSEMBLE_MU_MIN,
 * RP_ENSEMBLE_MU_MAX], independent of D0 and Nw (RP_MU_GAUSSIAN), or from D0 through
 * the constrained mu-Lambda relation mu = -0.016 Lambda^2 + 1.213 Lambda - 1.957 of
 * Zhang et al. (2001) with Lambda D0 = 3.67 + mu, clipped to the same interval
 * (RP_MU_ZHANG2001). Every member consumes exactly four uniform deviates of its own
 * random stream (seed, member index; rng.h), so the same seed gives bit-identical
 * ensembles for any thread count and member i does not depend on n.
 * Parameters, sources and the reasoning behind each number: docs/method.md §9.
 *
 * Built-in climates (names are ours): "maritime", "continental", "mixed" (default).
 * Climates can also be read from YAML (climate_file.h; examples in
 * dsd-presets/climates/). */
#ifndef RAINPRINT_ENSEMBLE_H
#define RAINPRINT_ENSEMBLE_H

#include <stddef.h>

#include "rainprint/dsd.h"
#include "rainprint/status.h"

/* Default number of members. With 5000 members the standard error of a fitted exponent
 * is small against the physical scatter of the relations (measured: 0.003 for R(Z) with
 * Rayleigh Z on the "mixed" climate, whose ln-residual SD is 0.44), and drawing plus
 * fitting take milliseconds. */
#define RP_ENSEMBLE_SIZE_DEFAULT 5000

/* Truncation of the drawn parameters (every member lies inside). */
#define RP_ENSEMBLE_D0_MIN_MM 0.5
#define RP_ENSEMBLE_D0_MAX_MM 3.5
#define RP_ENSEMBLE_LOG10_NW_MIN 2.0 /* Nw in m^-3 mm^-1 */
#define RP_ENSEMBLE_LOG10_NW_MAX 5.5
#define RP_ENSEMBLE_MU_MIN (-1.0)
#define RP_ENSEMBLE_MU_MAX 12.0

/* Limits checked by rp_climate_validate. */
#define RP_CLIMATE_MAX_CLUSTERS 4
#define RP_CLIMATE_NAME_LEN 64
#define RP_CLIMATE_SD_MAX 1.5      /* largest s_N (decades) and s_D (mm) */
#define RP_CLIMATE_MU_SD_MAX 5.0   /* largest mu_sd */
#define RP_CLIMATE_CORR_MAX 0.95   /* largest |rho| */
#define RP_CLIMATE_WEIGHT_SUM_TOL 1e-3

/* Name of the climate used when none is given. */
#define RP_CLIMATE_DEFAULT "mixed"

typedef enum { RP_MU_GAUSSIAN = 0, RP_MU_ZHANG2001 = 1 } rp_mu_model;

typedef struct {
  char name[RP_CLIMATE_NAME_LEN]; /* "stratiform", "convective-maritime", ... */
  double weight;                  /* probability of the cluster; weights sum to 1 */
  double log10_nw_mean, log10_nw_sd; /* m_N, s_N (Nw in m^-3 mm^-1) */
  double d0_mean_mm, d0_sd_mm;       /* m_D, s_D (mm) */
  double corr_log10_nw_d0;           /* rho, correlation of log10 Nw and D0 */
  double mu_mean, mu_sd;             /* used with RP_MU_GAUSSIAN only */
} rp_climate_cluster;

typedef struct {
  char name[RP_CLIMATE_NAME_LEN];
  rp_mu_model mu_model;
  size_t n_clusters; /* 1 .. RP_CLIMATE_MAX_CLUSTERS */
  rp_climate_cluster clusters[RP_CLIMATE_MAX_CLUSTERS];
} rp_climate;

typedef struct {
  double log10_nw; /* log10 of Nw in m^-3 mm^-1 */
  double d0_mm;    /* median volume diameter parameter D0 (mm) */
  double mu;       /* shape parameter */
  size_t cluster;  /* index of the cluster it was drawn from */
} rp_ensemble_member;

/* Names of the built-in climates, in a static array of *n entries (n may be NULL). */
const char *const *rp_climate_names(size_t *n);

/* Copy the built-in climate called name into *c (mu model RP_MU_GAUSSIAN).
 * Returns RP_OK; RP_EINVAL for NULL arguments or an unknown name (the message lists
 * the known names). *c is unchanged on error. */
rp_status rp_climate_from_name(const char *name, rp_climate *c, rp_error *err);

/* Check a climate: 1..RP_CLIMATE_MAX_CLUSTERS clusters; a valid mu model; every number
 * finite; weights > 0 summing to 1 within RP_CLIMATE_WEIGHT_SUM_TOL; means inside the
 * truncation intervals above; s_N, s_D in (0, RP_CLIMATE_SD_MAX]; |rho| <=
 * RP_CLIMATE_CORR_MAX; and, for RP_MU_GAUSSIAN, mu_sd in [0, RP_CLIMATE_MU_SD_MAX].
 * Returns RP_OK or RP_EINVAL whose message names the cluster (0-based index and name),
 * field and value. */
rp_status rp_climate_validate(const rp_climate *c, rp_error *err);

/* Draw n members from climate c into out[0..n-1] (caller-allocated): member i from the
 * random stream (seed, RP_RNG_ENSEMBLE, i) of rng.h, in parallel (OpenMP). Same (c, seed)
 * -> bit-identical members for any thread count; member i does not depend on n.
 * Allocates only the generator (freed before returning).
 * Returns RP_OK; RP_EINVAL for NULL c/out, n = 0, or a climate rp_climate_validate
 * refuses (its message); RP_ENOMEM. */
rp_status rp_ensemble_draw(const rp_climate *c, size_t n, unsigned long seed,
                           rp_ensemble_member *out, rp_error *err);

/* mu of the constrained mu-Lambda relation (Zhang et al. 2001) for a given D0 (mm):
 * the root of mu = -0.016 L^2 + 1.213 L - 1.957 with L = (3.67 + mu)/D0, i.e. the
 * positive root L of 0.016 L^2 + (D0 - 1.213) L - 1.713 = 0, unclipped.
 * Returns NaN for a D0 that is not finite or <= 0. */
double rp_ensemble_mu_zhang2001(double d0_mm);

/* The normalised-gamma DSD (D0 form) of a member, with the default truncation of dsd.h.
 * Returns RP_OK, RP_EINVAL for NULL arguments, or the status of
 * rp_dsd_normalized_gamma_d0. */
rp_status rp_ensemble_member_dsd(const rp_ensemble_member *m, rp_dsd *d, rp_error *err);

#endif
