/* fuzz_table.c — libFuzzer target: rainprint's own layers of the table loader, without
 * handing fuzz bytes to HDF5 (which crashes on crafted files: fuzz_table_hdf5.c).
 * Two modes, by the first byte of the input:
 *  'F': the rest is a file image that does not start with the HDF5 signature (inputs
 *       that do are skipped): rp_table_load_mem must refuse it (RP_ETABLE with a
 *       message) before any parsing; this drives the size and signature pre-checks.
 *  else: the input is a list of 10-byte edits (2-byte cell index, 8-byte IEEE value)
 *       applied to a valid table in memory (a Rayleigh table built at start-up, every
 *       column and the permittivity attributes addressable); rp_table_validate decides.
 * Oracle for an accepted edited table: every value finite, the checksum deterministic,
 * and the radar variables of a Marshall-Palmer rain integrated over it finite with
 * rhohv <= 1 (what the bounds are for). */
#include <stddef.h>
#include <stdint.h>

#include "fuzz_oracle.h"
#include "rainprint/gate.h"
#include "rainprint/table_file.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerInitialize(int *argc, char ***argv);

static rp_table *base;

int LLVMFuzzerInitialize(int *argc, char ***argv) {
  (void)argc;
  (void)argv;
  rp_drop_config c;
  rp_drop_config_default(&c);
  c.method = RP_METHOD_RAYLEIGH;
  rp_error e = {0};
  FUZZ_REQUIRE(rp_table_build(&c, 0.5, 6.0, 0.5, &base, &e) == RP_OK, "base table: %s", e.msg);
  FUZZ_REQUIRE(rp_table_validate(base, "base", &e) == RP_OK, "base table invalid: %s", e.msg);
  return 0;
}

static rp_table *copy_table(const rp_table *t) {
  rp_table *u = rp_table_alloc(t->n);
  FUZZ_REQUIRE(u != NULL, "out of memory");
  u->cfg = t->cfg;
  u->fall_model = t->fall_model;
  u->wavelength_mm = t->wavelength_mm;
  u->eps_re = t->eps_re;
  u->eps_im = t->eps_im;
  for (size_t v = 0; v < rp_table_n_columns(); v++)
    memcpy(rp_table_column_data(u, v), rp_table_column_data_const(t, v), t->n * sizeof(double));
  return u;
}

static void check_gate(const rp_table *t) {
  rp_error e = {0};
  rp_gate_plan *p = NULL;
  rp_status s = rp_gate_plan_alloc(t, t->d_mm[0], t->d_mm[t->n - 1], 0.93, &p, &e);
  if (s != RP_OK) {
    fuzz_check_error(s, &e);
    return;
  }
  rp_dsd d;
  FUZZ_REQUIRE(rp_dsd_marshall_palmer(&d, 10.0, &e) == RP_OK, "MP: %s", e.msg);
  rp_gate_result r;
  s = rp_gate_eval(p, &d, &r, &e);
  if (s == RP_OK) {
    const double v[] = {r.zh_dbz, r.zdr_db, r.kdp_deg_km, r.rhohv, r.ah_db_km};
    for (size_t i = 0; i < sizeof v / sizeof v[0]; i++)
      FUZZ_REQUIRE(isfinite(v[i]), "gate variable %zu = %g not finite", i, v[i]);
    FUZZ_REQUIRE(r.rhohv <= 1.0 + 1e-6, "rhohv = %.17g above 1", r.rhohv);
  } else {
    fuzz_check_error(s, &e);
  }
  rp_gate_plan_free(p);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size) {
  rp_error e = {0};
  if (size >= 1 && data[0] == 'F') {
    static const unsigned char sig[8] = {0x89, 'H', 'D', 'F', '\r', '\n', 0x1a, '\n'};
    if (size - 1 >= 8 && memcmp(data + 1, sig, 8) == 0) return 0; /* would reach HDF5 */
    rp_table *t = NULL;
    const rp_status s = rp_table_load_mem("fuzz.nc", data + 1, size - 1, &t, &e);
    FUZZ_REQUIRE(s == RP_ETABLE && t == NULL, "non-HDF5 image not refused: %s",
                 rp_status_name(s));
    fuzz_check_error(s, &e);
    return 0;
  }
  rp_table *t = copy_table(base);
  const size_t ncol = rp_table_n_columns(), cells = ncol * t->n + 2;
  for (size_t k = 0; k + 10 <= size; k += 10) {
    const size_t idx = ((size_t)data[k] | (size_t)data[k + 1] << 8) % cells;
    double x;
    memcpy(&x, data + k + 2, sizeof x);
    if (idx == cells - 2)
      t->eps_re = x;
    else if (idx == cells - 1)
      t->eps_im = x;
    else
      rp_table_column_data(t, idx % ncol)[idx / ncol] = x;
  }
  const rp_status s = rp_table_validate(t, "fuzz", &e);
  if (s != RP_OK) {
    fuzz_check_error(s, &e);
    FUZZ_REQUIRE(s == RP_ETABLE, "validate status %s", rp_status_name(s));
  } else {
    for (size_t v = 0; v < ncol; v++)
      for (size_t i = 0; i < t->n; i++)
        FUZZ_REQUIRE(isfinite(rp_table_column_data_const(t, v)[i]), "accepted non-finite");
    FUZZ_REQUIRE(rp_table_checksum(t) == rp_table_checksum(t), "checksum not deterministic");
    check_gate(t);
  }
  rp_table_free(t);
  return 0;
}
