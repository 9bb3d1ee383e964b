/* score.h — a retrieval field against a truth field on the same grid: count, bias,
 * normalised bias, RMSE and correlation, overall and by bins of another quantity
 * (range, or the truth itself), and the 2-D histogram of a scatter-density picture.
 *
 * Over the n gates where both values are finite:
 *   bias      = mean(r - t)
 *   nbias_pct = 100 sum(r - t) / sum(t)
 *   rmse      = sqrt(mean((r - t)^2))
 *   corr      = Pearson correlation of r and t (NaN when either has zero variance)
 * Sums are accumulated in long double about the means (two passes) for stability. */
#ifndef RAINPRINT_SCORE_H
#define RAINPRINT_SCORE_H

#include <stddef.h>

#include "rainprint/status.h"

typedef struct {
  size_t count;
  double bias, nbias_pct, rmse, corr;
  double mean_truth, mean_retrieval;
} rp_score;

/* Scores of retrieval r against truth t (n values each; NaN = missing).
 * Statuses: RP_EINVAL (NULL). With count 0 every statistic is NaN (RP_OK). */
rp_status rp_score_compute(const double *r, const double *t, size_t n, rp_score *out,
                           rp_error *err);

/* Scores by bins of key[i] (e.g. range or the truth): bin b holds edges[b] <= key <
 * edges[b + 1], n_bins = n_edges - 1, out has n_bins entries. Statuses: RP_EINVAL
 * (NULL, fewer than 2 edges, edges not increasing), RP_ENOMEM. */
rp_status rp_score_bins(const double *r, const double *t, const double *key, size_t n,
                        const double *edges, size_t n_edges, rp_score *out, rp_error *err);

/* Scatter density: counts[iy * nx + ix] of pairs with truth in bin ix of [xmin, xmax)
 * (nx bins) and retrieval in bin iy of [ymin, ymax) (ny bins); pairs outside are not
 * counted. Statuses: RP_EINVAL (NULL, nx or ny 0, xmin >= xmax, ymin >= ymax). */
rp_status rp_score_density(const double *r, const double *t, size_t n, double xmin,
                           double xmax, size_t nx, double ymin, double ymax, size_t ny,
                           size_t *counts, rp_error *err);

#endif
