#!/usr/bin/env bash
# End-to-end runs of `rainprint curve`: CSV layout, properties the curves must have,
# pictures, JSON, outputs written whole or not at all, and bad input.
# Usage: curve.sh TOOL BUILD_DIR
set -u
source "$(dirname "${BASH_SOURCE[0]}")/../cli_common.sh" curve "$@"

expect 0 "$rp" curve --help
has "Example" out
has "rainprint curve --preset" out
expect 0 "$rp" --help
has "curve" out

# --- CSV layout: header with units in the names, one row per (value, band) -------------
expect 0 "$rp" curve --preset gentle-stratiform --vary d0 --from 0.5 --to 2.5 --steps 9
cp "$work/out" "$work/d0.csv"
check "CSV columns and rows" "$work/d0.csv" <<'PY'
import csv, sys
rows = list(csv.reader(open(sys.argv[1])))
want = ["d0_mm", "band", "frequency_ghz", "zh_dbz", "zv_dbz", "zdr_db", "kdp_deg_km", "rhohv",
        "delta_hv_deg", "ldr_db", "ah_db_km", "av_db_km", "adp_db_km", "dsd_rain_rate_mm_h",
        "dsd_lwc_g_m3", "dsd_dm_mm", "dsd_d0_mm", "dsd_nw_m3_mm"]
assert rows[0] == want, rows[0]
body = rows[1:]
assert len(body) == 9 * 3, len(body)
assert all(len(r) == len(want) for r in body)
assert [r[1] for r in body[:3]] == ["S", "C", "X"]
# values: linear spacing 0.5, 0.75, ..., 2.5, ends exactly as given
xs = sorted({float(r[0]) for r in body})
assert xs[0] == 0.5 and xs[-1] == 2.5 and len(xs) == 9
assert all(abs(b - a - 0.25) < 1e-12 for a, b in zip(xs, xs[1:]))
for r in body:
    assert all(float(v) == float(v) for v in [r[0]] + r[2:])  # every field a number (no NaN, none empty)
PY

# Common practice: for a normalised gamma with fixed Nw and mu, Zh and ZDR increase with
# D0 at S band (bigger drops: more reflective and more oblate). Strictly, at every step.
check "Zh and ZDR increase with D0 at S band" "$work/d0.csv" <<'PY'
import csv, sys
s = [r for r in csv.DictReader(open(sys.argv[1])) if r["band"] == "S"]
zh = [float(r["zh_dbz"]) for r in s]
zdr = [float(r["zdr_db"]) for r in s]
assert all(b > a for a, b in zip(zh, zh[1:])), zh
assert all(b > a for a, b in zip(zdr, zdr[1:])), zdr
# the DSD's own median volume diameter follows the given D0: Lambda D0 = 3.67 + mu is
# Ulbrich's (1983) approximation, good to about 0.1 % here (tests/cli/gate_presets.sh)
for r in s:
    assert abs(float(r["dsd_d0_mm"]) / float(r["d0_mm"]) - 1) < 5e-3, r
PY

# --- Extensive quantities scale with Nw (N(D) is proportional to Nw) --------------------
expect 0 "$rp" curve --dsd normalized-gamma --d0 1.6 --mu 3 --vary nw --from 4000 --to 8000 --steps 2 --csv "$work/nw.csv"
has "rows written" out
check "KDP(2 Nw) = 2 KDP(Nw)" "$work/nw.csv" <<'PY'
import csv, math, sys
rows = list(csv.DictReader(open(sys.argv[1])))
assert len(rows) == 6
for band in "SCX":
    a, b = [r for r in rows if r["band"] == band]
    assert float(a["nw_m3_mm"]) == 4000 and float(b["nw_m3_mm"]) == 8000
    # exact linearity in N(D); 1e-6 relative leaves room for the 10 digits of the CSV
    for k in ["kdp_deg_km", "ah_db_km", "adp_db_km", "dsd_rain_rate_mm_h", "dsd_lwc_g_m3"]:
        assert abs(float(b[k]) / (2 * float(a[k])) - 1) < 1e-6, (band, k, a[k], b[k])
    # doubling Z adds 10 log10(2) dB; 1e-6 dB for the CSV's digits
    assert abs(float(b["zh_dbz"]) - float(a["zh_dbz"]) - 10 * math.log10(2)) < 1e-6
    # ratios do not depend on Nw; 1e-8 leaves room for the CSV's 10 digits
    for k in ["zdr_db", "rhohv", "delta_hv_deg", "ldr_db", "dsd_dm_mm", "dsd_d0_mm"]:
        assert abs(float(b[k]) - float(a[k])) <= 1e-8 * max(1.0, abs(float(a[k]))), (band, k)
PY

# --log: geometric spacing, ends exactly as given
expect 0 "$rp" curve --dsd marshall-palmer --vary rain-rate --from 1 --to 100 --steps 3 --log --band X --json
check "log spacing and JSON layout" "$work/out" <<'PY'
import json, sys
r = json.load(open(sys.argv[1]))
assert r["vary"] == "rain-rate" and r["column"] == "rain_rate_mm_h" and r["log"] is True
v = r["values"]
assert v[0] == 1 and v[2] == 100 and abs(v[1] / 10 - 1) < 1e-12, v
assert r["bands"] == [{"band": "X", "frequency_ghz": 9.4}]
assert len(r["rows"]) == 3 and r["base_dsd"]["model"] == "marshall-palmer"
# common practice: Z grows with the Marshall-Palmer rain rate (untruncated Rayleigh closed
# form from the Marshall & Palmer 1948 parameters: Z = 8000 * 6! / 4.1^7 R^1.47 = 296 R^1.47)
zh = [x["zh_dbz"] for x in r["rows"]]
assert zh[0] < zh[1] < zh[2], zh
PY

# an explicit --frequency: band null in JSON (as in every command), "9.4 GHz" in the CSV;
# --height is recorded with the base DSD
expect 0 "$rp" curve --preset gentle-stratiform --vary d0 --from 1 --to 2 --steps 2 --frequency 9.4 --height 2 --json
check "explicit frequency in JSON" "$work/out" <<'PY'
import json, sys
r = json.load(open(sys.argv[1]))
assert r["bands"] == [{"band": None, "frequency_ghz": 9.4}], r["bands"]
assert all(x["band"] is None for x in r["rows"]) and len(r["rows"]) == 2
assert r["base_dsd"]["fall_speed_height_km"] == 2, r["base_dsd"]
PY
expect 0 "$rp" curve --preset gentle-stratiform --vary d0 --from 1 --to 2 --steps 2 --frequency 9.4
has "^1,9.4 GHz,9.4," out

# JSON rows carry the CSV's columns with the same numbers
expect 0 "$rp" curve --preset gentle-stratiform --vary d0 --from 0.5 --to 2.5 --steps 9 --json
check "JSON rows = CSV rows" "$work/out" "$work/d0.csv" <<'PY'
import csv, json, sys
j = json.load(open(sys.argv[1]))
c = list(csv.DictReader(open(sys.argv[2])))
assert set(j) == {"vary", "column", "unit", "log", "base_dsd", "scattering", "values", "bands", "rows"}
assert j["vary"] == "d0" and j["unit"] == "mm" and len(j["values"]) == 9
assert [b["band"] for b in j["bands"]] == ["S", "C", "X"]
assert len(j["rows"]) == len(c) == 27
for jr, cr in zip(j["rows"], c):
    assert set(cr) <= set(jr), set(cr) - set(jr)
    assert jr["band"] == cr["band"] and jr["table"] in ("shipped", "cache", "computed")
    for k, v in cr.items():
        if k != "band":
            # both printed with 10 significant digits
            assert abs(jr[k] - float(v)) <= 1e-9 * max(1.0, abs(jr[k])), (k, jr[k], v)
PY

# --- The varied value replaces the base's: at the base's own value, curve = gate --------
expect 0 "$rp" gate --preset gentle-stratiform --band S,X --json
cp "$work/out" "$work/gate.json"
expect 0 "$rp" curve --preset gentle-stratiform --vary mu --from 4 --to 6 --steps 2 --band S,X --json
check "curve at the preset's mu = gate" "$work/out" "$work/gate.json" <<'PY'
import json, sys
c = json.load(open(sys.argv[1]))["rows"]
g = json.load(open(sys.argv[2]))["results"]
for cr, gr in zip(c[:2], g):  # the two bands at mu = 4 (the preset's value)
    for k in ["zh_dbz", "zdr_db", "kdp_deg_km", "rhohv", "ah_db_km"]:
        assert abs(cr[k] - gr[k]) <= 1e-9 * max(1.0, abs(gr[k])), (k, cr[k], gr[k])
assert c[2]["zdr_db"] != c[0]["zdr_db"]  # and mu = 6 is a different rain
PY
# a varied DSD parameter need not be given with --dsd
expect 0 "$rp" gate --dsd normalized-gamma --nw 8000 --d0 1.5 --mu 3 --band C --json
cp "$work/out" "$work/gate.json"
expect 0 "$rp" curve --dsd normalized-gamma --nw 8000 --mu 3 --vary d0 --from 1.5 --to 2 --steps 2 --band C --json
check "stand-in for the varied parameter" "$work/out" "$work/gate.json" <<'PY'
import json, sys
c = json.load(open(sys.argv[1]))["rows"][0]
g = json.load(open(sys.argv[2]))["results"][0]
assert abs(c["kdp_deg_km"] / g["kdp_deg_km"] - 1) < 1e-9
PY
expect 0 "$rp" curve --dsd gamma --n0 8000 --lambda 3 --vary mu --from 0 --to 2 --steps 3 --band S
expect 0 "$rp" curve --preset maritime-downpour --vary dm --from 1 --to 2 --steps 3 --band S
expect 0 "$rp" curve --dsd normalized-gamma --nw 8000 --dm 1.5 --mu 3 --vary nw --from 1000 --to 2000 --steps 2 --band S

# --- Scattering parameters: one table per value (shipped at 0, 10, 20 C; 12 C computed
# or taken from the cache) -----------------------------------------------------------
expect 0 "$rp" curve --preset gentle-stratiform --vary temperature --from 0 --to 20 --steps 3 --band S --json
check "temperature curve" "$work/out" <<'PY'
import json, sys
r = json.load(open(sys.argv[1]))
assert [x["temperature_c"] for x in r["rows"]] == [0, 10, 20]
assert all(x["table"] == "shipped" for x in r["rows"])
assert r["scattering"]["temperature_c"] is None  # varied: no single value
# the DSD does not change with the scattering
assert len({x["dsd_lwc_g_m3"] for x in r["rows"]}) == 1
PY
expect 0 "$rp" curve --preset gentle-stratiform --vary temperature --from 12 --to 13 --steps 2 --band S --json
check "computed tables" "$work/out" <<'PY'
import json, sys
r = json.load(open(sys.argv[1]))["rows"]
assert all(x["table"] in ("computed", "cache") for x in r), r
PY
expect 0 "$rp" curve --preset gentle-stratiform --vary canting-sd --from 0 --to 20 --steps 3 --band C
expect 0 "$rp" curve --spectrum "$src/tests/data/spectra/good.csv" --vary elevation --from 0 --to 10 --steps 2 --band C

# --- Pictures: PNG and SVG written whole, CSV next to them ------------------------------
expect 0 "$rp" curve --preset gentle-stratiform --vary d0 --from 0.5 --to 3 --steps 8 --plot "$work/d0.png" --csv "$work/d0b.csv"
has "picture" out
check "PNG signature" "$work/d0.png" <<'PY'
import sys
head = open(sys.argv[1], "rb").read(8)
assert head == b"\x89PNG\r\n\x1a\n", head  # PNG signature, ISO/IEC 15948:2004 section 5.2 (from memory)
PY
[[ $(wc -l <"$work/d0b.csv") -eq 25 ]] && ok || bad "d0b.csv rows"
expect 0 "$rp" curve --dsd normalized-gamma --d0 1.5 --mu 3 --vary nw --from 100 --to 1e5 --log --steps 5 --plot "$work/nw.svg" --variables zh,zdr,kdp,rhohv,delta,ldr,ah,adp,rain-rate,zv
grep -q "<svg" "$work/nw.svg" && ok || bad "SVG"
has "nw_m3_mm,band" out   # CSV still on stdout
ls "$work" | grep -q tmp && bad "temporary file left behind: $(ls "$work")" || ok

# --- Bad input: exit 2, one line, nothing written --------------------------------------
base=(--preset gentle-stratiform)
expect 2 "$rp" curve
expect 2 "$rp" curve "${base[@]}" --from 1 --to 2
has "vary" err
expect 2 "$rp" curve "${base[@]}" --vary size --from 1 --to 2
has "unknown --vary value 'size' (valid values are d0, dm" err
expect 2 "$rp" curve "${base[@]}" --vary D0 --from 1 --to 2
expect 2 "$rp" curve "${base[@]}" --vary d0 --from 1
expect 2 "$rp" curve "${base[@]}" --vary d0 --from 2 --to 1
has "bad range" err
expect 2 "$rp" curve "${base[@]}" --vary d0 --from 1 --to 1
expect 2 "$rp" curve "${base[@]}" --vary d0 --from nan --to 2
expect 2 "$rp" curve "${base[@]}" --vary d0 --from 1 --to inf
expect 2 "$rp" curve "${base[@]}" --vary d0 --from 1 --to 2 --steps 1
has "steps" err
expect 2 "$rp" curve "${base[@]}" --vary d0 --from 1 --to 2 --steps -3
expect 2 "$rp" curve "${base[@]}" --vary d0 --from 1 --to 2 --steps 2.5
expect 2 "$rp" curve "${base[@]}" --vary d0 --from 1 --to 2 --steps 100000
expect 2 "$rp" curve "${base[@]}" --vary d0 --from 0 --to 2 --log
expect 2 "$rp" curve "${base[@]}" --vary d0 --from -1 --to 2
has "d0 at -1 mm" err
expect 2 "$rp" curve "${base[@]}" --vary d0 --from 1 --to 12
has "outside" err
expect 2 "$rp" curve "${base[@]}" --vary mu --from 0 --to 20
expect 2 "$rp" curve "${base[@]}" --vary temperature --from -30 --to 20
has "temperature" err
expect 2 "$rp" curve "${base[@]}" --vary elevation --from 0 --to 95
expect 2 "$rp" curve "${base[@]}" --vary canting-sd --from 0 --to 60
expect 2 "$rp" curve "${base[@]}" --vary rain-rate --from 1 --to 10
grep -qi "marshall-palmer" "$work/err" && ok || bad "marshall-palmer message"
expect 2 "$rp" curve --preset classic-exponential --vary d0 --from 1 --to 2
has "normalised gamma" err
expect 2 "$rp" curve --dsd exponential --n0 8000 --lambda 2 --vary mu --from 1 --to 2
expect 2 "$rp" curve --spectrum "$src/tests/data/spectra/good.csv" --vary nw --from 1 --to 2
expect 2 "$rp" curve "${base[@]}" --vary d0 --from 1 --to 2 --band S,W
expect 2 "$rp" curve "${base[@]}" --vary d0 --from 1 --to 2 --band S --frequency 3
expect 2 "$rp" curve "${base[@]}" --vary d0 --from 1 --to 2 --method mie --shape sphere
expect 2 "$rp" curve "${base[@]}" --vary d0 --from 1 --to 2 --plot "$work/x.gif"
has "png" err
expect 2 "$rp" curve "${base[@]}" --vary d0 --from 1 --to 2 --plot "$work/x.png" --variables zh,foo
has "foo" err
expect 2 "$rp" curve "${base[@]}" --vary d0 --from 1 --to 2 --plot "$work/x.png" --variables zh,zh
expect 2 "$rp" curve "${base[@]}" --vary d0 --from 1 --to 2 --plot "$work/x.png" --variables ""
expect 2 "$rp" curve "${base[@]}" --vary d0 --from 1 --to 2 --variables zh
expect 2 "$rp" curve "${base[@]}" --vary d0 --from 1 --to 2 --no-such-option
expect 2 "$rp" curve "${base[@]}" --vary d0 --from 1 --to 2 extra
expect 2 "$rp" curve "${base[@]}" --vary d0 --from 1 --to 2 --csv "$work/no-such-dir/a.csv"
# all or nothing: the picture cannot be written, so the CSV is not written either
expect 2 "$rp" curve "${base[@]}" --vary d0 --from 1 --to 2 --csv "$work/kept.csv" --plot "$work/no-such-dir/a.png"
[[ ! -e "$work/kept.csv" && ! -e "$work/no-such-dir" ]] && ok || bad "partial output"
[[ ! -e "$work/x.png" ]] && ok || bad "picture written despite bad input"
ls "$work" | grep -q tmp && bad "temporary file left behind: $(ls "$work")" || ok

finish
