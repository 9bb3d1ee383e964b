#!/usr/bin/env bash
# demo.sh — set up, build and run the demo: a few drops at S, C and X band, one
# scattering table, the named rains, one of them at three bands, and a picture of ZDR,
# KDP and AH against D0, rain relations at C band, a synthetic volume with its pictures
# and summary, I/Q pulses, the table cache. Outputs go to ./demo-out/.
set -euo pipefail
here=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
"$here/scripts/setup.sh" "$here/build"
rp="$here/build/rainprint"
out="$here/demo-out"
mkdir -p "$out"

echo "== One 2 mm drop and one 6 mm drop at S, C and X band (10 C, default shape and canting)"
for band in S C X; do
  for d in 2 6; do
    "$rp" drop --diameter "$d" --band "$band" --json |
      /usr/bin/python3 -c 'import json,sys,math; r=json.load(sys.stdin); print("  %s band  D=%3.1f mm  axis ratio %.3f  sigma_hh %.3e mm2  single-drop ZDR %5.2f dB  ext_h %.3e mm2" % (r["band"], r["diameter_mm"], r["axis_ratio"], r["sigma_hh_mm2"], 10*math.log10(r["sigma_hh_mm2"]/r["sigma_vv_mm2"]), r["ext_h_mm2"]))'
  done
done

echo
echo "== Full detail for a 5 mm drop at C band"
"$rp" drop --diameter 5 --band C

echo
echo "== A scattering table for X band at 20 C"
"$rp" table --band X --temperature 20 --out "$out/x_band_20c.nc"

echo
echo "== The named rains (presets), with their S-band values"
"$rp" presets

echo
echo "== One of them, a maritime downpour, at S, C and X band"
"$rp" gate --preset maritime-downpour --band S,C,X

echo
echo "== ZDR, KDP and AH against D0 at S, C and X band (gentle stratiform rain, Nw and mu fixed)"
"$rp" curve --preset gentle-stratiform --vary d0 --from 0.5 --to 3 --steps 26 \
  --variables zdr,kdp,ah --plot "$out/zdr_kdp_ah_vs_d0.png" --csv "$out/zdr_kdp_ah_vs_d0.csv"

echo
echo "== Rain relations at C band from 2000 seeded members of the mixed climate"
"$rp" relate --band C --ensemble 2000 --seed 3 --relations "R(KDP),R(Zh),AH(KDP)"

echo
echo "== A synthetic volume: a squall line crossing the invented Vell valley at C band"
"$rp" scene "$here/examples/valley-squall-line/scene.yaml" --out "$out/squall.nc"
"$rp" picture "$out/squall.nc" --all --sweep 0 --out "$out/squall_overview.png"
"$rp" picture "$out/squall.nc" --field PHIDP --rhi 60 --out "$out/squall_phidp_rhi.png"

echo
echo "== How noisy is the velocity at 32 pulses and 5 dB SNR? (C band, 2 m/s wide spectrum)"
"$rp" pulses --velocity 8 --width 2 --snr 5 --pulses 32 --band C --nyquist 16 \
  --plot "$out/pulses_32_5db.png"

echo
echo "== The table cache (tables computed for the runs above)"
"$rp" cache list

echo
echo "== Files written"
printf '  %s\n      %s\n' \
  "$out/x_band_20c.nc" "scattering table, X band, 20 C (netCDF)" \
  "$out/zdr_kdp_ah_vs_d0.png" "picture: ZDR, KDP and AH against D0 at S, C and X band" \
  "$out/zdr_kdp_ah_vs_d0.csv" "the numbers behind it (one row per D0 and band)" \
  "$out/squall.nc" "synthetic volume with truth (CF/Radial 1.4 netCDF-4)" \
  "$out/squall_overview.png" "picture: every field of the lowest sweep" \
  "$out/squall_phidp_rhi.png" "picture: PhiDP in a range-height cut through the squall line" \
  "$out/pulses_32_5db.png" "picture: Doppler spectrum and I/Q samples of the pulses run"
