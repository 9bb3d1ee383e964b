/* fuzz_climate.c — libFuzzer target: the climate YAML loader on arbitrary bytes.
 * Oracle: a refusal is RP_EPARSE or RP_ENOMEM with a message; an accepted climate passes
 * rp_climate_validate, and members drawn from it give DSDs that are refused with a
 * message or have finite, physical moments. */
#include <stddef.h>
#include <stdint.h>

#include "fuzz_oracle.h"
#include "io/climate_data.h"
#include "rainprint/ensemble.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size) {
  rp_climate c;
  rp_error e = {0};
  const rp_status s = rp_climate_load_yaml_data("fuzz.yaml", (const char *)data, size, &c, &e);
  if (s != RP_OK) {
    fuzz_check_error(s, &e);
    FUZZ_REQUIRE(s == RP_EPARSE || s == RP_ENOMEM, "load status %s: %s", rp_status_name(s), e.msg);
    return 0;
  }
  FUZZ_REQUIRE(rp_climate_validate(&c, &e) == RP_OK, "accepted climate fails validation: %s",
               e.msg);
  rp_ensemble_member m[4];
  FUZZ_REQUIRE(rp_ensemble_draw(&c, 4, 7, m, &e) == RP_OK, "draw failed: %s", e.msg);
  for (size_t i = 0; i < 4; i++) {
    rp_dsd d;
    const rp_status sd = rp_ensemble_member_dsd(&m[i], &d, &e);
    if (sd != RP_OK) {
      fuzz_check_error(sd, &e);
      continue;
    }
    fuzz_check_moments(&d);
  }
  return 0;
}
