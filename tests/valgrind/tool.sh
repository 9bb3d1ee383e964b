#!/usr/bin/env bash
# The tool under valgrind (memcheck, full leak check): every run must be free of memory
# errors and of definite or indirect leaks. "Possibly lost" blocks are not counted: the
# ones seen come from system libraries' caches (libgomp thread TLS, fontconfig/pango,
# which differ with the state of the font cache), see valgrind.supp.
# Usage: tool.sh TOOL BUILD_DIR
set -u
rp=$1
work="$2/valgrind_tmp"
here=$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)
rm -rf "$work" && mkdir -p "$work"
export RAINPRINT_CACHE="$work/cache"
vg=(valgrind --leak-check=full --errors-for-leak-kinds=definite,indirect
    --error-exitcode=99 --suppressions="$here/valgrind.supp" -q)
pass=0 fail=0
run() {
  local want=$1; shift
  "${vg[@]}" "$rp" "$@" >"$work/out" 2>"$work/err"
  local got=$?
  if [[ $got -eq $want ]]; then pass=$((pass + 1)); else fail=$((fail + 1)); echo "FAIL (exit $got, want $want): $*"; cat "$work/err"; fi
}
run 0 drop --diameter 3 --band S
run 0 drop --diameter 6 --band X --canting-model 3d --json
run 2 drop --diameter -1
run 0 table --band C --dmin 1 --dmax 3 --dstep 0.5 --out "$work/t.nc"
run 2 table --band C --out "$work/no/such/dir/t.nc"
run 0 gate --preset maritime-downpour
run 0 gate --dsd marshall-palmer --rain-rate 20 --band X --canting-sd 3 --json
run 2 gate --dsd gamma --n0 8000 --mu 2
run 0 presets
run 0 curve --preset gentle-stratiform --vary d0 --from 0.5 --to 2 --steps 4 --band S --plot "$work/c.png"
run 0 relate --band C --ensemble 300 --relations "R(KDP),AH(KDP)" --plot "$work/r.png" --csv "$work/r.csv"
run 2 relate --relations "R(XYZ)"
run 2 drop --diamter 3
run 2 gate --preset maritime-downpour --band S,S
run 0 gate --preset maritime-downpour --help
run 0 cache list
run 2 cache lst
# volumes, pictures, scores and pulses: the success paths and a few early and late failures
cat >"$work/s.yaml" <<'YAML'
radar: {name: Tinmoor Test X, band: X, gate_spacing_m: 1000, gates: 30, elevations_deg: [0.5, 3.0], azimuth_step_deg: 10}
rain:
  background: {nw: 3000, d0_mm: 1.2, mu: 3}
  cells: [{kind: gaussian, x_km: 10, y_km: 5, radius_km: 4, nw: 12000, d0_mm: 2.0, mu: 2}]
wind: {u_ms: 4, v_ms: -2, turbulence_ms: 1}
YAML
# the scene's tables (X band, its elevations and temperatures) are computed once outside
# valgrind, where they take a second rather than minutes; the table build itself is under
# valgrind above
"$rp" scene "$work/s.yaml" --out "$work/warm.nc" >/dev/null 2>&1 || { fail=$((fail + 1)); echo "FAIL: warming the cache"; }
run 0 scene "$work/s.yaml" --out "$work/v.nc" --seed 3 --json
run 0 scene "$work/s.yaml" --out "$work/vp.nc" --pulses --keep-iq 1 --iq-out "$work/iq.nc"
run 2 scene "$work/s.yaml" --out "$work/no/such/dir/v.nc"
run 0 picture "$work/v.nc" --all --sweep 1 --out "$work/all.png"
run 0 picture "$work/v.nc" --field VEL --rhi 40 --out "$work/rhi.svg"
run 2 picture "$work/v.nc" --field DBX --out "$work/x.png"
run 2 picture "$work/v.nc" --all --sweep 0 --vmin 1 --out "$work/x.png"
run 2 picture "$work/v.nc" --field ZDR --vmin 9 --out "$work/x.png"
run 0 score "$work/v.nc" "$work/vp.nc" --field DBZ --against truth_zh_dbz --by range --bins 3 --plot "$work/s.png" --json
run 2 score "$work/v.nc" "$work/t.nc" --field DBZ --against truth_zh_dbz
run 0 pulses --velocity 8 --width 2 --snr 5 --pulses 32 --realisations 200 --plot "$work/q.png" --out "$work/q.nc"
run 0 pulses --preset maritime-downpour --realisations 100 --json
run 2 pulses --nyquist 1 --width 2
run 0 cache clear
echo "$pass passed, $fail failed"
[[ $fail -eq 0 ]]
