#!/usr/bin/env bash
# End-to-end runs of `rainprint scene`, `picture` and `score`: a small volume, its
# pictures, a retrieval loop, and bad scenarios (exit 2, one line, no output file).
# Usage: scene.sh TOOL BUILD_DIR
set -u
source "$(dirname "${BASH_SOURCE[0]}")/../cli_common.sh" scene "$@"

cat >"$work/s.yaml" <<'YAML'
radar:
  name: Lowmoor Test C
  band: C
  gate_spacing_m: 500
  gates: 120
  elevations_deg: [0.5, 2.0]
  azimuth_step_deg: 2
rain:
  background: {nw: 3000, d0_mm: 1.2, mu: 3}
  cells:
    - {kind: gaussian, x_km: 20, y_km: 15, radius_km: 6, nw: 12000, d0_mm: 2.0, mu: 2}
wind: {u_ms: 4, v_ms: -2, turbulence_ms: 1}
YAML

expect 0 "$rp" scene --help
has "Example" out
expect 0 "$rp" scene "$work/s.yaml" --out "$work/v.nc" --seed 3 --json
check "scene summary" "$work/out" <<'PY'
import json, sys
r = json.load(open(sys.argv[1]))
for k in ["gates_simulated", "rain_gates", "max_path_attenuation_db", "max_phidp_deg", "seconds", "seed"]:
    assert k in r, k
assert r["gates_simulated"] == 2 * 180 * 120 and r["seed"] == 3 and r["max_phidp_deg"] > 0, r
PY
# the same seed gives the same data (every variable), another seed other noise
expect 0 "$rp" scene "$work/s.yaml" --out "$work/v2.nc" --seed 3
expect 0 "$rp" scene "$work/s.yaml" --out "$work/v3.nc" --seed 4
check "same seed, same volume" "$work/v.nc" "$work/v2.nc" "$work/v3.nc" <<'PY'
import sys, netCDF4, numpy as np
a, b, c = (netCDF4.Dataset(p) for p in sys.argv[1:4])
for name in ["DBZ", "ZDR", "PHIDP", "VEL", "truth_zh_dbz"]:
    x, y = a[name][:].filled(np.nan), b[name][:].filled(np.nan)
    assert np.array_equal(x, y, equal_nan=True), name
assert not np.array_equal(a["DBZ"][:].filled(np.nan), c["DBZ"][:].filled(np.nan), equal_nan=True)
PY
ncdump -h "$work/v.nc" >"$work/hdr" 2>&1 && ok || bad "ncdump"
has "Conventions" hdr
# pictures: one field, the overview, a range-height cut, a truth field
expect 0 "$rp" picture "$work/v.nc" --field DBZ --sweep 0 --out "$work/dbz.png"
expect 0 "$rp" picture "$work/v.nc" --all --sweep 1 --out "$work/all.png"
expect 0 "$rp" picture "$work/v.nc" --field ZDR --rhi 37 --out "$work/rhi.svg"
expect 0 "$rp" picture "$work/v.nc" --field truth_rain_rate_mm_h --out "$work/rain.pdf"
check "pictures are complete files" "$work" <<'PY'
import sys, os
w = sys.argv[1]
for n in ["dbz.png", "all.png"]:
    d = open(os.path.join(w, n), "rb").read()
    assert d[:8] == b"\x89PNG\r\n\x1a\n" and d[-12:-8] == b"\x00\x00\x00\x00" and b"IEND" in d[-8:], n
assert open(os.path.join(w, "rhi.svg")).read().rstrip().endswith("</svg>")
assert open(os.path.join(w, "rain.pdf"), "rb").read().rstrip().endswith(b"%%EOF")
PY
expect 2 "$rp" picture "$work/v.nc" --field DBX --out "$work/x.png"
has "did you mean 'DBZ'" err
expect 2 "$rp" picture "$work/v.nc" --sweep 5 --out "$work/x.png"
expect 2 "$rp" picture "$work/v.nc" --out "$work/x.gif"
[[ ! -e "$work/x.png" ]] && ok || bad "picture left after bad input"
# the retrieval loop: a retrieval that is truth x 1.1 has +10 % normalised bias, corr 1
check "write a retrieval" "$work/v.nc" "$work/r.nc" <<'PY'
import sys, netCDF4
src = netCDF4.Dataset(sys.argv[1])
dst = netCDF4.Dataset(sys.argv[2], "w")
for d in src.dimensions.values():
    dst.createDimension(d.name, len(d))
for name in ["time", "range", "azimuth", "elevation", "sweep_start_ray_index", "sweep_end_ray_index", "fixed_angle", "sweep_number"]:
    v = src[name]
    out = dst.createVariable(name, v.dtype, v.dimensions)
    out.setncatts({k: v.getncattr(k) for k in v.ncattrs()})
    out[:] = v[:]
t = src["truth_rain_rate_mm_h"]
r = dst.createVariable("my_rain_mm_h", "f4", t.dimensions, fill_value=-9999.0)
r.units = "mm h-1"
r[:] = t[:] * 1.1
dst.close()
PY
expect 0 "$rp" score "$work/v.nc" "$work/r.nc" --field my_rain_mm_h --against truth_rain_rate_mm_h --json --by intensity --bins 4 --plot "$work/score.png"
check "score of truth x 1.1" "$work/out" <<'PY'
import json, sys
r = json.load(open(sys.argv[1]))
for k in ["n", "bias", "normalized_bias_pct", "rmse", "corr"]:
    assert k in r, k
assert abs(r["normalized_bias_pct"] - 10.0) < 1e-3 and abs(r["corr"] - 1.0) < 1e-9 and r["n"] > 1000, r
assert len(r["bins"]) == 4
PY
expect 2 "$rp" score "$work/v.nc" "$work/r.nc" --field nothing --against truth_rain_rate_mm_h
expect 2 "$rp" score "$work/v.nc" --field my_rain_mm_h --against truth_rain_rate_mm_h

# pulse level: I/Q for every gate, estimates instead of the formula noise; one sweep's
# I/Q kept. The fields are the estimates of the kept samples (float samples: 1e-3 dB,
# 1e-3 m/s), the truth is the formula mode's, the file says it, threads do not matter.
expect 0 "$rp" scene "$work/s.yaml" --out "$work/p.nc" --seed 3 --pulses --keep-iq 1 --iq-out "$work/iq.nc" --json --threads 1
check "pulse-level summary" "$work/out" <<'PY'
import json, sys
r = json.load(open(sys.argv[1]))
assert r["pulse_level"] is True and r["noise"] is True and r["iq_sweep"] == 1, r
assert r["iq_out"].endswith("iq.nc") and r["pulses_per_ray"] == 64, r
PY
expect 0 "$rp" scene "$work/s.yaml" --out "$work/p2.nc" --seed 3 --pulses --threads 2
check "pulse level: I/Q behind the fields, truth as formula mode, threads" "$work/p.nc" "$work/iq.nc" "$work/v.nc" "$work/p2.nc" <<'PY'
import sys, netCDF4, numpy as np
p, iq, f, p2 = (netCDF4.Dataset(x) for x in sys.argv[1:5])
for name in ["truth_zh_dbz", "truth_phidp_deg", "truth_velocity_ms"]:
    assert np.array_equal(p[name][:].filled(np.nan), f[name][:].filled(np.nan), equal_nan=True), name
for name in ["DBZ", "ZDR", "PHIDP", "KDP", "RHOHV", "VEL", "WIDTH"]:
    assert np.array_equal(p[name][:].filled(np.nan), p2[name][:].filled(np.nan), equal_nan=True), name
assert not np.array_equal(p["DBZ"][:].filled(np.nan), f["DBZ"][:].filled(np.nan), equal_nan=True)
# the file says how its observed fields were made
assert p.observation_model == "pulse_level" and f.observation_model == "formula_noise"
r0, r1 = int(p["sweep_start_ray_index"][1]), int(p["sweep_end_ray_index"][1])
assert iq.sweep == 1 and iq.n_pulses == 64 and len(iq.dimensions["ray"]) == r1 - r0 + 1
h = iq["h_re"][:].astype(np.float64) + 1j * iq["h_im"][:].astype(np.float64)
zmin = iq["noise_equivalent_reflectivity"][:]
s = np.mean(np.abs(h) ** 2, axis=2) - 1.0
dbz = p["DBZ"][r0:r1 + 1, :].filled(np.nan)
ok = np.isfinite(dbz)
assert ok.sum() > 1000
est = zmin[None, :] + 10 * np.log10(np.where(s > 0, s, np.nan))
assert np.nanmax(np.abs(est[ok] - dbz[ok])) < 1e-3
r1h = np.mean(np.conj(h[:, :, :-1]) * h[:, :, 1:], axis=2)
vel = iq.nyquist_velocity_m_s / np.pi * np.angle(r1h)
d = (vel[ok] - p["VEL"][r0:r1 + 1, :].filled(np.nan)[ok] + iq.nyquist_velocity_m_s) % (2 * iq.nyquist_velocity_m_s) - iq.nyquist_velocity_m_s
assert np.max(np.abs(d)) < 1e-3
# the spread of DBZ about its truth matches the formula mode's within 15 % (brief)
t = (p["truth_zh_dbz"][:] - p["truth_pia_db"][:]).filled(np.nan)
ep, ef = p["DBZ"][:].filled(np.nan) - t, f["DBZ"][:].filled(np.nan) - t
assert abs(np.nanstd(ep) / np.nanstd(ef) - 1) < 0.15, (np.nanstd(ep), np.nanstd(ef))
PY
# bad pulse options: exit 2, one line, no output
rm -f "$work/q.nc" "$work/qiq.nc"
expect 2 "$rp" scene "$work/s.yaml" --out "$work/q.nc" --pulses --keep-iq 2 --iq-out "$work/qiq.nc"
has "sweep" err
expect 2 "$rp" scene "$work/s.yaml" --out "$work/q.nc" --keep-iq 0 --iq-out "$work/qiq.nc"
has "pulses" err
expect 2 "$rp" scene "$work/s.yaml" --out "$work/q.nc" --pulses --keep-iq 0
has "iq-out" err
expect 2 "$rp" scene "$work/s.yaml" --out "$work/q.nc" --pulses --no-noise
expect 2 "$rp" scene "$work/s.yaml" --out "$work/q.nc" --pulses --keep-iq 0 --iq-out "$work/q.nc"
expect 2 "$rp" scene "$work/s.yaml" --out "$work/q.nc" --pulses --keep-iq -1 --iq-out "$work/qiq.nc"
[[ ! -e "$work/q.nc" && ! -e "$work/qiq.nc" ]] && ok || bad "output left after bad pulse options"

# bad scenarios: exit 2 naming file and key, no output file
bad_scene() { # NAME YAML-TEXT PATTERN
  printf '%s\n' "$2" >"$work/$1.yaml"
  rm -f "$work/$1.nc"
  expect 2 "$rp" scene "$work/$1.yaml" --out "$work/$1.nc"
  has "$3" err
  [[ ! -e "$work/$1.nc" ]] && ok || bad "output left for $1"
}
bad_scene unknown_key "$(sed 's/^  gates: 120/  gatez: 120/' "$work/s.yaml")" "gatez"
bad_scene no_radar "rain: {background: {nw: 3000, d0_mm: 1.2, mu: 3}}" "radar"
bad_scene negative_spacing "$(sed 's/gate_spacing_m: 500/gate_spacing_m: -500/' "$work/s.yaml")" "gate_spacing_m"
bad_scene steep "$(sed 's/elevations_deg: \[0.5, 2.0\]/elevations_deg: [0.5, 95]/' "$work/s.yaml")" "elevations_deg"
bad_scene nan_cell "$(sed 's/nw: 12000/nw: nan/' "$work/s.yaml")" "nw"
bad_scene huge "$(sed 's/gates: 120/gates: 90000000/' "$work/s.yaml")" "gates"
expect 2 "$rp" scene "$work/none.yaml" --out "$work/none.nc"
expect 2 "$rp" scene "$work/s.yaml"
has "out" err
finish
