/* fuzz_spectrum.c — libFuzzer target: the spectrum CSV reader on arbitrary bytes.
 * Oracle: a refusal is RP_EPARSE or RP_ENOMEM with a message; an accepted set has bins
 * and rows, every concentration finite in [0, RP_DSD_CONC_MAX], and every row is a DSD
 * that is refused with a message or has finite, physical moments. */
#include <stddef.h>
#include <stdint.h>

#include "fuzz_oracle.h"
#include "rainprint/spectrum.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size) {
  rp_spectrum_set *set = NULL;
  rp_error e = {0};
  const rp_status s = rp_spectrum_load_data("fuzz.csv", (const char *)data, size, &set, &e);
  if (s != RP_OK) {
    fuzz_check_error(s, &e);
    FUZZ_REQUIRE(set == NULL, "output set on failure");
    FUZZ_REQUIRE(s == RP_EPARSE || s == RP_ENOMEM, "load status %s: %s", rp_status_name(s), e.msg);
    return 0;
  }
  FUZZ_REQUIRE(set->n_bins >= 1 && set->n_rows >= 1, "empty set accepted");
  for (size_t r = 0; r < set->n_rows && r < 64; r++) {
    for (size_t b = 0; b < set->n_bins; b++) {
      const double x = set->conc[r * set->n_bins + b];
      FUZZ_REQUIRE(isfinite(x) && x >= 0.0 && x <= RP_DSD_CONC_MAX, "concentration %g", x);
    }
    rp_dsd d;
    const rp_status sd = rp_spectrum_row_dsd(set, r, &d, &e);
    if (sd != RP_OK) {
      fuzz_check_error(sd, &e);
      FUZZ_REQUIRE(sd == RP_EDOM, "row %zu status %s: %s", r, rp_status_name(sd), e.msg);
      continue;
    }
    fuzz_check_moments(&d);
  }
  rp_spectrum_free(set);
  return 0;
}
