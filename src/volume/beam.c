/* beam.c — beam geometry (4/3-earth model) and Gaussian beam sampling.
 *
 * Method: Doviak & Zrnić 1993, eqs. 2.28a/b (from memory) for height and ground range;
 * Gauss–Hermite rules (physicists' weight exp(-x^2)) rescaled to a unit normal weight
 * for the beam pattern. The nodes and weights are the standard tabulated values,
 * checked against GSL's gsl_integration_fixed_hermite in tests/test_beam.c.
 * Invariants: weights of every rule sum to 1 and are symmetric about 0. */
#include "rainprint/beam.h"

#include <math.h>

static const double DEG = M_PI / 180.0;

void rp_beam_geometry(double range_m, double elevation_deg, double *height_m,
                      double *ground_m) {
  const double kea = RP_BEAM_KE * RP_BEAM_EARTH_RADIUS_M;
  const double el = elevation_deg * DEG;
  /* (k_e a + h) written first and h taken as the difference: the sqrt term is ~8.5e6 m
   * and h at 1 m needs only 9 digits, well inside a double. */
  const double kah = sqrt(range_m * range_m + kea * kea + 2.0 * range_m * kea * sin(el));
  const double h = kah - kea;
  if (height_m != NULL) *height_m = h;
  if (ground_m != NULL) *ground_m = kea * asin(range_m * cos(el) / kah);
}

double rp_beam_height_m(double range_m, double elevation_deg) {
  double h;
  rp_beam_geometry(range_m, elevation_deg, &h, NULL);
  return h;
}

double rp_beam_ground_range_m(double range_m, double elevation_deg) {
  double s;
  rp_beam_geometry(range_m, elevation_deg, NULL, &s);
  return s;
}

double rp_beam_sigma_deg(double beamwidth_deg) {
  return beamwidth_deg / (4.0 * sqrt(log(2.0)));
}

/* Physicists' Gauss–Hermite nodes x_i >= 0 and weights (weight exp(-x^2)). */
static const double GH_X[RP_BEAM_SAMPLES_MAX][3] = {
    {0.0, 0, 0},
    {0.7071067811865476, 0, 0},
    {0.0, 1.2247448713915890, 0},
    {0.5246476232752903, 1.6506801238857846, 0},
    {0.0, 0.9585724646138185, 2.0201828704560856}};
static const double GH_W[RP_BEAM_SAMPLES_MAX][3] = {
    {1.7724538509055160, 0, 0},
    {0.8862269254527580, 0, 0},
    {1.1816359006036774, 0.2954089751509193, 0},
    {0.8049140900055128, 0.08131283544724518, 0},
    {0.9453087204829419, 0.3936193231522412, 0.01995324205904591}};

rp_status rp_beam_gauss_hermite(int n, double *offsets, double *weights, rp_error *err) {
  if (offsets == NULL || weights == NULL)
    return rp_error_set(err, RP_EINVAL, "beam samples: NULL output arrays");
  if (n < 1 || n > RP_BEAM_SAMPLES_MAX)
    return rp_error_set(err, RP_EINVAL, "beam samples: %d not in [1, %d]", n,
                        RP_BEAM_SAMPLES_MAX);
  const int half = n / 2;
  const int odd = n % 2;
  const double sqrt_pi = sqrt(M_PI);
  int k = 0;
  /* negative nodes, (centre), positive nodes: offsets in increasing order */
  for (int i = half - 1 + odd; i >= odd; i--, k++) {
    offsets[k] = -M_SQRT2 * GH_X[n - 1][i];
    weights[k] = GH_W[n - 1][i] / sqrt_pi;
  }
  if (odd) {
    offsets[k] = 0.0;
    weights[k] = GH_W[n - 1][0] / sqrt_pi;
    k++;
  }
  for (int i = odd; i < half + odd; i++, k++) {
    offsets[k] = M_SQRT2 * GH_X[n - 1][i];
    weights[k] = GH_W[n - 1][i] / sqrt_pi;
  }
  return RP_OK;
}
