#!/usr/bin/env bash
# End-to-end runs of `rainprint relate`, bad input included.
# Usage: relate.sh TOOL BUILD_DIR
set -u
source "$(dirname "${BASH_SOURCE[0]}")/../cli_common.sh" relate "$@"
data="$src/tests/data/relate"
export RAINPRINT_CACHE="$work/cache"

# help, default text output with the caution
expect 0 "$rp" relate --help
has "Example" "$work/out"
has "Caution" "$work/out"
expect 0 "$rp" relate
has "C band" "$work/out"
has "R(Zh,ZDR)" "$work/out"
has "validated\|Validate" "$work/out"
has "local authority" "$work/out"

# JSON: contract keys, names, seed; same seed -> same text; other seed -> overlapping CIs
expect 0 "$rp" relate --band S --json
cp "$work/out" "$work/s1.json"
expect 0 "$rp" relate --band S --json --seed 1
cmp -s "$work/s1.json" "$work/out" && ok || bad "same seed gave different JSON"
expect 0 "$rp" relate --band S --json --seed 2
cp "$work/out" "$work/s2.json"
cmp -s "$work/s1.json" "$work/s2.json" && bad "seed 2 gave the JSON of seed 1" || ok
$py - "$work/s1.json" "$work/s2.json" <<'PY' && ok || bad "relate --json contract"
import json, sys
r1, r2 = (json.load(open(p)) for p in sys.argv[1:3])
for k in ["band", "frequency_ghz", "temperature_c", "samples", "seed", "relations", "caution"]:
    assert k in r1, k
assert r1["band"] == "S" and r1["frequency_ghz"] == 2.8 and r1["samples"] == 5000
assert r1["seed"] == 1 and r2["seed"] == 2
assert "gauges" in r1["caution"] and "local authority" in r1["caution"]
names = [x["name"] for x in r1["relations"]]
assert names == ["R(Zh)", "Zh(R)", "R(KDP)", "R(Zh,ZDR)", "R(KDP,ZDR)", "AH(KDP)",
                 "ADP(KDP)", "AH(Zh)", "Dm(ZDR)"], names
keys = ["name", "form", "a", "b", "a_ci95", "b_ci95", "n_fit", "bias_pct", "rmse",
        "fse_pct", "corr"]
for x in r1["relations"]:
    missing = [k for k in keys if k not in x]
    assert not missing, (x["name"], missing)
    assert x["a_ci95"][0] < x["a"] < x["a_ci95"][1], x["name"]
    two = "," in x["name"]
    assert ("c" in x) == two and ("c_ci95" in x) == two, x["name"]
rk = r1["relations"][2]
assert rk["form"] == "R = a KDP^b"
assert r1["relations"][0]["z_form"] == "Zh = a R^b"
# seeds 1 and 2: 95 % intervals of a and b overlap (non-overlap has probability 0.6 %
# per comparison for independent draws; none measured in 420 comparisons)
misses = 0
for x, y in zip(r1["relations"], r2["relations"]):
    for k in ["a_ci95", "b_ci95"]:
        misses += not (x[k][0] <= y[k][1] and y[k][0] <= x[k][1])
assert misses <= 1, misses
PY

# relation selection
expect 0 "$rp" relate --band X --relations "R(KDP),AH(KDP)" --json
$py - "$work/out" <<'PY' && ok || bad "relation selection"
import json, sys
r = json.load(open(sys.argv[1]))
assert [x["name"] for x in r["relations"]] == ["R(KDP)", "AH(KDP)"]
PY
expect 0 "$rp" relate --band X --relations "R(Zh,ZDR)" --nonlinear --json
has '"fit": "nonlinear"' "$work/out"
has '"c_ci95"' "$work/out"
expect 0 "$rp" relate --band C --climate maritime --ensemble 400 --seed 3
has "maritime" "$work/out"
expect 0 "$rp" relate --band C --climate-file "$src/dsd-presets/climates/continental.yaml" --ensemble 400 --json
has '"climate_file"' "$work/out"

# bad input: exit 2 with one line naming the problem
expect 2 "$rp" relate --relations "R(kdp)"
has "R(Zh,ZDR)" "$work/err"
has "R(kdp)" "$work/err"
expect 2 "$rp" relate --relations "R(KDP),,AH(KDP)"
expect 2 "$rp" relate --ensemble 20
has "allowed range \[50, " "$work/err"
expect 2 "$rp" relate --ensemble 0
expect 2 "$rp" relate --ensemble many
expect 2 "$rp" relate --band X --min-kdp 100
has "too few samples" "$work/err"
has "KDP >= 100" "$work/err"
expect 2 "$rp" relate --min-kdp -1
expect 2 "$rp" relate --spectra "$data/spectra_no_valid_rows.csv"
has "no valid rows" "$work/err"
expect 2 "$rp" relate --spectra "$work/no-such-file.csv"
expect 2 "$rp" relate --spectra "$data/spectra_brackenford.csv" --seed 3
expect 2 "$rp" relate --spectra "$data/spectra_brackenford.csv" --max-diameter 9
has "allowed range (0, 8\]" "$work/err"
expect 2 "$rp" relate --min-nt 5
expect 2 "$rp" relate --climate tundra
has "mixed" "$work/err"
expect 2 "$rp" relate --climate mixed --climate-file "$src/dsd-presets/climates/mixed.yaml"
expect 2 "$rp" relate --climate-file "$work/none.yaml"
expect 2 "$rp" relate --band S --frequency 3
expect 2 "$rp" relate --method mie --shape sphere
expect 2 "$rp" relate --band W
expect 2 "$rp" relate --no-such-option
expect 2 "$rp" relate extra-argument

# a disdrometer file end to end (fixture invented for the test), with CSV and picture
expect 0 "$rp" relate --band X --spectra "$data/spectra_brackenford.csv" --json \
  --csv "$work/samples.csv" --plot "$work/fits.png"
$py - "$work/out" "$work/samples.csv" <<'PY' && ok || bad "spectra run"
import csv, json, sys
r = json.load(open(sys.argv[1]))
q = r["quality"]
assert r["source"] == "spectra" and r["seed"] is None
assert q["rows"] == 240 and q["removed_empty"] == 4 and q["removed_large_drop"] == 3
assert q["removed_low_nt"] == 3
assert r["samples"] == q["kept"] == 240 - 4 - 3 - 3 - q["removed_low_rain_rate"]
assert len(r["relations"]) == 9
rows = list(csv.DictReader(open(sys.argv[2])))
assert len(rows) == r["samples"]
for k in ["rain_rate_mm_h", "zh_dbz", "zdr_db", "kdp_deg_km", "ah_db_km", "adp_db_km",
          "dm_mm", "d0_mm", "nw_m3_mm", "lwc_g_m3"]:
    assert k in rows[0], k
assert rows[0]["label"].startswith("2031-07-14T")
assert all(float(x["rain_rate_mm_h"]) >= 0.1 for x in rows)
PY
head -c 8 "$work/fits.png" | od -An -c | grep -q "P   N   G" && ok || bad "fits.png is not a PNG"

# ensemble CSV: one line per member plus the header
expect 0 "$rp" relate --ensemble 300 --csv "$work/members.csv"
[[ $(wc -l <"$work/members.csv") -eq 301 ]] && ok || bad "members.csv line count"
has "rain_rate_mm_h" "$work/members.csv"

# outputs whole or not at all, and together: a picture that cannot be written (bad name,
# missing folder) or a failed fit leaves no CSV either; a bad picture name is refused
# before any work
expect 2 "$rp" relate --ensemble 300 --csv "$work/no-such-dir/m.csv"
expect 2 "$rp" relate --ensemble 300 --plot "$work/no-such-dir/m.png"
[[ ! -e "$work/no-such-dir" ]] && ok || bad "partial output"
expect 2 "$rp" relate --ensemble 300 --csv "$work/alone1.csv" --plot "$work/fits.gif"
has "png" "$work/err"
expect 2 "$rp" relate --ensemble 300 --csv "$work/alone2.csv" --plot "$work/no-such-dir/m.png"
expect 2 "$rp" relate --band X --min-kdp 100 --csv "$work/alone3.csv"
[[ ! -e "$work/alone1.csv" && ! -e "$work/alone2.csv" && ! -e "$work/alone3.csv" ]] && ok || bad "CSV written by a failed run"
ls "$work" | grep -q "\.tmp" && bad "temporary file left behind" || ok

finish
