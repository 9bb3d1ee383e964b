/* fuzz_table_hdf5.c — libFuzzer target: the whole scattering-table loader on an
 * arbitrary file image (rp_table_load_mem: size cap, HDF5 signature, netCDF-4 parse
 * from memory, structure, bounds, checksums). Not in the default set of
 * scripts/fuzz.sh: HDF5 1.10 crashes on crafted files within seconds (a bad free in
 * H5G__link_release_table, inside the library); run it with
 * RP_FUZZ_TARGETS=table_hdf5 to look at that.
 * Oracle: a refusal is RP_ETABLE or RP_ENOMEM with a message; an accepted table passes
 * rp_table_validate again and its every value is finite.
 * Known limit: the input reaches the HDF5 library, which a crafted file can still crash
 * (a defect there, docs/method.md §16); such findings are HDF5's. fuzz_table.c
 * covers our own layers without handing fuzz bytes to HDF5. */
#include <stddef.h>
#include <stdint.h>

#include "fuzz_oracle.h"
#include "rainprint/table_file.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size) {
  rp_table *t = NULL;
  rp_error e = {0};
  const rp_status s = rp_table_load_mem("fuzz.nc", data, size, &t, &e);
  if (s != RP_OK) {
    fuzz_check_error(s, &e);
    FUZZ_REQUIRE(t == NULL, "table on failure");
    FUZZ_REQUIRE(s == RP_ETABLE || s == RP_ENOMEM, "load status %s: %s", rp_status_name(s), e.msg);
    return 0;
  }
  FUZZ_REQUIRE(rp_table_validate(t, "fuzz.nc", &e) == RP_OK, "accepted table invalid: %s", e.msg);
  for (size_t v = 0; v < rp_table_n_columns(); v++) {
    const double *x = rp_table_column_data_const(t, v);
    for (size_t i = 0; i < t->n; i++) FUZZ_REQUIRE(isfinite(x[i]), "value not finite");
  }
  rp_table_free(t);
  return 0;
}
