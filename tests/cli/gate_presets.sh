#!/usr/bin/env bash
# End-to-end runs of `rainprint gate` and `rainprint presets`, bad input included.
# Usage: gate_presets.sh TOOL BUILD_DIR
set -u
source "$(dirname "${BASH_SOURCE[0]}")/../cli_common.sh" gate_presets "$@"

expect 0 "$rp" gate --help
has "Example" out
expect 0 "$rp" presets --help
expect 0 "$rp" presets
has "maritime-downpour" out
expect 0 "$rp" presets --json
/usr/bin/python3 -c 'import json,sys; a=json.load(open(sys.argv[1])); assert len(a) >= 6; assert all("source" in p and p["s_band"]["zh_dbz"] > 0 for p in a)' "$work/out" && ok || bad "presets json"

expect 0 "$rp" gate --preset maritime-downpour
has "KDP" out
expect 0 "$rp" gate --dsd normalized-gamma --nw 8000 --d0 1.5 --mu 3 --band S,C,X --json
/usr/bin/python3 - "$work/out" <<'PY' && ok || bad "gate --json"
import json, sys
r = json.load(open(sys.argv[1]))
d = r["dsd"]
for k in ["model", "nt_m3", "lwc_g_m3", "rain_rate_mm_h", "dm_mm", "d0_mm", "sigma_m_mm", "nw_m3_mm", "z_rayleigh_dbz"]:
    assert k in d, k
assert [x["band"] for x in r["results"]] == ["S", "C", "X"]
for x in r["results"]:
    for k in ["band", "frequency_ghz", "temperature_c", "elevation_deg", "shape_model", "canting_sd_deg", "zh_dbz",
              "zv_dbz", "zdr_db", "kdp_deg_km", "rhohv", "delta_hv_deg", "ldr_db", "ah_db_km", "adp_db_km"]:
        assert k in x, k
s, c, x = r["results"]
# common practice: attenuation grows S -> C -> X; D0 as given
assert s["ah_db_km"] < c["ah_db_km"] < x["ah_db_km"]
# the reported D0 is the exact median; Lambda D0 = 3.67 + mu (Ulbrich 1983) is good to 0.1 % here
assert abs(d["d0_mm"] - 1.5) < 0.01
PY
expect 0 "$rp" gate --dsd marshall-palmer --rain-rate 10 --frequency 13.6 --json
/usr/bin/python3 -c 'import json,sys; r=json.load(open(sys.argv[1])); assert r["results"][0]["band"] is None' "$work/out" && ok || bad "explicit frequency has band null"
expect 0 "$rp" gate --dsd gamma --n0 8000 --mu 2 --lambda 3 --band X --temperature 20 --elevation 5 --canting-sd 10
expect 0 "$rp" gate --spectrum "$src/tests/data/spectra/good.csv" --row 2 --band C
has "row 2" out
expect 0 "$rp" gate --dsd exponential --n0 8000 --lambda 2 --shape sphere --canting-sd 0 --band S --json
/usr/bin/python3 -c 'import json,sys; r=json.load(open(sys.argv[1]))["results"][0]; assert abs(r["zdr_db"]) < 1e-6 and r["ldr_db"] == -99.0 and abs(r["rhohv"]-1) < 1e-9' "$work/out" && ok || bad "spheres"

# --height: fall speeds corrected to the air at 3 km: (rho_ref/rho(3 km))^0.4 with
# rho_ref = 1.2041 kg m^-3 (20 C) and rho(3 km) = 0.9093 kg m^-3 (U.S. Standard Atmosphere
# 1976, from memory; Foote & du Toit 1969 exponent 0.4) = 1.119 -> R grows by that factor
expect 0 "$rp" gate --preset gentle-stratiform --band S --json
cp "$work/out" "$work/h0.json"
expect 0 "$rp" gate --preset gentle-stratiform --band S --height 3 --json
check "rain rate corrected for height" "$work/h0.json" "$work/out" <<'PY'
import json, sys
r0 = json.load(open(sys.argv[1]))["dsd"]["rain_rate_mm_h"]
r3 = json.load(open(sys.argv[2]))["dsd"]["rain_rate_mm_h"]
assert 1.11 < r3 / r0 < 1.13, r3 / r0
PY
expect 2 "$rp" gate --preset gentle-stratiform --height 99
has "height" err

# bad input: exit 2 with one line naming the problem
expect 2 "$rp" gate
expect 2 "$rp" gate --preset no-such-rain
has "no-such-rain" err
expect 2 "$rp" gate --dsd lognormal
has "unknown model" err
expect 2 "$rp" gate --dsd gamma --n0 8000 --mu 2
has "lambda" err
expect 2 "$rp" gate --dsd exponential --n0 8000 --lambda 2 --nw 5
has "does not apply" err
expect 2 "$rp" gate --dsd exponential --n0 -5 --lambda 2
expect 2 "$rp" gate --dsd exponential --n0 nan --lambda 2
expect 2 "$rp" gate --dsd marshall-palmer --rain-rate 10 --band S,W
expect 2 "$rp" gate --dsd marshall-palmer --rain-rate 10 --kw2 1.5
expect 2 "$rp" gate --dsd marshall-palmer --rain-rate 10 --dmax 12
expect 2 "$rp" gate --preset maritime-downpour --dsd gamma
expect 2 "$rp" gate --spectrum "$src/tests/data/spectra/bad_text_in_number.csv"
has "bad_text_in_number.csv:4" err
expect 2 "$rp" gate --spectrum "$src/tests/data/spectra/bad_nonmonotonic.csv"
expect 2 "$rp" gate --spectrum "$src/tests/data/spectra/bad_empty.csv"
expect 2 "$rp" gate --spectrum "$work/missing.csv"
expect 2 "$rp" gate --spectrum "$src/tests/data/spectra/good.csv" --row 99
printf 'name: broken\nmodel: gamma\nparameters: {n0: 8000, mu: 2, lambda_per_mm: fast}\nsource: invented\ndescription: x\n' > "$work/broken.yaml"
mkdir -p "$work/presets" && cp "$work/broken.yaml" "$work/presets/"
RAINPRINT_PRESETS="$work/presets" expect 2 "$rp" presets
has "broken.yaml" err

# a scattering table named by the user: used when it matches, refused when it does not
expect 0 "$rp" table --band X --temperature 20 --canting-sd 3 --out "$work/x20.nc"
expect 0 "$rp" gate --preset gentle-stratiform --table "$work/x20.nc" --json
/usr/bin/python3 -c 'import json,sys; r=json.load(open(sys.argv[1]))["results"]; assert len(r) == 1 and r[0]["band"] == "X" and r[0]["table"] == "given" and r[0]["temperature_c"] == 20' "$work/out" && ok || bad "given table"
expect 2 "$rp" gate --preset gentle-stratiform --table "$work/x20.nc" --temperature 10
has "20 C, not 10 C" err
expect 2 "$rp" gate --preset gentle-stratiform --table "$work/missing.nc"
has "missing.nc" err
echo "not netCDF" > "$work/junk.nc"
expect 2 "$rp" gate --preset gentle-stratiform --table "$work/junk.nc"
has "junk.nc" err

finish
