/* score.c — verification statistics of a retrieval against the truth (score.h).
 *
 * Method: two passes, means first, then centred sums in long double (the textbook
 * two-pass algorithm; a single pass of raw sums loses digits for fields like dBZ whose
 * variance is small against their mean). Pearson correlation from the centred sums.
 * Invariants: only pairs with both values finite count. */
#include "rainprint/score.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

static int pair_ok(double r, double t) { return isfinite(r) && isfinite(t); }

/* scores over the pairs i with sel == NULL or sel[i] == b */
static void score_sel(const double *r, const double *t, size_t n, const size_t *sel, size_t b,
                      rp_score *out) {
  long double sr = 0, st = 0;
  size_t c = 0;
  for (size_t i = 0; i < n; i++) {
    if ((sel != NULL && sel[i] != b) || !pair_ok(r[i], t[i])) continue;
    sr += r[i];
    st += t[i];
    c++;
  }
  memset(out, 0, sizeof *out);
  out->count = c;
  if (c == 0) {
    out->bias = out->nbias_pct = out->rmse = out->corr = NAN;
    out->mean_truth = out->mean_retrieval = NAN;
    return;
  }
  const long double mr = sr / (long double)c, mt = st / (long double)c;
  long double srr = 0, stt = 0, srt = 0, sd2 = 0;
  for (size_t i = 0; i < n; i++) {
    if ((sel != NULL && sel[i] != b) || !pair_ok(r[i], t[i])) continue;
    const long double a = r[i] - mr, q = t[i] - mt, d = (long double)r[i] - t[i];
    srr += a * a;
    stt += q * q;
    srt += a * q;
    sd2 += d * d;
  }
  out->mean_retrieval = (double)mr;
  out->mean_truth = (double)mt;
  out->bias = (double)(mr - mt);
  out->nbias_pct = st != 0 ? (double)(100.0L * (sr - st) / st) : (double)NAN;
  out->rmse = (double)sqrtl(sd2 / (long double)c);
  out->corr = (srr > 0 && stt > 0) ? (double)(srt / sqrtl(srr * stt)) : (double)NAN;
}

rp_status rp_score_compute(const double *r, const double *t, size_t n, rp_score *out,
                           rp_error *err) {
  if (r == NULL || t == NULL || out == NULL)
    return rp_error_set(err, RP_EINVAL, "score: NULL argument");
  score_sel(r, t, n, NULL, 0, out);
  return RP_OK;
}

rp_status rp_score_bins(const double *r, const double *t, const double *key, size_t n,
                        const double *edges, size_t n_edges, rp_score *out, rp_error *err) {
  if (r == NULL || t == NULL || key == NULL || edges == NULL || out == NULL)
    return rp_error_set(err, RP_EINVAL, "score bins: NULL argument");
  if (n_edges < 2) return rp_error_set(err, RP_EINVAL, "score bins: %zu edges (need >= 2)", n_edges);
  for (size_t b = 0; b + 1 < n_edges; b++)
    if (!(edges[b + 1] > edges[b]))
      return rp_error_set(err, RP_EINVAL, "score bins: edges %zu and %zu (%g, %g) not increasing",
                          b, b + 1, edges[b], edges[b + 1]);
  const size_t nb = n_edges - 1;
  size_t *sel = malloc((n > 0 ? n : 1) * sizeof *sel);
  if (sel == NULL) return rp_error_set(err, RP_ENOMEM, "score bins: out of memory");
  for (size_t i = 0; i < n; i++) {
    sel[i] = nb; /* outside every bin */
    const double k = key[i];
    if (!(k >= edges[0] && k < edges[nb])) continue;
    size_t lo = 0, hi = nb; /* edges[lo] <= k < edges[hi] */
    while (hi - lo > 1) {
      const size_t mid = (lo + hi) / 2;
      if (k >= edges[mid]) lo = mid; else hi = mid;
    }
    sel[i] = lo;
  }
  for (size_t b = 0; b < nb; b++) score_sel(r, t, n, sel, b, &out[b]);
  free(sel);
  return RP_OK;
}

rp_status rp_score_density(const double *r, const double *t, size_t n, double xmin,
                           double xmax, size_t nx, double ymin, double ymax, size_t ny,
                           size_t *counts, rp_error *err) {
  if (r == NULL || t == NULL || counts == NULL)
    return rp_error_set(err, RP_EINVAL, "score density: NULL argument");
  if (nx == 0 || ny == 0 || !(xmax > xmin) || !(ymax > ymin))
    return rp_error_set(err, RP_EINVAL,
                        "score density: bins %zu x %zu over [%g, %g) x [%g, %g) are empty", nx,
                        ny, xmin, xmax, ymin, ymax);
  memset(counts, 0, nx * ny * sizeof *counts);
  for (size_t i = 0; i < n; i++) {
    if (!pair_ok(r[i], t[i])) continue;
    const double fx = (t[i] - xmin) / (xmax - xmin) * (double)nx;
    const double fy = (r[i] - ymin) / (ymax - ymin) * (double)ny;
    if (!(fx >= 0 && fx < (double)nx && fy >= 0 && fy < (double)ny)) continue;
    counts[(size_t)fy * nx + (size_t)fx]++;
  }
  return RP_OK;
}
