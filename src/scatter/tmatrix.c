/* tmatrix.c — T-matrix of a homogeneous spheroid by the extended boundary condition
 * method (EBCM).
 *
 * References: Waterman (1965), Proc. IEEE 53, 805 (citation from memory); Mishchenko,
 * Travis & Lacis (2002), "Scattering, Absorption, and Emission of Light by Small
 * Particles", ch. 5 (T-matrix for rotationally symmetric particles) and the appendix
 * on vector spherical wave functions (VSWF). The formulas below were derived from the
 * Stratton-Chu surface representation with the outgoing dyadic Green's function
 * expanded in VSWF; docs/method.md (section 6, T-matrix) gives the steps.
 *
 * VSWF (d_n = sqrt((2n+1) / (4 pi n(n+1))), d^n_{0m} normalised Wigner d functions,
 * pi_mn = m d^n_{0m}/sin(theta), tau_mn = d d^n_{0m}/d theta, z_n = h_n^(1) or j_n):
 *   M_mn = (-1)^m d_n z_n(kr) [i pi_mn theta-hat - tau_mn phi-hat] e^{i m phi}
 *   N_mn = (-1)^m d_n { n(n+1) z_n/(kr) d^n_{0m} r-hat
 *                       + [kr z_n]'/(kr) [tau_mn theta-hat + i pi_mn phi-hat] } e^{i m phi}
 * Per azimuthal order m the matrices Q and RgQ (rows n: outgoing functions h_n(kr),
 * columns n': internal functions j_n'(m_r k r)) are, up to the common factor
 * -2 pi k^2 which cancels in T (rho = r_theta / r, x = k r(theta), A = pi pi' + tau tau',
 * B = pi' tau + tau' pi, primes on index n', J = j_n'(m_r x), JD = [z j_n'(z)]'/z at
 * z = m_r x, H = h_n(x), HD = [x h_n(x)]'/x):
 *   Q11 = i d_n d_n' Int x^2 { A (J HD - m_r JD H)
 *                              + (rho/x) J H [n(n+1) d tau' - n'(n'+1) d' tau] }
 *   Q22 = i d_n d_n' Int x^2 { A (m_r J HD - JD H)
 *                              + (rho/x) J H [m_r n(n+1) d tau' - n'(n'+1) d' tau / m_r] }
 *   Q12 = d_n d_n' Int x^2 { B (m_r J H + JD HD)
 *                            + (rho/x) [n(n+1) JD H d pi' + n'(n'+1) J HD d' pi / m_r] }
 *   Q21 = d_n d_n' Int x^2 { B (m_r JD HD + J H)
 *                            + (rho/x) [m_r n(n+1) JD H d pi' + n'(n'+1) J HD d' pi] }
 * with Int = int_0^pi ... sin(theta) d theta, and RgQ the same with H -> j_n(x),
 * HD -> [x j_n(x)]'/x. Then T = -RgQ Q^{-1}; for a sphere T11 = -b_n, T22 = -a_n.
 * Mirror symmetry about z = 0: Q11, Q22 vanish for n + n' odd and Q12, Q21 for n + n'
 * even; the non-zero integrals are twice those over cos(theta) in [0, 1] (Gauss-
 * Legendre). Only the non-zero half is computed.
 *
 * Amplitude matrix (mm) from the plane-wave expansion coefficients
 *   a_mn = 4 pi (-1)^m i^n d_n C*_mn(k_inc) . E0 e^{-i m phi_inc},
 *   b_mn = 4 pi (-1)^m i^{n-1} d_n B*_mn(k_inc) . E0 e^{-i m phi_inc}
 * and the far-field forms h_n(x) -> (-i)^{n+1} e^{ix}/x:
 *   S_tt = (-4 pi i / k) sum_m e^{i m dphi} sum_{n n'} i^{n'-n} d_n d_n'
 *            [pi_s (T11 pi_i' + T12 tau_i') + tau_s (T21 pi_i' + T22 tau_i')]
 *   S_tp = (-4 pi / k) ...  [pi_s (T11 tau_i' + T12 pi_i') + tau_s (T21 tau_i' + T22 pi_i')]
 *   S_pt = ( 4 pi / k) ...  [tau_s (T11 pi_i' + T12 tau_i') + pi_s (T21 pi_i' + T22 tau_i')]
 *   S_pp = (-4 pi i / k) ...[tau_s (T11 tau_i' + T12 pi_i') + pi_s (T21 tau_i' + T22 pi_i')]
 * (Mishchenko et al. 2002, ch. 5, give the same structure; equation numbers not
 * checked). Negative m follow from T^{11,22}_{-m} = T^{11,22}_m and
 * T^{12,21}_{-m} = -T^{12,21}_m.
 *
 * Invariants: the workspace is allocated once; solve and amplitude do not allocate;
 * no global mutable state. */
#include "rainprint/tmatrix.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "rainprint/scatter.h"
#include "special.h"

/* the imaginary unit as a double complex (I is float complex) */
static const double complex IU = CMPLX(0.0, 1.0);

/* Gauss points on [0, 1] per n_max: 2 (4 n_max over the full range) to start, the
 * check doubles it; the ratio may grow to RATIO_MAX, so the cap is 2 * RATIO_MAX. */
#define RATIO_START 2
#define RATIO_MAX 4

/* Growth of the n_max-to-n_max+1 change above its smallest value that is taken as
 * divergence (round-off, not truncation, dominates); converging series shrink
 * monotonically up to factors ~10 between even and odd n_max. */
#define DIVERGENCE_FACTOR 1e3

struct rp_tmatrix_ws {
  int lim;    /* capacity: largest n_max */
  int ng_cap; /* capacity: largest number of Gauss points on [0, 1] */
  /* the last solution */
  int solved, nmax, ngauss;
  double k; /* wavenumber, 1/mm */
  size_t toff[RP_TMATRIX_NMAX_HARD + 2]; /* offset of block m in t (for nmax) */
  double complex *t;                     /* blocks [[T11 T12][T21 T22]], row-major */
  /* tables depending on n (and m) only */
  double *dn;   /* d_n, n = 0..lim */
  double *root; /* root[m (lim+1) + n] = sqrt(n^2 - m^2) */
  /* quadrature and surface */
  int ng_nodes; /* number of points currently in u, w */
  double *u, *w, *x, *rho_x; /* node, weight, k r, (r_theta/r) / x */
  /* Bessel tables [n][g] (stride ng) */
  double complex *bj, *bjd, *bh, *bhd;
  double *rj, *rjd;
  /* angular tables [n][g] for one m */
  double *ad, *api, *atau;
  /* one m block of Q and RgQ, pivots, Bessel scratch */
  double complex *q, *rq;
  int *piv;
  double *sj, *sy;
  double complex *sjc;
};

rp_tmatrix_opts rp_tmatrix_opts_default(void) {
  rp_tmatrix_opts o = {1e-7, 60};
  return o;
}

static size_t block_len(int nmax, int m) { return (size_t)(nmax - (m > 1 ? m : 1) + 1); }

static size_t t_size(int nmax) {
  size_t s = 0;
  for (int m = 0; m <= nmax; m++) {
    const size_t l2 = 2 * block_len(nmax, m);
    s += l2 * l2;
  }
  return s;
}

void rp_tmatrix_ws_free(rp_tmatrix_ws *ws) {
  if (ws == NULL) return;
  free(ws->t);
  free(ws->dn);
  free(ws->root);
  free(ws->u);
  free(ws->w);
  free(ws->x);
  free(ws->rho_x);
  free(ws->bj);
  free(ws->bjd);
  free(ws->bh);
  free(ws->bhd);
  free(ws->rj);
  free(ws->rjd);
  free(ws->ad);
  free(ws->api);
  free(ws->atau);
  free(ws->q);
  free(ws->rq);
  free(ws->piv);
  free(ws->sj);
  free(ws->sy);
  free(ws->sjc);
  free(ws);
}

rp_tmatrix_ws *rp_tmatrix_ws_alloc(int nmax_limit) {
  if (nmax_limit < 1 || nmax_limit > RP_TMATRIX_NMAX_HARD) return NULL;
  rp_tmatrix_ws *ws = calloc(1, sizeof *ws);
  if (ws == NULL) return NULL;
  const int lim = nmax_limit;
  ws->lim = lim;
  ws->ng_cap = 2 * RATIO_MAX * lim;
  const size_t n1 = (size_t)lim + 1;
  const size_t ng = (size_t)ws->ng_cap;
  const size_t nb = n1 * ng;
  const size_t qm = (size_t)(2 * lim) * (size_t)(2 * lim);
  ws->t = malloc(t_size(lim) * sizeof *ws->t);
  ws->dn = malloc(n1 * sizeof *ws->dn);
  ws->root = malloc(n1 * n1 * sizeof *ws->root);
  ws->u = malloc(ng * sizeof(double));
  ws->w = malloc(ng * sizeof(double));
  ws->x = malloc(ng * sizeof(double));
  ws->rho_x = malloc(ng * sizeof(double));
  ws->bj = malloc(nb * sizeof(double complex));
  ws->bjd = malloc(nb * sizeof(double complex));
  ws->bh = malloc(nb * sizeof(double complex));
  ws->bhd = malloc(nb * sizeof(double complex));
  ws->rj = malloc(nb * sizeof(double));
  ws->rjd = malloc(nb * sizeof(double));
  ws->ad = malloc(nb * sizeof(double));
  ws->api = malloc(nb * sizeof(double));
  ws->atau = malloc(nb * sizeof(double));
  ws->q = malloc(qm * sizeof(double complex));
  ws->rq = malloc(qm * sizeof(double complex));
  ws->piv = malloc((size_t)(2 * lim) * sizeof(int));
  ws->sj = malloc((n1 + 1) * sizeof(double));
  ws->sy = malloc((n1 + 1) * sizeof(double));
  ws->sjc = malloc((n1 + 1) * sizeof(double complex));
  if (!ws->t || !ws->dn || !ws->root || !ws->u || !ws->w || !ws->x || !ws->rho_x ||
      !ws->bj || !ws->bjd || !ws->bh || !ws->bhd || !ws->rj || !ws->rjd || !ws->ad ||
      !ws->api || !ws->atau || !ws->q || !ws->rq || !ws->piv || !ws->sj || !ws->sy ||
      !ws->sjc)
    goto fail;
  ws->dn[0] = 0.0;
  for (int n = 1; n <= lim; n++)
    ws->dn[n] = sqrt((2.0 * n + 1.0) / (4.0 * M_PI * n * (n + 1.0)));
  for (int m = 0; m <= lim; m++)
    for (int n = 0; n <= lim; n++)
      ws->root[(size_t)m * n1 + (size_t)n] =
          n >= m ? sqrt((double)(n - m) * (double)(n + m)) : 0.0;
  return ws;
fail:
  rp_tmatrix_ws_free(ws);
  return NULL;
}

int rp_tmatrix_nmax(const rp_tmatrix_ws *ws) { return (ws && ws->solved) ? ws->nmax : 0; }

int rp_tmatrix_ngauss(const rp_tmatrix_ws *ws) { return (ws && ws->solved) ? ws->ngauss : 0; }

double complex rp_tmatrix_element(const rp_tmatrix_ws *ws, int m, int n, int n2, int kind) {
  if (ws == NULL || !ws->solved || m < 0 || m > ws->nmax) return NAN;
  const int n0 = m > 1 ? m : 1;
  if (n < n0 || n > ws->nmax || n2 < n0 || n2 > ws->nmax) return NAN;
  const size_t l = block_len(ws->nmax, m), i = (size_t)(n - n0), j = (size_t)(n2 - n0);
  size_t row, col;
  switch (kind) {
    case 11: row = i; col = j; break;
    case 12: row = i; col = l + j; break;
    case 21: row = l + i; col = j; break;
    case 22: row = l + i; col = l + j; break;
    default: return NAN;
  }
  return ws->t[ws->toff[m] + row * 2 * l + col];
}

/* Gauss-Legendre nodes and weights of order ng on [0, 1] (Newton iteration on P_ng
 * from the usual Chebyshev-like first guesses; weights 2/((1-t^2) P'(t)^2), halved). */
static void gauss_legendre_01(int ng, double *u, double *w) {
  for (int i = 0; i < ng; i++) {
    double t = cos(M_PI * (i + 0.75) / (ng + 0.5));
    double dp = 1.0;
    for (int it = 0; it < 100; it++) {
      double p0 = 1.0, p1 = t;
      for (int k = 2; k <= ng; k++) {
        const double p2 = ((2.0 * k - 1.0) * t * p1 - (k - 1.0) * p0) / k;
        p0 = p1;
        p1 = p2;
      }
      dp = ng * (t * p1 - p0) / (t * t - 1.0);
      const double dt = p1 / dp;
      t -= dt;
      if (fabs(dt) <= 1e-15) break; /* quadratic: the error is now ~1e-30 */
    }
    u[i] = 0.5 * (1.0 + t);
    w[i] = 1.0 / ((1.0 - t * t) * dp * dp);
  }
}

/* Fills the surface and Bessel tables for n = 0..nmax at ng Gauss points. */
static rp_status fill_tables(rp_tmatrix_ws *ws, int nmax, int ng, double a_mm, double b_mm,
                             double complex m) {
  if (ws->ng_nodes != ng) {
    gauss_legendre_01(ng, ws->u, ws->w);
    ws->ng_nodes = ng;
  }
  const size_t sg = (size_t)ng;
  const double ia2 = 1.0 / (a_mm * a_mm), ib2 = 1.0 / (b_mm * b_mm);
  for (int g = 0; g < ng; g++) {
    const double c = ws->u[g], s2 = 1.0 - c * c, s = sqrt(s2);
    const double r = 1.0 / sqrt(s2 * ia2 + c * c * ib2); /* spheroid r(theta) */
    const double rho = r * r * s * c * (ib2 - ia2);       /* r_theta / r */
    const double x = ws->k * r;
    ws->x[g] = x;
    ws->rho_x[g] = rho / x;
    const double complex z = m * x;
    if (rp_special_sph_bessel_jy(x, nmax, ws->sj, ws->sy) != RP_OK ||
        rp_special_sph_bessel_j_complex(z, nmax, ws->sjc) != RP_OK)
      return RP_ENOCONV;
    for (int n = 1; n <= nmax; n++) {
      const size_t ix = (size_t)n * sg + (size_t)g;
      const double complex h = ws->sj[n] + IU * ws->sy[n];
      const double complex h1 = ws->sj[n - 1] + IU * ws->sy[n - 1];
      ws->bh[ix] = h;
      ws->bhd[ix] = h1 - n * h / x;
      ws->rj[ix] = ws->sj[n];
      ws->rjd[ix] = ws->sj[n - 1] - n * ws->sj[n] / x;
      ws->bj[ix] = ws->sjc[n];
      ws->bjd[ix] = ws->sjc[n - 1] - n * ws->sjc[n] / z;
      if (!isfinite(creal(h)) || !isfinite(cimag(h)) || !isfinite(creal(ws->bhd[ix])) ||
          !isfinite(cimag(ws->bhd[ix])) || !isfinite(creal(ws->bj[ix])) ||
          !isfinite(cimag(ws->bj[ix])) || !isfinite(creal(ws->bjd[ix])) ||
          !isfinite(cimag(ws->bjd[ix])))
        return RP_ENOCONV;
    }
  }
  return RP_OK;
}

/* In-place LU factorisation with partial pivoting of the n x n row-major matrix a.
 * Returns non-zero if a pivot is zero or not finite. */
static int lu_factor(double complex *a, int n, int *piv) {
  const size_t sn = (size_t)n;
  for (int k = 0; k < n; k++) {
    int p = k;
    double best = cabs(a[(size_t)k * sn + (size_t)k]);
    for (int i = k + 1; i < n; i++) {
      const double v = cabs(a[(size_t)i * sn + (size_t)k]);
      if (v > best) best = v, p = i;
    }
    if (!(best > 0.0) || !isfinite(best)) return 1;
    piv[k] = p;
    if (p != k) {
      for (int j = 0; j < n; j++) {
        const double complex tmp = a[(size_t)k * sn + (size_t)j];
        a[(size_t)k * sn + (size_t)j] = a[(size_t)p * sn + (size_t)j];
        a[(size_t)p * sn + (size_t)j] = tmp;
      }
    }
    const double complex inv = 1.0 / a[(size_t)k * sn + (size_t)k];
    for (int i = k + 1; i < n; i++) {
      double complex *ri = a + (size_t)i * sn;
      const double complex f = ri[k] * inv;
      ri[k] = f;
      if (f == 0.0) continue;
      const double complex *rk = a + (size_t)k * sn;
      for (int j = k + 1; j < n; j++) ri[j] -= f * rk[j];
    }
  }
  return 0;
}

/* Solves (LU) x = b in place for one right-hand side. */
static void lu_solve(const double complex *lu, int n, const int *piv, double complex *b) {
  const size_t sn = (size_t)n;
  for (int k = 0; k < n; k++) {
    if (piv[k] != k) {
      const double complex tmp = b[k];
      b[k] = b[piv[k]];
      b[piv[k]] = tmp;
    }
  }
  for (int i = 1; i < n; i++) {
    double complex s = b[i];
    for (int j = 0; j < i; j++) s -= lu[(size_t)i * sn + (size_t)j] * b[j];
    b[i] = s;
  }
  for (int i = n - 1; i >= 0; i--) {
    double complex s = b[i];
    for (int j = i + 1; j < n; j++) s -= lu[(size_t)i * sn + (size_t)j] * b[j];
    b[i] = s / lu[(size_t)i * sn + (size_t)i];
  }
}

/* T-matrix block m at fixed nmax and quadrature (tables already filled). */
static rp_status solve_block(rp_tmatrix_ws *ws, int nmax, int ng, int m, double complex mr) {
  const int n0 = m > 1 ? m : 1;
  const int l = nmax - n0 + 1, mm = 2 * l;
  const size_t sg = (size_t)ng, smm = (size_t)mm, sl = (size_t)l;
  const size_t n1 = (size_t)ws->lim + 1;
  /* angular functions of this m at every node */
  for (int g = 0; g < ng; g++) {
    const double c = ws->u[g], s = sqrt(1.0 - c * c);
    double d[RP_TMATRIX_NMAX_HARD + 1], p[RP_TMATRIX_NMAX_HARD + 1],
        tau[RP_TMATRIX_NMAX_HARD + 1];
    rp_special_wigner_d(m, nmax, c, s, ws->root + (size_t)m * n1, d, p, tau);
    for (int n = n0; n <= nmax; n++) {
      const size_t ix = (size_t)n * sg + (size_t)g;
      ws->ad[ix] = d[n];
      ws->api[ix] = p[n];
      ws->atau[ix] = tau[n];
    }
  }
  const double complex inv_mr = 1.0 / mr;
  /* Q^T and RgQ are built: q holds Q transposed (q[col][row]) for the solve of
   * Q^T T^T = -RgQ^T; rq holds RgQ row-major. */
  for (int i = 0; i < l; i++) {
    const int n = n0 + i;
    const double nn = n * (n + 1.0);
    const double *dr = ws->ad + (size_t)n * sg, *pr = ws->api + (size_t)n * sg,
                 *tr = ws->atau + (size_t)n * sg;
    const double complex *h = ws->bh + (size_t)n * sg, *hd = ws->bhd + (size_t)n * sg;
    const double *rj = ws->rj + (size_t)n * sg, *rjd = ws->rjd + (size_t)n * sg;
    for (int j = 0; j < l; j++) {
      const int n2 = n0 + j;
      const double nn2 = n2 * (n2 + 1.0);
      const double *dc = ws->ad + (size_t)n2 * sg, *pc = ws->api + (size_t)n2 * sg,
                   *tc = ws->atau + (size_t)n2 * sg;
      const double complex *jj = ws->bj + (size_t)n2 * sg, *jd = ws->bjd + (size_t)n2 * sg;
      const double dd = ws->dn[n] * ws->dn[n2];
      const size_t r1 = (size_t)i, r2 = sl + (size_t)i, c1 = (size_t)j, c2 = sl + (size_t)j;
      if (((n + n2) & 1) == 0) {
        /* Q11, Q22 (and RgQ) */
        double complex s11 = 0, s22 = 0, g11 = 0, g22 = 0;
        for (int g = 0; g < ng; g++) {
          const double wx2 = ws->w[g] * ws->x[g] * ws->x[g];
          const double a = (pr[g] * pc[g] + tr[g] * tc[g]) * wx2;
          const double e = ws->rho_x[g] * wx2;
          const double t1 = e * nn * dr[g] * tc[g], t2 = e * nn2 * dc[g] * tr[g];
          const double complex jh = jj[g] * h[g], jhd = jj[g] * hd[g], jdh = jd[g] * h[g];
          const double complex jrj = jj[g] * rj[g], jrjd = jj[g] * rjd[g],
                               jdrj = jd[g] * rj[g];
          s11 += a * (jhd - mr * jdh) + jh * (t1 - t2);
          s22 += a * (mr * jhd - jdh) + jh * (mr * t1 - inv_mr * t2);
          g11 += a * (jrjd - mr * jdrj) + jrj * (t1 - t2);
          g22 += a * (mr * jrjd - jdrj) + jrj * (mr * t1 - inv_mr * t2);
        }
        ws->q[c1 * smm + r1] = IU * dd * s11;
        ws->q[c2 * smm + r2] = IU * dd * s22;
        ws->rq[r1 * smm + c1] = IU * dd * g11;
        ws->rq[r2 * smm + c2] = IU * dd * g22;
        ws->q[c2 * smm + r1] = 0.0;
        ws->q[c1 * smm + r2] = 0.0;
        ws->rq[r1 * smm + c2] = 0.0;
        ws->rq[r2 * smm + c1] = 0.0;
      } else {
        /* Q12, Q21 (and RgQ); zero for m = 0 where pi_0n = 0 */
        double complex s12 = 0, s21 = 0, g12 = 0, g21 = 0;
        if (m != 0) {
          for (int g = 0; g < ng; g++) {
            const double wx2 = ws->w[g] * ws->x[g] * ws->x[g];
            const double b = (pc[g] * tr[g] + tc[g] * pr[g]) * wx2;
            const double e = ws->rho_x[g] * wx2;
            const double t1 = e * nn * dr[g] * pc[g], t2 = e * nn2 * dc[g] * pr[g];
            const double complex jh = jj[g] * h[g], jdhd = jd[g] * hd[g],
                                 jdh = jd[g] * h[g], jhd = jj[g] * hd[g];
            const double complex jrj = jj[g] * rj[g], jdrjd = jd[g] * rjd[g],
                                 jdrj = jd[g] * rj[g], jrjd = jj[g] * rjd[g];
            s12 += b * (mr * jh + jdhd) + t1 * jdh + inv_mr * t2 * jhd;
            s21 += b * (mr * jdhd + jh) + mr * t1 * jdh + t2 * jhd;
            g12 += b * (mr * jrj + jdrjd) + t1 * jdrj + inv_mr * t2 * jrjd;
            g21 += b * (mr * jdrjd + jrj) + mr * t1 * jdrj + t2 * jrjd;
          }
        }
        ws->q[c2 * smm + r1] = dd * s12;
        ws->q[c1 * smm + r2] = dd * s21;
        ws->rq[r1 * smm + c2] = dd * g12;
        ws->rq[r2 * smm + c1] = dd * g21;
        ws->q[c1 * smm + r1] = 0.0;
        ws->q[c2 * smm + r2] = 0.0;
        ws->rq[r1 * smm + c1] = 0.0;
        ws->rq[r2 * smm + c2] = 0.0;
      }
    }
  }
  if (lu_factor(ws->q, mm, ws->piv)) return RP_ENOCONV;
  /* row c of T: solve Q^T x = -(row c of RgQ) */
  double complex *tb = ws->t + ws->toff[m];
  for (size_t c = 0; c < smm; c++) {
    double complex *row = tb + c * smm;
    for (size_t j = 0; j < smm; j++) row[j] = -ws->rq[c * smm + j];
    lu_solve(ws->q, mm, ws->piv, row);
    for (size_t j = 0; j < smm; j++)
      if (!isfinite(creal(row[j])) || !isfinite(cimag(row[j]))) return RP_ENOCONV;
  }
  return RP_OK;
}

/* Full T-matrix at fixed nmax and ng Gauss points on [0, 1]. */
static rp_status solve_fixed(rp_tmatrix_ws *ws, int nmax, int ng, double a_mm, double b_mm,
                             double complex mr) {
  ws->solved = 0;
  size_t off = 0;
  for (int m = 0; m <= nmax; m++) {
    ws->toff[m] = off;
    const size_t l2 = 2 * block_len(nmax, m);
    off += l2 * l2;
  }
  RP_TRY(fill_tables(ws, nmax, ng, a_mm, b_mm, mr));
  for (int m = 0; m <= nmax; m++) RP_TRY(solve_block(ws, nmax, ng, m, mr));
  ws->nmax = nmax;
  ws->ngauss = ng;
  ws->solved = 1;
  return RP_OK;
}

/* Broadside (+x) forward and backward S_tt, S_pp: the convergence monitor. */
static void broadside(const rp_tmatrix_ws *ws, double complex out[4]) {
  const double kin[3] = {1.0, 0.0, 0.0}, kback[3] = {-1.0, 0.0, 0.0};
  double complex s[2][2];
  rp_tmatrix_amplitude(ws, kin, kin, s);
  out[0] = s[0][0];
  out[1] = s[1][1];
  rp_tmatrix_amplitude(ws, kin, kback, s);
  out[2] = s[0][0];
  out[3] = s[1][1];
}

/* Largest change between two sets of monitor amplitudes relative to the largest
 * modulus of a (infinity if anything is not finite). */
static double rel_change(const double complex a[4], const double complex b[4]) {
  double dmax = 0.0, amax = 0.0;
  for (int i = 0; i < 4; i++) {
    const double d = cabs(a[i] - b[i]), v = cabs(a[i]);
    if (!isfinite(d) || !isfinite(v)) return HUGE_VAL;
    if (d > dmax) dmax = d;
    if (v > amax) amax = v;
  }
  return amax > 0.0 ? dmax / amax : (dmax > 0.0 ? HUGE_VAL : 0.0);
}

static rp_status no_conv(rp_tmatrix_ws *ws, rp_error *err, double d_mm, double ar,
                         double lam, double complex m, int nmax, int limit, const char *why) {
  ws->solved = 0;
  return rp_error_set(err, RP_ENOCONV,
                      "T-matrix did not converge for D = %g mm, axis ratio %g, wavelength "
                      "%g mm (%g GHz), m = %g%+gi: %s at n_max = %d (limit %d)",
                      d_mm, ar, lam, RP_C_MM_GHZ / lam, creal(m), cimag(m), why, nmax, limit);
}

rp_status rp_tmatrix_solve(rp_tmatrix_ws *ws, double d_mm, double axis_ratio,
                           double wavelength_mm, double complex m,
                           const rp_tmatrix_opts *opts, rp_error *err) {
  if (ws == NULL) return rp_error_set(err, RP_EINVAL, "T-matrix: NULL workspace");
  ws->solved = 0;
  rp_tmatrix_opts o = rp_tmatrix_opts_default();
  if (opts != NULL)
    o = *opts;
  else if (o.nmax_limit > ws->lim)
    o.nmax_limit = ws->lim; /* defaults: up to the workspace's capacity */
  if (!isfinite(d_mm) || d_mm <= 0.0)
    return rp_error_set(err, RP_EINVAL, "diameter %g mm must be finite and > 0", d_mm);
  if (d_mm > 10.0)
    return rp_error_set(err, RP_EDOM, "diameter %g mm outside (0, 10] mm", d_mm);
  if (!isfinite(axis_ratio) || axis_ratio <= 0.0)
    return rp_error_set(err, RP_EINVAL, "axis ratio %g must be finite and > 0", axis_ratio);
  if (axis_ratio < 0.3 || axis_ratio > 3.0)
    return rp_error_set(err, RP_EDOM, "axis ratio %g outside [0.3, 3]", axis_ratio);
  if (!isfinite(wavelength_mm) || wavelength_mm <= 0.0)
    return rp_error_set(err, RP_EINVAL, "wavelength %g mm must be finite and > 0",
                        wavelength_mm);
  if (!isfinite(creal(m)) || !isfinite(cimag(m)))
    return rp_error_set(err, RP_EINVAL, "refractive index m = %g%+gi is not finite",
                        creal(m), cimag(m));
  if (cimag(m) < 0.0 || creal(m) <= 0.0)
    return rp_error_set(err, RP_EDOM,
                        "refractive index m = %g%+gi outside Re m > 0, Im m >= 0",
                        creal(m), cimag(m));
  if (!(o.rel_tol > 0.0 && o.rel_tol <= 0.1))
    return rp_error_set(err, RP_EINVAL, "T-matrix rel_tol %g outside (0, 0.1]", o.rel_tol);
  if (o.nmax_limit < 1 || o.nmax_limit > ws->lim)
    return rp_error_set(err, RP_EINVAL,
                        "T-matrix nmax_limit %d outside [1, %d] (workspace capacity)",
                        o.nmax_limit, ws->lim);

  const double k = 2.0 * M_PI / wavelength_mm;
  const double a_mm = 0.5 * d_mm * pow(axis_ratio, -1.0 / 3.0);
  const double b_mm = 0.5 * d_mm * pow(axis_ratio, 2.0 / 3.0);
  const double krmax = k * (a_mm > b_mm ? a_mm : b_mm);
  ws->k = k;
  int nmax = (int)floor(krmax + 4.05 * cbrt(krmax) + 2.0 + 0.5);
  if (nmax < 2) nmax = 2;
  const int limit = o.nmax_limit;
  if (nmax + 1 > limit)
    return no_conv(ws, err, d_mm, axis_ratio, wavelength_mm, m, nmax, limit,
                   "starting n_max exceeds the limit");

  int ratio = RATIO_START;
  double complex prev[4], cur[4], fine[4];
  double best_change = HUGE_VAL;
  rp_status st = solve_fixed(ws, nmax, ratio * nmax, a_mm, b_mm, m);
  if (st != RP_OK)
    return no_conv(ws, err, d_mm, axis_ratio, wavelength_mm, m, nmax, limit,
                   "singular or overflowing Q matrix");
  broadside(ws, prev);
  for (;;) {
    nmax++;
    if (nmax > limit)
      return no_conv(ws, err, d_mm, axis_ratio, wavelength_mm, m, nmax - 1, limit,
                     "amplitudes still changing");
    st = solve_fixed(ws, nmax, ratio * nmax, a_mm, b_mm, m);
    if (st != RP_OK)
      return no_conv(ws, err, d_mm, axis_ratio, wavelength_mm, m, nmax, limit,
                     "singular or overflowing Q matrix");
    broadside(ws, cur);
    const double change = rel_change(cur, prev);
    if (!(change <= o.rel_tol)) {
      /* Loss of precision in Q (large |m| k r and asphericity) shows as changes that
       * grow again after a minimum; a growth by DIVERGENCE_FACTOR means more terms
       * only add round-off, so stop instead of running to the limit. */
      if (change < best_change) best_change = change;
      if (change > DIVERGENCE_FACTOR * best_change)
        return no_conv(ws, err, d_mm, axis_ratio, wavelength_mm, m, nmax, limit,
                       "amplitudes diverging (loss of precision)");
      memcpy(prev, cur, sizeof prev);
      continue;
    }
    /* converged in n_max: check with twice the quadrature points */
    if (2 * ratio * nmax > ws->ng_cap)
      return no_conv(ws, err, d_mm, axis_ratio, wavelength_mm, m, nmax, limit,
                     "quadrature cap reached");
    st = solve_fixed(ws, nmax, 2 * ratio * nmax, a_mm, b_mm, m);
    if (st != RP_OK)
      return no_conv(ws, err, d_mm, axis_ratio, wavelength_mm, m, nmax, limit,
                     "singular or overflowing Q matrix");
    broadside(ws, fine);
    if (rel_change(fine, cur) <= o.rel_tol) return RP_OK; /* keep the finer solution */
    if (2 * ratio > RATIO_MAX)
      return no_conv(ws, err, d_mm, axis_ratio, wavelength_mm, m, nmax, limit,
                     "quadrature not converged");
    ratio *= 2;
    memcpy(prev, fine, sizeof prev);
  }
}

/* theta/phi of a direction: cos, sin (>= 0) and e^{i phi} (1 on the axis). */
static int direction(const double k[3], double *c, double *s, double complex *e) {
  const double rho2 = k[0] * k[0] + k[1] * k[1];
  const double nrm = sqrt(rho2 + k[2] * k[2]);
  if (!(nrm > 0.0) || !isfinite(nrm)) return 1;
  const double rho = sqrt(rho2);
  *c = k[2] / nrm;
  if (*c > 1.0) *c = 1.0;
  if (*c < -1.0) *c = -1.0;
  *s = rho / nrm;
  *e = rho > 0.0 ? (k[0] + IU * k[1]) / rho : 1.0;
  return 0;
}

void rp_tmatrix_amplitude(const void *ctx, const double k_inc[3], const double k_sca[3],
                          double complex s[2][2]) {
  const rp_tmatrix_ws *ws = ctx;
  double ci, si, cs, ss;
  double complex ei, es;
  if (ws == NULL || !ws->solved || direction(k_inc, &ci, &si, &ei) ||
      direction(k_sca, &cs, &ss, &es)) {
    s[0][0] = s[0][1] = s[1][0] = s[1][1] = NAN;
    return;
  }
  enum { NH = RP_TMATRIX_NMAX_HARD + 1 };
  static const double complex ipow[4] = {1.0, CMPLX(0.0, 1.0), -1.0, CMPLX(0.0, -1.0)};
  const int nmax = ws->nmax;
  const size_t n1 = (size_t)ws->lim + 1;
  double pi_i[NH], tau_i[NH], pi_s[NH], tau_s[NH];
  double complex ap[NH], au[NH], bp[NH], bu[NH], y1[NH], y2[NH], z1[NH], z2[NH];
  const double complex ed = es * conj(ei); /* e^{i (phi_s - phi_i)} */
  double complex em = 1.0;                  /* e^{i m (phi_s - phi_i)} */
  double complex stt = 0, stp = 0, spt = 0, spp = 0;
  for (int m = 0; m <= nmax; m++) {
    const double *root = ws->root + (size_t)m * n1;
    rp_special_wigner_d(m, nmax, ci, si, root, NULL, pi_i, tau_i);
    rp_special_wigner_d(m, nmax, cs, ss, root, NULL, pi_s, tau_s);
    const int n0 = m > 1 ? m : 1, l = nmax - n0 + 1;
    for (int i = 0; i < l; i++) {
      const int n = n0 + i;
      const double complex pin = ipow[n & 3] * ws->dn[n];
      const double complex pout = conj(pin); /* (-i)^n d_n */
      ap[i] = pin * pi_i[n];
      au[i] = pin * tau_i[n];
      bp[i] = pout * pi_s[n];
      bu[i] = pout * tau_s[n];
    }
    const size_t sl = (size_t)l, smm = 2 * sl;
    const double complex *t = ws->t + ws->toff[m];
    double complex gtt = 0, gtp = 0, gpt = 0, gpp = 0;
    for (int i = 0; i < l; i++) {
      const double complex *r1 = t + (size_t)i * smm;        /* T11 | T12 row */
      const double complex *r2 = t + (sl + (size_t)i) * smm; /* T21 | T22 row */
      double complex v1 = 0, v2 = 0, w1 = 0, w2 = 0;
      /* T11, T22: n + n' even; T12, T21: n + n' odd (mirror symmetry) */
      for (int j = i & 1; j < l; j += 2) {
        v1 += r1[j] * ap[j];
        w1 += r1[j] * au[j];
        v2 += r2[sl + (size_t)j] * au[j];
        w2 += r2[sl + (size_t)j] * ap[j];
      }
      if (m != 0) {
        for (int j = (i + 1) & 1; j < l; j += 2) {
          v1 += r1[sl + (size_t)j] * au[j];
          w1 += r1[sl + (size_t)j] * ap[j];
          v2 += r2[j] * ap[j];
          w2 += r2[j] * au[j];
        }
      }
      y1[i] = v1; /* T11 a_pi + T12 a_tau */
      z1[i] = w1; /* T11 a_tau + T12 a_pi */
      y2[i] = v2; /* T21 a_pi + T22 a_tau */
      z2[i] = w2; /* T21 a_tau + T22 a_pi */
    }
    for (int i = 0; i < l; i++) {
      gtt += bp[i] * y1[i] + bu[i] * y2[i];
      gtp += bp[i] * z1[i] + bu[i] * z2[i];
      gpt += bu[i] * y1[i] + bp[i] * y2[i];
      gpp += bu[i] * z1[i] + bp[i] * z2[i];
    }
    if (m == 0) {
      stt += gtt;
      spp += gpp;
    } else {
      /* m and -m together: tt, pp even in m, tp, pt odd */
      const double c2 = 2.0 * creal(em), s2 = 2.0 * cimag(em);
      stt += c2 * gtt;
      spp += c2 * gpp;
      stp += IU * s2 * gtp;
      spt += IU * s2 * gpt;
    }
    em *= ed;
  }
  const double f = 4.0 * M_PI / ws->k;
  s[0][0] = -IU * f * stt;
  s[0][1] = -f * stp;
  s[1][0] = f * spt;
  s[1][1] = -IU * f * spp;
}
