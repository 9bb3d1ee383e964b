/* fuzz_scenario.c — libFuzzer target: the scenario YAML loader on arbitrary bytes.
 * Oracle: a refusal is RP_EPARSE, RP_EIO or RP_ENOMEM with a message (RP_EIO for a named
 * preset that cannot be found: the target gives no presets folder); an accepted scenario
 * passes rp_scenario_check, its wavelength, Nyquist velocity and freezing level are finite
 * and positive, and the rain and wind fields at points over the radar's coverage are
 * finite, with every DSD inside the fast path's domain and its moments physical. */
#include <stddef.h>
#include <stdint.h>

#include "fuzz_oracle.h"
#include "rainprint/gate.h"
#include "rainprint/scenario.h"
#include "rainprint/scenario_file.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size) {
  rp_scenario s;
  rp_error e = {0};
  const rp_status st = rp_scenario_load_data("fuzz.yaml", (const char *)data, size, NULL, &s, &e);
  if (st != RP_OK) {
    fuzz_check_error(st, &e);
    FUZZ_REQUIRE(st == RP_EPARSE || st == RP_EIO || st == RP_ENOMEM, "load status %s: %s",
                 rp_status_name(st), e.msg);
    return 0;
  }
  char key[96];
  FUZZ_REQUIRE(rp_scenario_check(&s, key, sizeof key, &e) == RP_OK,
               "accepted scenario fails its check at %s: %s", key, e.msg);
  const double lam = rp_scenario_wavelength_m(&s), va = rp_scenario_nyquist_ms(&s);
  const double fl = rp_scenario_freezing_level_m(&s);
  FUZZ_REQUIRE(isfinite(lam) && lam > 0.0 && isfinite(va) && va > 0.0 && !isnan(fl),
               "wavelength %g m, Nyquist %g m/s, freezing level %g m", lam, va, fl);
  const double r_km = 1e-3 * s.radar.gate_spacing_m * (double)s.radar.gates;
  for (int i = 0; i < 5; i++)
    for (int j = 0; j < 5; j++) {
      const double x = r_km * (i - 2) / 2.0, y = r_km * (j - 2) / 2.0;
      double nw, d0, mu, u, v;
      if (rp_scenario_dsd_at(&s, x, y, &nw, &d0, &mu)) {
        FUZZ_REQUIRE(isfinite(nw) && nw > 0.0 && d0 >= RP_GATE_FAST_D0_MIN_MM &&
                         d0 <= RP_GATE_FAST_D0_MAX_MM && mu >= RP_GATE_FAST_MU_MIN &&
                         mu <= RP_GATE_FAST_MU_MAX,
                     "DSD at (%g, %g) km: Nw %g, D0 %g, mu %g", x, y, nw, d0, mu);
        rp_dsd d;
        if (rp_dsd_normalized_gamma_d0(&d, nw, d0, mu, &e) == RP_OK) fuzz_check_moments(&d);
      }
      rp_scenario_wind_at(&s, x, y, &u, &v);
      FUZZ_REQUIRE(isfinite(u) && isfinite(v), "wind at (%g, %g) km: %g, %g", x, y, u, v);
    }
  return 0;
}
