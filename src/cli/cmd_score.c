/* cmd_score.c — `rainprint score`: a retrieval on the grid of a volume against the truth
 * stored in the volume: gates compared, bias, normalised bias, RMSE, correlation, by range
 * or by intensity if asked, and a scatter-density picture with the 1:1 line.
 *
 * No numerics here: the volume reader (io/volume_file.c) and the scores
 * (volume/score.c) do the work. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "rainprint/figure.h"
#include "rainprint/score.h"
#include "rainprint/volume_file.h"

#define CMD "score"
#define BINS_MAX 50

static const char *const by_names[] = {"range", "intensity"};

static const rp_opts_spec score_opts[] = {
    RP_OPTS_STRING_ROW("field", "NAME", "the retrieval's field in RETRIEVAL.nc (required)"),
    RP_OPTS_STRING_ROW("against", "TRUTHNAME", "the truth field in TRUTH.nc, e.g. "
                       "truth_rain_rate_mm_h (required)"),
    RP_OPTS_ENUM_ROW("by", "WHAT", "scores also in bins of range or of the true value",
                     by_names, NULL),
    RP_OPTS_LONG_ROW("bins", "N", "number of bins for --by", 2, BINS_MAX, RP_OPTS_RANGED, "5"),
    RP_OPTS_STRING_ROW("plot", "FILE.png", "scatter density of retrieval against truth with "
                       "the 1:1 line (.png, .svg or .pdf)"),
    RP_OPTS_FLAG_ROW("json", "machine-readable output"),
    RP_OPTS_END};

static const rp_opts_command score_cmd = {
    .cmd = CMD,
    .usage = "score TRUTH.nc RETRIEVAL.nc --field NAME --against TRUTHNAME [--json] [--plot FILE.png]",
    .about = "Compare a retrieval with the truth of a synthetic volume: RETRIEVAL.nc holds the\n"
             "retrieval on the same grid (the same time and range dimensions as TRUTH.nc, e.g.\n"
             "TRUTH.nc itself with a field added); gates where both are finite are compared.\n"
             "Prints the count, bias (retrieval - truth), normalised bias 100 bias / mean\n"
             "truth (%), RMSE and the Pearson correlation, optionally in bins of range or of\n"
             "the true value.",
    .examples = "  rainprint scene examples/valley-squall-line/scene.yaml --out squall.nc\n"
                "  rainprint score squall.nc squall.nc --field truth_rain_rate_mm_h --against truth_rain_rate_mm_h",
    .tables = {score_opts},
    .titles = {"Options"},
    .max_positional = 2,
    .positional = "TRUTH.nc RETRIEVAL.nc",
};

static json_t *score_json(const rp_score *s) {
  return json_pack("{s:I, s:o, s:o, s:o, s:o, s:o, s:o}", "n", (json_int_t)s->count, "bias",
                   rp_json_real(s->bias), "normalized_bias_pct", rp_json_real(s->nbias_pct),
                   "rmse", rp_json_real(s->rmse), "corr", rp_json_real(s->corr), "mean_truth",
                   rp_json_real(s->mean_truth), "mean_retrieval", rp_json_real(s->mean_retrieval));
}

typedef struct {
  double *truth, *retr, *key;
  size_t n;
  char truth_units[64], retr_units[64];
} score_data;

static void data_free(score_data *d) {
  free(d->truth);
  free(d->retr);
  free(d->key);
}

static int read_pair(const rp_volume_reader *t, const rp_volume_reader *r, const char *tname,
                     const char *rname, score_data *d) {
  rp_error err = {0};
  const size_t n = rp_volume_file_rays(t) * rp_volume_file_gates(t);
  d->n = n;
  d->truth = malloc(n * sizeof *d->truth);
  d->retr = malloc(n * sizeof *d->retr);
  d->key = malloc(n * sizeof *d->key);
  if (!d->truth || !d->retr || !d->key) return rp_cli_fail(CMD, RP_ENOMEM, "out of memory");
  if (rp_volume_file_read_field(t, tname, d->truth, d->truth_units, sizeof d->truth_units, &err) != RP_OK ||
      rp_volume_file_read_field(r, rname, d->retr, d->retr_units, sizeof d->retr_units, &err) != RP_OK)
    return rp_cli_fail_err(CMD, &err);
  return 0;
}

/* Bin edges: range from the first to the last gate centre; intensity from the finite
 * truth's minimum to maximum; n equal bins. */
static void bin_edges(const score_data *d, const rp_volume_reader *t, int by_range, size_t nb,
                      double *edges) {
  double lo = INFINITY, hi = -INFINITY;
  const size_t ng = rp_volume_file_gates(t);
  const double *range_m = rp_volume_file_range_m(t);
  for (size_t i = 0; i < d->n; i++) {
    d->key[i] = by_range ? 1e-3 * range_m[i % ng] : d->truth[i];
    if (isfinite(d->key[i]) && isfinite(d->retr[i]) && isfinite(d->truth[i])) {
      lo = fmin(lo, d->key[i]);
      hi = fmax(hi, d->key[i]);
    }
  }
  if (!(lo < hi)) {
    lo = isfinite(lo) ? lo - 0.5 : 0.0;
    hi = lo + 1.0;
  }
  for (size_t k = 0; k <= nb; k++) edges[k] = lo + (hi - lo) * (double)k / (double)nb;
  edges[nb] = nextafter(hi, INFINITY); /* the largest value falls in the last bin */
}

int rp_cmd_score(int argc, char **argv) {
  rp_opts o;
  int rc = rp_opts_parse(&score_cmd, argc, argv, &o);
  if (rc != RP_OPTS_GO_ON) return rc;
  if (o.n_pos != 2) return rp_cli_fail(CMD, RP_EINVAL, "give TRUTH.nc and RETRIEVAL.nc (see --help)");
  if ((rc = rp_opts_required(&o, "field")) || (rc = rp_opts_required(&o, "against"))) return rc;
  if ((rc = rp_opts_requires(&o, "bins", "by"))) return rc;
  const char *plot = rp_opts_string(&o, "plot", NULL);
  if ((rc = rp_cli_check_outputs(CMD, NULL, plot))) return rc;
  const char *rname = rp_opts_string(&o, "field", NULL), *tname = rp_opts_string(&o, "against", NULL);
  const int json = rp_opts_given(&o, "json");

  rp_error err = {0};
  rp_volume_reader *t = NULL, *r = NULL;
  if (rp_volume_file_open(o.pos[0], &t, &err) != RP_OK) return rp_cli_fail_err(CMD, &err);
  if (rp_volume_file_open(o.pos[1], &r, &err) != RP_OK) {
    rp_volume_file_close(t);
    return rp_cli_fail_err(CMD, &err);
  }
  score_data d;
  memset(&d, 0, sizeof d);
  rp_score s;
  if (rp_volume_file_same_grid(t, r, &err) != RP_OK)
    rc = rp_cli_fail_err(CMD, &err);
  else
    rc = read_pair(t, r, tname, rname, &d);
  if (rc == 0 && rp_score_compute(d.retr, d.truth, d.n, &s, &err) != RP_OK)
    rc = rp_cli_fail_err(CMD, &err);
  rp_score bins[BINS_MAX];
  double edges[BINS_MAX + 1];
  const int have_by = rp_opts_given(&o, "by");
  const size_t nb = (size_t)rp_opts_long(&o, "bins", 5);
  const int by_range = rp_opts_enum(&o, "by", 0) == 0;
  if (rc == 0 && have_by) {
    bin_edges(&d, t, by_range, nb, edges);
    if (rp_score_bins(d.retr, d.truth, d.key, d.n, edges, nb + 1, bins, &err) != RP_OK)
      rc = rp_cli_fail_err(CMD, &err);
  }
  if (rc == 0 && plot != NULL) {
    double lo = INFINITY, hi = -INFINITY;
    size_t m = 0;
    for (size_t i = 0; i < d.n; i++)
      if (isfinite(d.truth[i]) && isfinite(d.retr[i])) {
        d.truth[m] = d.truth[i];
        d.retr[m] = d.retr[i];
        lo = fmin(lo, fmin(d.truth[m], d.retr[m]));
        hi = fmax(hi, fmax(d.truth[m], d.retr[m]));
        m++;
      }
    rp_figure_series ser = {"gates", d.truth, d.retr, m, RP_FIGURE_STYLE_MARKERS};
    char xl[128], yl[128], sub[256], title[256];
    snprintf(xl, sizeof xl, "%s (%s)", tname, d.truth_units[0] ? d.truth_units : "1");
    snprintf(yl, sizeof yl, "%s (%s)", rname, d.retr_units[0] ? d.retr_units : "1");
    snprintf(title, sizeof title, "%s against %s", rname, tname);
    snprintf(sub, sizeof sub, "n %zu, bias %.4g, normalised bias %.3g %%, RMSE %.4g, corr %.4f",
             s.count, s.bias, s.nbias_pct, s.rmse, s.corr);
    rp_figure_panel p;
    memset(&p, 0, sizeof p);
    p.kind = RP_FIGURE_SCATTER;
    p.title = title;
    p.subtitle = sub;
    p.xlabel = xl;
    p.ylabel = yl;
    p.xy.series = &ser;
    p.xy.n_series = 1;
    p.xy.one_to_one = 1;
    const char *src = strrchr(o.pos[0], '/') ? strrchr(o.pos[0], '/') + 1 : o.pos[0];
    rp_figure fig = {"retrieval against truth", src, &p, 1, 1, 820, 820};
    if (m < 2)
      rc = rp_cli_fail(CMD, RP_EINVAL, "--plot: fewer than 2 gates have both values");
    else if (rp_figure_write(plot, &fig, &err) != RP_OK)
      rc = rp_cli_fail(CMD, err.status, "--plot: %s", err.msg);
  }
  if (rc == 0) {
    if (json) {
      json_t *j = score_json(&s);
      json_object_set_new(j, "field", rp_json_text(rname));
      json_object_set_new(j, "against", rp_json_text(tname));
      json_object_set_new(j, "truth_file", rp_json_text(o.pos[0]));
      json_object_set_new(j, "retrieval_file", rp_json_text(o.pos[1]));
      if (have_by) {
        json_t *arr = json_array();
        for (size_t k = 0; k < nb; k++) {
          json_t *b = score_json(&bins[k]);
          json_object_set_new(b, "from", rp_json_real(edges[k]));
          json_object_set_new(b, "to", rp_json_real(edges[k + 1]));
          json_array_append_new(arr, b);
        }
        json_object_set_new(j, "by", json_string(by_names[by_range ? 0 : 1]));
        json_object_set_new(j, "bin_units", json_string(by_range ? "km" : d.truth_units));
        json_object_set_new(j, "bins", arr);
      }
      rc = rp_json_print(j);
    } else {
      printf("Score of %s (%s) against %s (%s)\n", rname, o.pos[1], tname, o.pos[0]);
      printf("  gates compared      %zu\n", s.count);
      printf("  bias                %.6g %s\n", s.bias, d.truth_units);
      printf("  normalised bias     %.4g %%\n", s.nbias_pct);
      printf("  RMSE                %.6g %s\n", s.rmse, d.truth_units);
      printf("  correlation         %.6f\n", s.corr);
      printf("  mean truth          %.6g, mean retrieval %.6g\n", s.mean_truth, s.mean_retrieval);
      if (have_by) {
        printf("\n  %-22s %8s %11s %9s %11s %9s\n", by_range ? "range (km)" : "true value", "n",
               "bias", "nbias %", "rmse", "corr");
        for (size_t k = 0; k < nb; k++) {
          char lab[48];
          snprintf(lab, sizeof lab, "%.4g - %.4g", edges[k], edges[k + 1]);
          printf("  %-22s %8zu %11.4g %9.3g %11.4g %9.4f\n", lab, bins[k].count, bins[k].bias,
                 bins[k].nbias_pct, bins[k].rmse, bins[k].corr);
        }
      }
    }
  }
  data_free(&d);
  rp_volume_file_close(t);
  rp_volume_file_close(r);
  return rc;
}
