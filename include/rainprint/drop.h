/* drop.h — scattering of one raindrop as a radar sees it.
 *
 * Puts together the drop physics (permittivity, axis ratio) and one scattering method
 * (T-matrix, Rayleigh–Gans or Mie) and turns particle-frame amplitude matrices into
 * the radar's h/v amplitudes for a beam at elevation angle theta_e:
 *
 *   beam (incidence) k_i = (cos theta_e, 0, sin theta_e), h = (0, 1, 0),
 *   v = k_i x h = (-sin theta_e, 0, cos theta_e): (h, v, k_i) right-handed, v = z at
 *   zero elevation. Backscatter alignment: the same h and v receive the echo
 *   travelling along -k_i, so a sphere has f_hh(pi) = f_vv(pi).
 *   f_pq = e_p . E_s for incident E_i = e_q (p, q in {h, v}).
 *
 * Orientation: the symmetry axis n of the drop is vertical (z) at zero canting.
 *   RP_CANTING_PLANAR: n = cos(beta) z + sin(beta) y, tilt in the vertical plane
 *     across the beam (the polarisation plane at zero elevation); beta is Gaussian
 *     with mean 0 and standard deviation sigma, wrapped (beta and beta + 180 deg are
 *     the same orientation, so the images beta + k 180 deg add up).
 *   RP_CANTING_3D: n = (sin beta cos phi, sin beta sin phi, cos beta) with phi uniform
 *     and an orientation density on the sphere proportional to exp(-beta^2/(2 sigma^2)),
 *     beta in [0, 180 deg]; folded by n == -n, beta in [0, 90 deg] has density
 *     ~ [exp(-beta^2/(2 sigma^2)) + exp(-(180 deg - beta)^2/(2 sigma^2))] sin(beta).
 * Averages of the second moments (<|f_hh|^2>, ...) and of the forward amplitudes are
 * taken by quadrature over the distribution with the exact amplitudes. The optional
 * angular-moment approximation instead rotates the zero-canting amplitudes with
 * closed-form moments of the planar Gaussian (<cos^4 beta>, ...); it is exact for
 * planar canting at zero elevation and an approximation elsewhere. */
#ifndef RAINPRINT_DROP_H
#define RAINPRINT_DROP_H

#include <complex.h>
#include <stddef.h>

#include "rainprint/scatter.h"
#include "rainprint/shape.h"
#include "rainprint/status.h"

typedef enum { RP_METHOD_TMATRIX, RP_METHOD_RAYLEIGH, RP_METHOD_MIE, RP_METHOD_COUNT } rp_method;
typedef enum { RP_CANTING_PLANAR, RP_CANTING_3D, RP_CANTING_COUNT } rp_canting_model;

/* Default standard deviation of the canting angle (deg); see docs/method.md. */
#define RP_CANTING_SD_DEFAULT_DEG 7.0

typedef struct {
  double freq_ghz;          /* [1, 100] */
  double temp_c;            /* within the permittivity model's range */
  rp_shape_model shape;     /* axis-ratio model, unless axis_ratio_fixed > 0 */
  double axis_ratio_fixed;  /* > 0: use this axis ratio for every diameter; 0: use shape */
  double canting_sd_deg;    /* [0, 45] */
  rp_canting_model canting_model;
  int canting_approx;       /* non-zero: angular-moment approximation (planar moments) */
  double elevation_deg;     /* [0, 90] */
  rp_method method;
} rp_drop_config;

/* Band letters and their centre frequencies (common practice): S 2.8, C 5.6, X 9.4 GHz,
 * and the stretch bands Ku 13.6, Ka 35.0 GHz. */
rp_status rp_band_frequency_ghz(const char *band, double *freq_ghz, rp_error *err);

/* Band letter ("S", "C", ...) whose centre frequency is freq_ghz (within 1e-9), or NULL. */
const char *rp_band_of_frequency(double freq_ghz);

const char *rp_method_name(rp_method m);            /* "tmatrix", "rayleigh", "mie" */
rp_status rp_method_from_name(const char *name, rp_method *m, rp_error *err);
const char *rp_canting_model_name(rp_canting_model c); /* "planar", "3d" */
rp_status rp_canting_model_from_name(const char *name, rp_canting_model *c, rp_error *err);

/* Defaults: C band, 10 C, default shape, default canting (planar), elevation 0, T-matrix. */
void rp_drop_config_default(rp_drop_config *cfg);

/* Checks every field's range; RP_EINVAL/RP_EDOM with the field named. */
rp_status rp_drop_config_check(const rp_drop_config *cfg, rp_error *err);

/* Orientation-averaged quantities of one drop (units in the names; all in mm). */
typedef struct {
  double back_hh2_mm2, back_vv2_mm2, back_hv2_mm2; /* <|f_hh(pi)|^2>, <|f_vv|^2>, <|f_hv|^2> */
  double complex back_hhvv_mm2;                    /* <f_hh(pi) f_vv(pi)*> */
  double complex fwd_hh_mm, fwd_vv_mm;             /* <f_hh(0)>, <f_vv(0)> */
} rp_drop_moments;

typedef struct {
  double d_mm, axis_ratio, wavelength_mm;
  double complex eps;
  /* amplitudes at the mean orientation (zero canting), mm */
  double complex back_hh_mm, back_vv_mm, back_hv_mm, back_vh_mm, fwd_hh_mm, fwd_vv_mm;
  rp_drop_moments avg;   /* averaged over the canting distribution */
  int nmax;              /* T-matrix terms used (0 for other methods) */
} rp_drop_result;

/* Cross-sections of one drop from its canting-averaged moments (mm^2):
 * sigma_pq = 4 pi <|f_pq(pi)|^2>, C_ext,p = 2 lambda Im <f_pp(0)>, single-drop ZDR
 * 10 log10(sigma_hh / sigma_vv) (dB; NaN when sigma_vv = 0). */
typedef struct {
  double sigma_hh_mm2, sigma_vv_mm2, sigma_hv_mm2;
  double ext_h_mm2, ext_v_mm2;
  double zdr_db;
} rp_drop_xsec;

void rp_drop_cross_sections(const rp_drop_result *r, rp_drop_xsec *out);

typedef struct rp_drop_ws rp_drop_ws;

/* Workspace for one thread: the T-matrix workspace and the orientation quadrature
 * for cfg (copied). NULL on out-of-memory, or for a NULL cfg or one that fails
 * rp_drop_config_check (call that first for the message). Free with rp_drop_ws_free. */
rp_drop_ws *rp_drop_ws_alloc(const rp_drop_config *cfg);
void rp_drop_ws_free(rp_drop_ws *ws);

/* Scattering of a drop of equal-volume diameter d_mm in (0, 10] mm.
 * Statuses: RP_EINVAL/RP_EDOM for bad input (including mie for a non-sphere),
 * RP_ENOCONV when the T-matrix does not converge. */
rp_status rp_drop_eval(rp_drop_ws *ws, double d_mm, rp_drop_result *out, rp_error *err);

/* Helpers exposed for tests: the radar's unit vectors at elevation_deg, and the
 * h/v amplitudes of a particle with symmetry axis n (lab frame, unit vector). */
void rp_drop_radar_vectors(double elevation_deg, double k_inc[3], double h[3], double v[3]);
void rp_drop_hv_amplitudes(rp_amplitude_fn amp, const void *ctx, const double axis[3],
                           double elevation_deg, double complex back[2][2],
                           double complex fwd[2][2]);

#endif
