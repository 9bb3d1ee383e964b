#!/usr/bin/env bash
# End-to-end runs of `rainprint pulses`, bad input included.
# Usage: pulses.sh TOOL BUILD_DIR
set -u
source "$(dirname "${BASH_SOURCE[0]}")/../cli_common.sh" pulses "$@"

expect 0 "$rp" pulses --help
has "Example" out
expect 0 "$rp" pulses --velocity 5 --width 2 --snr 5 --pulses 32 --band C --realisations 800 --json
cp "$work/out" "$work/a.json"
check "pulses json keys and values" "$work/out" <<'PY'
import json, sys
r = json.load(open(sys.argv[1]))
for k in ["velocity_pp", "width_r0r1", "width_r1r2", "zdr", "rhohv", "phidp", "power", "velocity_spectral"]:
    for f in ["truth", "mean", "bias", "sd", "sd_theory"]:
        assert f in r[k], (k, f)
assert r["inputs"]["pulses"] == 32 and r["inputs"]["band"] == "C"
v = r["velocity_pp"]
assert v["truth"] == 5 and abs(v["bias"]) < 0.15, v
# Doviak & Zrnic (1993) pulse-pair velocity SD for a Gaussian spectrum (the library's
# first-order theory): the Monte-Carlo SD over 800 realisations within 15 %
assert abs(v["sd"] / v["sd_theory"] - 1) < 0.15, v
PY
# same seed, same numbers; another seed, other numbers
expect 0 "$rp" pulses --velocity 5 --width 2 --snr 5 --pulses 32 --band C --realisations 800 --json
cmp -s "$work/out" "$work/a.json" && ok || bad "same seed gave different JSON"
expect 0 "$rp" pulses --velocity 5 --width 2 --snr 5 --pulses 32 --band C --realisations 800 --json --seed 2
cmp -s "$work/out" "$work/a.json" && bad "another seed gave the same JSON" || ok
# folding: 20 m/s at a 16 m/s Nyquist velocity is -12 m/s
expect 0 "$rp" pulses --velocity 20 --width 1 --nyquist 16 --realisations 200 --json
check "velocity folds at the Nyquist velocity" "$work/out" <<'PY'
import json, sys
v = json.load(open(sys.argv[1]))["velocity_pp"]
assert abs(v["truth"] + 12) < 1e-9 and abs(v["mean"] + 12) < 0.2, v
PY
# a DSD-built spectrum: falling drops at 10 deg elevation approach the radar
expect 0 "$rp" pulses --preset maritime-downpour --elevation 10 --realisations 300 --json \
  --out "$work/iq.nc" --plot "$work/iq.png"
check "DSD spectrum" "$work/out" "$work/iq.nc" "$work/iq.png" <<'PY'
import json, sys
r = json.load(open(sys.argv[1]))
assert r["inputs"]["spectrum"] == "dsd" and r["velocity_pp"]["truth"] < -0.5, r["velocity_pp"]
assert open(sys.argv[3], "rb").read()[:8] == b"\x89PNG\r\n\x1a\n"
PY
ncdump -h "$work/iq.nc" >"$work/hdr" 2>&1 && ok || bad "ncdump of the I/Q file"
has "h_re" hdr
# bad input: exit 2, one line, no output file
rm -f "$work/none.nc"
expect 2 "$rp" pulses --pulses 1 --out "$work/none.nc"
has "pulses" err
[[ ! -e "$work/none.nc" ]] && ok || bad "output left after bad input"
expect 2 "$rp" pulses --width -1
expect 2 "$rp" pulses --rhohv 1.5
expect 2 "$rp" pulses --snr nan
has "snr" err
expect 2 "$rp" pulses --width 20 --nyquist 8
has "Nyquist" err
expect 2 "$rp" pulses --prt 0.001 --nyquist 8
expect 2 "$rp" pulses --preset maritime-downpour --zdr 1
expect 2 "$rp" pulses --elevation 5
expect 2 "$rp" pulses --plot "$work/p.gif"
expect 2 "$rp" pulses --realisations 0
finish
