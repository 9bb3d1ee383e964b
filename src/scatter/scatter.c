/* scatter.c — basis vectors and unit helpers shared by the scattering methods. */
#include "rainprint/scatter.h"

#include <math.h>

double rp_wavelength_mm(double freq_ghz) { return RP_C_MM_GHZ / freq_ghz; }

void rp_scatter_basis(const double k[3], double theta_hat[3], double phi_hat[3]) {
  double kz = k[2];
  if (kz > 1.0) kz = 1.0;
  if (kz < -1.0) kz = -1.0;
  const double t = acos(kz);
  const double p = (k[0] == 0.0 && k[1] == 0.0) ? 0.0 : atan2(k[1], k[0]);
  const double ct = cos(t), st = sin(t), cp = cos(p), sp = sin(p);
  theta_hat[0] = ct * cp;
  theta_hat[1] = ct * sp;
  theta_hat[2] = -st;
  phi_hat[0] = -sp;
  phi_hat[1] = cp;
  phi_hat[2] = 0.0;
}
