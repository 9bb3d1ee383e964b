/* tmatrix.h — T-matrix (extended boundary condition method, EBCM) for homogeneous
 * spheroids: raindrops, oblate (axis ratio r = b/a < 1), spheres (r = 1) and prolate
 * (r > 1).
 *
 * Method: Waterman (1965); Mishchenko, Travis & Lacis (2002, ch. 5), written from the
 * equations (the scattering method notes under docs/ have every formula). The spheroid has
 * equal-volume diameter D and semi-axes a = (D/2) r^{-1/3} (in the x-y plane) and
 * b = (D/2) r^{2/3} (along the symmetry axis z). Conventions (time dependence,
 * amplitude matrix in the theta-hat/phi-hat basis, mm) are those of scatter.h; for a
 * sphere the amplitudes equal Mie's (mie.h) including the phase.
 *
 * Use: allocate one workspace per thread, rp_tmatrix_solve() for a drop, then call
 * rp_tmatrix_amplitude() for as many direction pairs as needed. The amplitude
 * function only reads the workspace, so several threads may evaluate amplitudes of
 * one solved workspace at the same time (but not while it is being solved). */
#ifndef RAINPRINT_TMATRIX_H
#define RAINPRINT_TMATRIX_H

#include <complex.h>

#include "rainprint/status.h"

/* Largest nmax_limit a workspace can be allocated for. */
#define RP_TMATRIX_NMAX_HARD 100

/* Opaque: workspace (quadrature, Bessel tables, Q matrices) and the last solved
 * T-matrix. */
typedef struct rp_tmatrix_ws rp_tmatrix_ws;

typedef struct {
  double rel_tol; /* convergence tolerance on the broadside amplitudes, in (0, 0.1] */
  int nmax_limit; /* largest n_max tried, in [1, capacity of the workspace] */
} rp_tmatrix_opts;

/* rel_tol = 1e-7 (the amplitudes then agree with Mie to better than 1e-6 for
 * spheres, the accuracy the tests ask for), nmax_limit = 60. */
rp_tmatrix_opts rp_tmatrix_opts_default(void);

/* Workspace for n_max up to nmax_limit in [1, RP_TMATRIX_NMAX_HARD]. Memory grows like
 * nmax_limit^3 (about 8 MB for 60). Returns NULL on out-of-memory or an nmax_limit
 * outside the range. The caller frees it with rp_tmatrix_ws_free. */
rp_tmatrix_ws *rp_tmatrix_ws_alloc(int nmax_limit);

/* Frees the workspace; NULL is a no-op. */
void rp_tmatrix_ws_free(rp_tmatrix_ws *ws);

/* Computes the T-matrix of a spheroid of equal-volume diameter d_mm in (0, 10] mm,
 * axis ratio axis_ratio = b/a in [0.3, 3], at wavelength wavelength_mm > 0 (in the
 * surrounding medium), relative refractive index m (Im m >= 0, Re m > 0), and keeps
 * it in ws. opts may be NULL: the defaults, with nmax_limit lowered to the
 * workspace's capacity if that is smaller.
 *
 * Convergence: n_max starts at kr_max + 4.05 kr_max^{1/3} + 2 (kr_max = k max(a, b))
 * with 2 n_max Gauss-Legendre points in cos(theta) on [0, 1] (4 n_max over the full
 * range), and grows by one until the forward and backward amplitudes S_tt, S_pp for
 * broadside incidence (+x) change by less than rel_tol times their largest modulus;
 * the quadrature is then doubled and the check repeated (if it fails, the finer
 * quadrature is kept and n_max keeps growing).
 *
 * Statuses: RP_OK; RP_EINVAL for NULL ws, non-finite or non-positive d_mm, axis_ratio
 * or wavelength_mm, non-finite m, bad opts; RP_EDOM for d_mm > 10, axis_ratio outside
 * [0.3, 3], Im m < 0 or Re m <= 0; RP_ENOCONV when n_max would exceed nmax_limit, the
 * quadrature would exceed its cap (8 n_max points on [0, 1]), the Q matrix is
 * singular or overflows, or the change between successive n_max grows 1000-fold
 * above its smallest value (EBCM loss of precision: more terms only add round-off)
 * (message names D, axis ratio, wavelength and frequency, and the last n_max). After a non-OK
 * status the workspace holds no solution (amplitudes are NaN). */
rp_status rp_tmatrix_solve(rp_tmatrix_ws *ws, double d_mm, double axis_ratio,
                           double wavelength_mm, double complex m,
                           const rp_tmatrix_opts *opts, rp_error *err);

/* Amplitude matrix (mm) of the last solved particle for incidence along k_inc and
 * scattering along k_sca (particle frame, unit vectors; they are normalised here),
 * in the theta-hat/phi-hat basis of scatter.h: s[0][0] = S_tt, s[0][1] = S_tp,
 * s[1][0] = S_pt, s[1][1] = S_pp. Correct in every direction, including along the
 * symmetry axis (the pi_mn = m d/sin(theta) limits are exact). The signature matches
 * rp_amplitude_fn (ctx is a const rp_tmatrix_ws *). Cost: about (8/3) n_max^3 complex
 * multiply-adds (the T blocks are applied to two vectors per m), no allocation.
 * Fills s with NaN if ws is NULL or holds no solution, or a vector is zero or not
 * finite. */
void rp_tmatrix_amplitude(const void *ws, const double k_inc[3], const double k_sca[3],
                          double complex s[2][2]);

/* n_max of the last solution (0 if none). */
int rp_tmatrix_nmax(const rp_tmatrix_ws *ws);

/* Number of Gauss-Legendre points on cos(theta) in [0, 1] of the last solution (0 if
 * none). */
int rp_tmatrix_ngauss(const rp_tmatrix_ws *ws);

/* For tests: element T^{kind}_{m n n2} of the last solution, m in 0..n_max, n and n2
 * in max(1, m)..n_max, kind 11, 12, 21 or 22 (1 = M / magnetic, 2 = N / electric
 * vector spherical wave functions; a sphere has T^{11}_{mnn} = -b_n and
 * T^{22}_{mnn} = -a_n). T^{kl} for -m equals (+/-)T^{kl} for m (minus for 12, 21).
 * Returns NaN for indices out of range or when there is no solution. */
double complex rp_tmatrix_element(const rp_tmatrix_ws *ws, int m, int n, int n2, int kind);

#endif
