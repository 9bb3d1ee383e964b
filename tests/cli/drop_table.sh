#!/usr/bin/env bash
# End-to-end runs of `rainprint drop` and `rainprint table`, bad input included.
# Usage: drop_table.sh TOOL BUILD_DIR
set -u
source "$(dirname "${BASH_SOURCE[0]}")/../cli_common.sh" drop_table "$@"

expect 0 "$rp" --version
expect 0 "$rp" --help
expect 0 "$rp" drop --help
expect 0 "$rp" table --help
has "Example" out
expect 2 "$rp" frobnicate
expect 0 "$rp" drop --diameter 3 --band S
expect 0 "$rp" drop --diameter 3 --band X --json
/usr/bin/python3 - "$work/out" <<'PY' && ok || bad "drop --json keys"
import json, sys
r = json.load(open(sys.argv[1]))
keys = ["diameter_mm", "frequency_ghz", "wavelength_mm", "temperature_c", "permittivity",
        "axis_ratio", "shape_model", "canting_sd_deg", "elevation_deg", "method", "back_hh_mm",
        "back_vv_mm", "back_hv_mm", "fwd_hh_mm", "fwd_vv_mm", "sigma_hh_mm2", "sigma_vv_mm2",
        "sigma_hv_mm2", "ext_h_mm2", "ext_v_mm2"]
missing = [k for k in keys if k not in r]
assert not missing, missing
for k in ["permittivity", "back_hh_mm", "back_vv_mm", "back_hv_mm", "fwd_hh_mm", "fwd_vv_mm"]:
    assert set(r[k]) == {"re", "im"}, k
assert r["frequency_ghz"] == 9.4 and r["method"] == "tmatrix"
assert r["sigma_hh_mm2"] > r["sigma_vv_mm2"] > 0 and r["ext_h_mm2"] > 0
PY
expect 0 "$rp" drop --diameter 2 --shape sphere --method mie --frequency 5.6 --json
/usr/bin/python3 - "$work/out" <<'PY' && ok || bad "mie sphere json"
import json, sys
r = json.load(open(sys.argv[1]))
assert r["axis_ratio"] == 1.0 and r["back_hh_mm"] == r["back_vv_mm"] and r["sigma_hv_mm2"] == 0.0
assert r["band"] is None  # an explicit frequency has no band letter, even at a band centre
PY

# bad input: exit 2, one line naming the problem
expect 2 "$rp" drop
expect 2 "$rp" drop --diameter 0
expect 2 "$rp" drop --diameter -1
expect 2 "$rp" drop --diameter 12
expect 2 "$rp" drop --diameter nan
expect 2 "$rp" drop --diameter 3mm
expect 2 "$rp" drop --diameter 0x3   # the plain-decimal rule of the input files: no hex
has "0x3" err
expect 2 "$rp" drop --diameter 1e999
expect 2 "$rp" drop --diameter 3 --band W
grep -q "band" "$work/err" && ok || bad "band message"
expect 2 "$rp" drop --diameter 3 --shape egg
grep -q "shape" "$work/err" && ok || bad "shape message"
expect 2 "$rp" drop --diameter 3 --temperature 90
grep -q "temperature" "$work/err" && ok || bad "temperature message"
expect 2 "$rp" drop --diameter 3 --method mie
expect 2 "$rp" drop --diameter 3 --band S --frequency 3
expect 2 "$rp" drop --diameter 3 --elevation 95
expect 2 "$rp" drop --diameter 3 --no-such-option

# table: written whole, loadable, refused when the folder does not exist
expect 0 "$rp" table --band S --dmin 0.5 --dmax 3 --dstep 0.5 --out "$work/s.nc"
[[ -s "$work/s.nc" ]] && ok || bad "table file missing"
expect 0 "$rp" table --band S --dmin 0.5 --dmax 3 --dstep 0.5 --out "$work/s.nc" --json
check "table --json" "$work/out" <<'PY'
import json, sys
r = json.load(open(sys.argv[1]))
assert r["band"] == "S" and r["frequency_ghz"] == 2.8 and r["temperature_c"] == 10, r
# the grid 0.5, 1.0, ..., 3.0 plus the knots the table adds beside the shape model's
# breakpoints inside it (table.h), so at least 6 diameters
assert r["diameters"] >= 6 and r["dmin_mm"] == 0.5 and r["dmax_mm"] == 3, r
assert r["out"].endswith("/s.nc"), r
PY
# a step that does not divide --dmax - --dmin: the grid stops short of --dmax, and the tool
# says so on stderr (gate then refuses its default 8 mm truncation with this table)
expect 0 "$rp" table --band S --dmin 0.5 --dmax 3 --dstep 0.5 --out "$work/s.nc"
[[ ! -s "$work/err" ]] && ok || bad "a note for a step that divides the range: $(cat "$work/err")"
expect 0 "$rp" table --band S --dmin 0.5 --dmax 3 --dstep 0.75 --out "$work/s.nc"
has "the table ends at 2.75 mm" err
has "0.500..2.750 mm" out
expect 2 "$rp" table --band S
expect 2 "$rp" table --band S --out "$work/no-such-dir/s.nc"
[[ ! -e "$work/no-such-dir" ]] && ok || bad "partial output"
ls "$work" | grep -q tmp- && bad "temporary file left behind" || ok
expect 2 "$rp" table --band S --dstep -1 --out "$work/t.nc"
[[ ! -e "$work/t.nc" ]] && ok || bad "partial output after bad step"

# output that cannot be written is a failure (exit 1, one line), never a silent success
if [[ -w /dev/full ]]; then
  expect 1 bash -c '"$0" drop --diameter 3 --band S > /dev/full' "$rp"
  has "could not write" err
  expect 1 bash -c '"$0" presets --json > /dev/full' "$rp"
fi

finish
