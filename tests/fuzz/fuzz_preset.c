/* fuzz_preset.c — libFuzzer target: the preset YAML loader on arbitrary bytes.
 * Oracle: a refusal is RP_EPARSE or RP_ENOMEM with a message; an accepted preset has a
 * valid name and a DSD whose moments are finite and physical (fuzz_oracle.h). */
#include <stddef.h>
#include <stdint.h>

#include "fuzz_oracle.h"
#include "rainprint/presets.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size) {
  rp_preset p;
  rp_error e = {0};
  const rp_status s = rp_preset_load_data("fuzz.yaml", (const char *)data, size, &p, &e);
  if (s != RP_OK) {
    fuzz_check_error(s, &e);
    FUZZ_REQUIRE(s == RP_EPARSE || s == RP_ENOMEM, "load status %s: %s", rp_status_name(s), e.msg);
    return 0;
  }
  FUZZ_REQUIRE(p.name[0] != '\0' && memchr(p.name, '\0', sizeof p.name), "bad name");
  fuzz_check_moments(&p.dsd);
  return 0;
}
