/* drop.c — one raindrop as the radar sees it: permittivity and axis ratio from the
 * drop physics, particle-frame amplitudes from T-matrix / Rayleigh–Gans / Mie, turned
 * into h/v amplitudes in the backscatter alignment and averaged over canting.
 *
 * Geometry and distributions are stated in include/rainprint/drop.h and
 * docs/method.md ("Orientation averaging"). The averages are quadratures of the exact
 * amplitudes: Gauss–Legendre in the tilt angle beta on [0, min(6 sigma, 90 deg)] (the
 * integrands are even in beta, or mirror-symmetric in phi for the 3-D model) and the
 * midpoint rule in the azimuth phi on [0, pi] (periodic and even in phi, so the rule
 * converges geometrically). */
#include "rainprint/drop.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include <gsl/gsl_integration.h>

#include "rainprint/mie.h"
#include "rainprint/permittivity.h"
#include "rainprint/rayleigh.h"
#include "rainprint/tmatrix.h"

#define DEG (M_PI / 180.0)
#define N_BETA 16        /* Gauss–Legendre nodes in beta (test_drop checks them against closed forms) */
#define N_PHI 6          /* midpoint nodes in phi on [0, pi] for the 3-D model */
#define BETA_SPAN_SD 6.0 /* truncate at 6 sigma: neglected mass 2e-9, 1e-7 of <beta^2> */
#define MAX_ORIENT (N_BETA * N_PHI)

struct rp_drop_ws {
  rp_drop_config cfg;
  rp_tmatrix_ws *tm;
  size_t n_orient;
  double axis[MAX_ORIENT][3]; /* symmetry-axis directions in the lab frame */
  double weight[MAX_ORIENT];  /* normalised quadrature weights */
};

static const struct {
  const char *name;
  double freq_ghz;
} bands[] = {{"S", 2.8}, {"C", 5.6}, {"X", 9.4}, {"Ku", 13.6}, {"Ka", 35.0}};

rp_status rp_band_frequency_ghz(const char *band, double *freq_ghz, rp_error *err) {
  if (band != NULL) {
    for (size_t i = 0; i < sizeof bands / sizeof bands[0]; i++) {
      if (strcasecmp(band, bands[i].name) == 0) {
        *freq_ghz = bands[i].freq_ghz;
        return RP_OK;
      }
    }
  }
  return rp_error_set(err, RP_EINVAL, "unknown band '%s' (expected S, C, X, Ku or Ka)",
                      band ? band : "(null)");
}

const char *rp_band_of_frequency(double freq_ghz) {
  for (size_t i = 0; i < sizeof bands / sizeof bands[0]; i++) {
    if (fabs(freq_ghz - bands[i].freq_ghz) < 1e-9) return bands[i].name;
  }
  return NULL;
}

static const char *const method_names[RP_METHOD_COUNT] = {"tmatrix", "rayleigh", "mie"};
static const char *const canting_names[RP_CANTING_COUNT] = {"planar", "3d"};

const char *rp_method_name(rp_method m) {
  return (m >= 0 && m < RP_METHOD_COUNT) ? method_names[m] : "unknown";
}

rp_status rp_method_from_name(const char *name, rp_method *m, rp_error *err) {
  for (int i = 0; name != NULL && i < RP_METHOD_COUNT; i++) {
    if (strcmp(name, method_names[i]) == 0) {
      *m = (rp_method)i;
      return RP_OK;
    }
  }
  return rp_error_set(err, RP_EINVAL, "unknown method '%s' (expected tmatrix, rayleigh or mie)",
                      name ? name : "(null)");
}

const char *rp_canting_model_name(rp_canting_model c) {
  return (c >= 0 && c < RP_CANTING_COUNT) ? canting_names[c] : "unknown";
}

rp_status rp_canting_model_from_name(const char *name, rp_canting_model *c, rp_error *err) {
  for (int i = 0; name != NULL && i < RP_CANTING_COUNT; i++) {
    if (strcmp(name, canting_names[i]) == 0) {
      *c = (rp_canting_model)i;
      return RP_OK;
    }
  }
  return rp_error_set(err, RP_EINVAL, "unknown canting model '%s' (expected planar or 3d)",
                      name ? name : "(null)");
}

void rp_drop_config_default(rp_drop_config *cfg) {
  memset(cfg, 0, sizeof *cfg);
  cfg->freq_ghz = 5.6;
  cfg->temp_c = 10.0;
  cfg->shape = RP_SHAPE_DEFAULT;
  cfg->axis_ratio_fixed = 0.0;
  cfg->canting_sd_deg = RP_CANTING_SD_DEFAULT_DEG;
  cfg->canting_model = RP_CANTING_PLANAR;
  cfg->canting_approx = 0;
  cfg->elevation_deg = 0.0;
  cfg->method = RP_METHOD_TMATRIX;
}

rp_status rp_drop_config_check(const rp_drop_config *cfg, rp_error *err) {
  if (!(isfinite(cfg->freq_ghz) && cfg->freq_ghz >= 1.0 && cfg->freq_ghz <= 100.0))
    return rp_error_set(err, RP_EDOM, "frequency %g GHz outside [1, 100] GHz", cfg->freq_ghz);
  double complex eps;
  RP_TRY(rp_water_permittivity(cfg->freq_ghz, cfg->temp_c, &eps, err));
  if (cfg->shape < 0 || cfg->shape >= RP_SHAPE_COUNT)
    return rp_error_set(err, RP_EINVAL, "unknown shape model %d", (int)cfg->shape);
  if (!(isfinite(cfg->axis_ratio_fixed) && cfg->axis_ratio_fixed >= 0.0 &&
        cfg->axis_ratio_fixed <= 3.0) ||
      (cfg->axis_ratio_fixed > 0.0 && cfg->axis_ratio_fixed < 0.3))
    return rp_error_set(err, RP_EDOM, "axis ratio %g outside [0.3, 3]", cfg->axis_ratio_fixed);
  if (!(isfinite(cfg->canting_sd_deg) && cfg->canting_sd_deg >= 0.0 &&
        cfg->canting_sd_deg <= 45.0))
    return rp_error_set(err, RP_EDOM, "canting standard deviation %g deg outside [0, 45] deg",
                        cfg->canting_sd_deg);
  if (cfg->canting_model < 0 || cfg->canting_model >= RP_CANTING_COUNT)
    return rp_error_set(err, RP_EINVAL, "unknown canting model %d", (int)cfg->canting_model);
  if (cfg->canting_approx && cfg->canting_model != RP_CANTING_PLANAR)
    return rp_error_set(err, RP_EINVAL,
                        "the angular-moment approximation is implemented for planar canting only");
  if (!(isfinite(cfg->elevation_deg) && cfg->elevation_deg >= 0.0 && cfg->elevation_deg <= 90.0))
    return rp_error_set(err, RP_EDOM, "elevation %g deg outside [0, 90] deg", cfg->elevation_deg);
  if (cfg->method < 0 || cfg->method >= RP_METHOD_COUNT)
    return rp_error_set(err, RP_EINVAL, "unknown method %d", (int)cfg->method);
  return RP_OK;
}

/* ---- geometry ----------------------------------------------------------------- */

static double dot3(const double a[3], const double b[3]) {
  return a[0] * b[0] + a[1] * b[1] + a[2] * b[2];
}

void rp_drop_radar_vectors(double elevation_deg, double k_inc[3], double h[3], double v[3]) {
  const double ce = cos(elevation_deg * DEG), se = sin(elevation_deg * DEG);
  k_inc[0] = ce, k_inc[1] = 0.0, k_inc[2] = se;
  h[0] = 0.0, h[1] = 1.0, h[2] = 0.0;
  v[0] = -se, v[1] = 0.0, v[2] = ce;
}

/* Orthonormal particle frame (e1, e2, e3 = axis), right-handed; the identity for a
 * vertical axis. Any rotation about the axis is equivalent for an axisymmetric drop. */
static void particle_frame(const double axis[3], double e[3][3]) {
  const double t[3] = {fabs(axis[0]) < 0.9 ? 1.0 : 0.0, fabs(axis[0]) < 0.9 ? 0.0 : 1.0, 0.0};
  const double ta = dot3(t, axis);
  double e1[3] = {t[0] - ta * axis[0], t[1] - ta * axis[1], t[2] - ta * axis[2]};
  const double n1 = sqrt(dot3(e1, e1));
  for (int i = 0; i < 3; i++) e1[i] /= n1;
  e[0][0] = e1[0], e[0][1] = e1[1], e[0][2] = e1[2];
  e[1][0] = axis[1] * e1[2] - axis[2] * e1[1];
  e[1][1] = axis[2] * e1[0] - axis[0] * e1[2];
  e[1][2] = axis[0] * e1[1] - axis[1] * e1[0];
  e[2][0] = axis[0], e[2][1] = axis[1], e[2][2] = axis[2];
}

static void to_particle(const double e[3][3], const double u[3], double out[3]) {
  for (int i = 0; i < 3; i++) out[i] = dot3(e[i], u);
}

/* f_pq = e_p . E_s for E_i = e_q, with the particle-frame matrix s in the
 * (theta-hat, phi-hat) bases of k_inc and k_sca (see scatter.h). */
static void hv_from_particle(rp_amplitude_fn amp, const void *ctx, const double e[3][3],
                             const double k_inc_lab[3], const double k_sca_lab[3],
                             const double pol_lab[2][3], double complex f[2][2]) {
  double ki[3], ks[3], pol[2][3];
  to_particle(e, k_inc_lab, ki);
  to_particle(e, k_sca_lab, ks);
  to_particle(e, pol_lab[0], pol[0]);
  to_particle(e, pol_lab[1], pol[1]);
  double complex s[2][2];
  amp(ctx, ki, ks, s);
  double bi[2][3], bs[2][3];
  rp_scatter_basis(ki, bi[0], bi[1]);
  rp_scatter_basis(ks, bs[0], bs[1]);
  for (int p = 0; p < 2; p++) {
    for (int q = 0; q < 2; q++) {
      double complex acc = 0.0;
      for (int a = 0; a < 2; a++) {
        for (int b = 0; b < 2; b++) acc += dot3(pol[p], bs[a]) * s[a][b] * dot3(bi[b], pol[q]);
      }
      f[p][q] = acc;
    }
  }
}

void rp_drop_hv_amplitudes(rp_amplitude_fn amp, const void *ctx, const double axis[3],
                           double elevation_deg, double complex back[2][2],
                           double complex fwd[2][2]) {
  double k[3], pol[2][3], e[3][3];
  rp_drop_radar_vectors(elevation_deg, k, pol[0], pol[1]);
  particle_frame(axis, e);
  const double k_back[3] = {-k[0], -k[1], -k[2]};
  hv_from_particle(amp, ctx, e, k, k_back, (const double(*)[3])pol, back);
  hv_from_particle(amp, ctx, e, k, k, (const double(*)[3])pol, fwd);
}

/* ---- orientation quadrature ---------------------------------------------------- */

/* Weight of the tilt angle beta in [0, 90] deg, before the sin(beta) of the 3-D model.
 * An axis and its opposite are the same orientation of a spheroid, so the Gaussian is
 * folded onto [0, 90] deg:
 *   planar: beta is an angle in a plane and beta + k*180 deg are the same orientation,
 *     so the images beta + k pi are summed (wrapped Gaussian; k = -2..2 is exhaustive
 *     for sigma <= 45 deg);
 *   3-D: beta is a polar angle in [0, 180] deg on the sphere, so the only image is the
 *     opposite axis at pi - beta (there is no tilt beyond 180 deg to wrap). */
static double folded_gaussian(double beta, double sigma, rp_canting_model model) {
  const double s2 = 2.0 * sigma * sigma, bo = M_PI - beta;
  if (model == RP_CANTING_3D) return exp(-beta * beta / s2) + exp(-bo * bo / s2);
  double sum = 0.0;
  for (int k = -2; k <= 2; k++) {
    const double b = beta + (double)k * M_PI;
    sum += exp(-b * b / s2);
  }
  return sum;
}

static int build_orientations(rp_drop_ws *ws) {
  const rp_drop_config *c = &ws->cfg;
  const double sigma = c->canting_sd_deg * DEG;
  if (sigma == 0.0 || c->canting_approx) {
    ws->n_orient = 1;
    ws->axis[0][0] = 0.0, ws->axis[0][1] = 0.0, ws->axis[0][2] = 1.0;
    ws->weight[0] = 1.0;
    return 0;
  }
  const double beta_max = fmin(BETA_SPAN_SD * sigma, M_PI / 2.0);
  gsl_integration_glfixed_table *gl = gsl_integration_glfixed_table_alloc(N_BETA);
  if (gl == NULL) return -1;
  const size_t n_phi = (c->canting_model == RP_CANTING_3D) ? N_PHI : 1;
  double total = 0.0;
  size_t k = 0;
  for (size_t i = 0; i < N_BETA; i++) {
    double beta, w;
    gsl_integration_glfixed_point(0.0, beta_max, i, &beta, &w, gl);
    w *= folded_gaussian(beta, sigma, c->canting_model);
    if (c->canting_model == RP_CANTING_3D) w *= sin(beta);
    for (size_t j = 0; j < n_phi; j++) {
      if (c->canting_model == RP_CANTING_3D) {
        const double phi = M_PI * ((double)j + 0.5) / (double)n_phi;
        ws->axis[k][0] = sin(beta) * cos(phi);
        ws->axis[k][1] = sin(beta) * sin(phi);
      } else {
        ws->axis[k][0] = 0.0;
        ws->axis[k][1] = sin(beta);
      }
      ws->axis[k][2] = cos(beta);
      ws->weight[k] = w;
      total += w;
      k++;
    }
  }
  gsl_integration_glfixed_table_free(gl);
  for (size_t i = 0; i < k; i++) ws->weight[i] /= total;
  ws->n_orient = k;
  return 0;
}

rp_drop_ws *rp_drop_ws_alloc(const rp_drop_config *cfg) {
  /* an unchecked config (a NaN canting SD or elevation) would give NaN weights and
   * silently NaN averages */
  if (cfg == NULL || rp_drop_config_check(cfg, NULL) != RP_OK) return NULL;
  rp_drop_ws *ws = calloc(1, sizeof *ws);
  if (ws == NULL) return NULL;
  ws->cfg = *cfg;
  if (cfg->method == RP_METHOD_TMATRIX) {
    ws->tm = rp_tmatrix_ws_alloc(rp_tmatrix_opts_default().nmax_limit);
    if (ws->tm == NULL) goto fail;
  }
  if (build_orientations(ws) != 0) goto fail;
  return ws;
fail:
  rp_drop_ws_free(ws);
  return NULL;
}

void rp_drop_ws_free(rp_drop_ws *ws) {
  if (ws == NULL) return;
  rp_tmatrix_ws_free(ws->tm);
  free(ws);
}

/* ---- averaging ----------------------------------------------------------------- */

static void accumulate(rp_drop_moments *m, double w, double complex back[2][2],
                       double complex fwd[2][2]) {
  const double complex hh = back[0][0], vv = back[1][1], hv = back[0][1];
  m->back_hh2_mm2 += w * (creal(hh) * creal(hh) + cimag(hh) * cimag(hh));
  m->back_vv2_mm2 += w * (creal(vv) * creal(vv) + cimag(vv) * cimag(vv));
  m->back_hv2_mm2 += w * (creal(hv) * creal(hv) + cimag(hv) * cimag(hv));
  m->back_hhvv_mm2 += w * hh * conj(vv);
  m->fwd_hh_mm += w * fwd[0][0];
  m->fwd_vv_mm += w * fwd[1][1];
}

/* Angular-moment approximation: the zero-canting principal amplitudes fa (h) and fb (v)
 * rotated by a planar Gaussian canting angle, with <cos 2b> = exp(-2 s^2) and
 * <cos 4b> = exp(-8 s^2) for the untruncated Gaussian. */
static void angular_moments(double sigma_rad, double complex back[2][2],
                            double complex fwd[2][2], rp_drop_moments *m) {
  const double c2 = exp(-2.0 * sigma_rad * sigma_rad), c4 = exp(-8.0 * sigma_rad * sigma_rad);
  const double cos4 = (3.0 + 4.0 * c2 + c4) / 8.0, sin4 = (3.0 - 4.0 * c2 + c4) / 8.0;
  const double sc2 = (1.0 - c4) / 8.0, cos2 = (1.0 + c2) / 2.0, sin2 = (1.0 - c2) / 2.0;
  const double complex fa = back[0][0], fb = back[1][1];
  const double a2 = creal(fa * conj(fa)), b2 = creal(fb * conj(fb));
  const double ab = creal(fa * conj(fb));
  m->back_hh2_mm2 = a2 * cos4 + b2 * sin4 + 2.0 * ab * sc2;
  m->back_vv2_mm2 = a2 * sin4 + b2 * cos4 + 2.0 * ab * sc2;
  m->back_hv2_mm2 = creal((fa - fb) * conj(fa - fb)) * sc2;
  m->back_hhvv_mm2 = (a2 + b2) * sc2 + fa * conj(fb) * cos4 + fb * conj(fa) * sin4;
  m->fwd_hh_mm = fwd[0][0] * cos2 + fwd[1][1] * sin2;
  m->fwd_vv_mm = fwd[0][0] * sin2 + fwd[1][1] * cos2;
}

static void average(const rp_drop_ws *ws, rp_amplitude_fn amp, const void *ctx,
                    rp_drop_result *out) {
  const rp_drop_config *c = &ws->cfg;
  memset(&out->avg, 0, sizeof out->avg);
  const double vertical[3] = {0.0, 0.0, 1.0};
  double complex back[2][2], fwd[2][2];
  rp_drop_hv_amplitudes(amp, ctx, vertical, c->elevation_deg, back, fwd);
  out->back_hh_mm = back[0][0];
  out->back_vv_mm = back[1][1];
  out->back_hv_mm = back[0][1];
  out->back_vh_mm = back[1][0];
  out->fwd_hh_mm = fwd[0][0];
  out->fwd_vv_mm = fwd[1][1];
  if (c->canting_approx) {
    angular_moments(c->canting_sd_deg * DEG, back, fwd, &out->avg);
    return;
  }
  for (size_t i = 0; i < ws->n_orient; i++) {
    rp_drop_hv_amplitudes(amp, ctx, ws->axis[i], c->elevation_deg, back, fwd);
    accumulate(&out->avg, ws->weight[i], back, fwd);
  }
}

static rp_status eval_mie(double d_mm, double wavelength_mm, double complex eps,
                          rp_drop_result *out, rp_error *err) {
  rp_mie_result mie;
  RP_TRY(rp_mie_sphere_eval(d_mm, wavelength_mm, rp_water_refractive_index(eps), &mie, err));
  out->back_hh_mm = out->back_vv_mm = mie.f_back_mm;
  out->back_hv_mm = out->back_vh_mm = 0.0;
  out->fwd_hh_mm = out->fwd_vv_mm = mie.f_fwd_mm;
  const double b2 = creal(mie.f_back_mm * conj(mie.f_back_mm));
  out->avg.back_hh2_mm2 = out->avg.back_vv2_mm2 = b2;
  out->avg.back_hv2_mm2 = 0.0;
  out->avg.back_hhvv_mm2 = b2;
  out->avg.fwd_hh_mm = out->avg.fwd_vv_mm = mie.f_fwd_mm;
  return RP_OK;
}

rp_status rp_drop_eval(rp_drop_ws *ws, double d_mm, rp_drop_result *out, rp_error *err) {
  const rp_drop_config *c = &ws->cfg;
  if (!(isfinite(d_mm) && d_mm > 0.0 && d_mm <= 10.0))
    return rp_error_set(err, RP_EDOM, "diameter %g mm outside (0, 10] mm", d_mm);
  memset(out, 0, sizeof *out);
  out->d_mm = d_mm;
  out->wavelength_mm = rp_wavelength_mm(c->freq_ghz);
  RP_TRY(rp_water_permittivity(c->freq_ghz, c->temp_c, &out->eps, err));
  if (c->axis_ratio_fixed > 0.0)
    out->axis_ratio = c->axis_ratio_fixed;
  else
    RP_TRY(rp_shape_axis_ratio(c->shape, d_mm, &out->axis_ratio, err));

  switch (c->method) {
    case RP_METHOD_MIE:
      if (out->axis_ratio != 1.0)
        return rp_error_set(err, RP_EINVAL,
                            "method mie is for spheres only, but the axis ratio is %.4f "
                            "(use --shape sphere or --axis-ratio 1)",
                            out->axis_ratio);
      return eval_mie(d_mm, out->wavelength_mm, out->eps, out, err);
    case RP_METHOD_RAYLEIGH: {
      rp_rayleigh_spheroid r;
      RP_TRY(rp_rayleigh_spheroid_init(&r, d_mm, out->axis_ratio, out->wavelength_mm, out->eps,
                                       err));
      average(ws, rp_rayleigh_amplitude, &r, out);
      return RP_OK;
    }
    case RP_METHOD_TMATRIX: {
      const rp_tmatrix_opts opts = rp_tmatrix_opts_default();
      RP_TRY(rp_tmatrix_solve(ws->tm, d_mm, out->axis_ratio, out->wavelength_mm,
                              rp_water_refractive_index(out->eps), &opts, err));
      out->nmax = rp_tmatrix_nmax(ws->tm);
      average(ws, rp_tmatrix_amplitude, ws->tm, out);
      return RP_OK;
    }
    default:
      return rp_error_set(err, RP_EINVAL, "unknown method %d", (int)c->method);
  }
}

void rp_drop_cross_sections(const rp_drop_result *r, rp_drop_xsec *out) {
  out->sigma_hh_mm2 = 4.0 * M_PI * r->avg.back_hh2_mm2;
  out->sigma_vv_mm2 = 4.0 * M_PI * r->avg.back_vv2_mm2;
  out->sigma_hv_mm2 = 4.0 * M_PI * r->avg.back_hv2_mm2;
  out->ext_h_mm2 = 2.0 * r->wavelength_mm * cimag(r->avg.fwd_hh_mm);
  out->ext_v_mm2 = 2.0 * r->wavelength_mm * cimag(r->avg.fwd_vv_mm);
  out->zdr_db = out->sigma_vv_mm2 > 0.0 ? 10.0 * log10(out->sigma_hh_mm2 / out->sigma_vv_mm2)
                                        : (double)NAN;
}
