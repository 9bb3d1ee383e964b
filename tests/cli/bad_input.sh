# bad_input.sh — the bad-input suite of the tool: distinct bad inputs across every command
# and every input format (options, preset and climate YAML, spectrum CSV, table files).
# Each case asserts: exit code 2, exactly one line on stderr that names the option, file,
# line or field at fault (the pattern), and no output file left in the output folder.
# Usage: bash bad_input.sh TOOL BUILD_DIR
source "$(dirname "${BASH_SOURCE[0]}")/../cli_common.sh" bad_input "$@"

out="$work/outputs"   # every --csv/--plot/--out of a case points in here
cases=0
# bad_case PATTERN CMD...: exit 2, one line on stderr containing PATTERN (fixed string),
# nothing written to $out.
bad_case() {
  local pat=$1; shift
  cases=$((cases + 1))
  rm -rf "$out" && mkdir -p "$out"
  "$@" >"$work/out" 2>"$work/err"
  local got=$?
  if [[ $got -ne 2 ]]; then bad "exit $got (want 2): $*"; cat "$work/err"; return; fi
  if [[ $(wc -l <"$work/err") -ne 1 ]]; then bad "want one line on stderr: $*"; cat "$work/err"; return; fi
  if ! grep -qF -- "$pat" "$work/err"; then bad "'$pat' not in: $(cat "$work/err")  [$*]"; return; fi
  if [[ -n $(ls -A "$out") ]]; then bad "output left behind: $(ls -A "$out")  [$*]"; return; fi
  ok
}

spectra="$src/tests/data/spectra"
mp=(--preset maritime-downpour)
gs=(--preset gentle-stratiform)

# ---- options shared by every command -------------------------------------------------
bad_case "--diameter needs a value (MM)" "$rp" drop --diameter
bad_case "--diameter needs a value" "$rp" drop --diameter --band S
bad_case "--diameter is given twice" "$rp" drop --diameter 3 --diameter 4
bad_case "did you mean '--diameter'?" "$rp" drop --diamter 3
bad_case "--axis-ratio 0 is outside the allowed range [0.3, 3]" "$rp" drop --diameter 3 --axis-ratio 0
bad_case "give either --axis-ratio or --shape, not both" "$rp" drop --diameter 3 --axis-ratio 1 --shape sphere
bad_case "--shape" "$rp" drop --diameter 3 --shape egg
bad_case "did you mean 'mie'?" "$rp" drop --diameter 3 --method mei
bad_case "did you mean '3d'?" "$rp" drop --diameter 3 --canting-model 2d
bad_case "--json takes no value" "$rp" drop --diameter 3 --json=yes
bad_case "--diameter: 'nan' is not a finite number" "$rp" drop --diameter nan
bad_case "--diameter: '1e999' is out of the range of a double" "$rp" drop --diameter 1e999
bad_case "--diameter: '0x3'" "$rp" drop --diameter 0x3
bad_case "--diameter: '3mm'" "$rp" drop --diameter 3mm
bad_case "--diameter 12 is outside the allowed range (0, 10]" "$rp" drop --diameter 12
bad_case "--temperature 90 is outside the allowed range [-10, 50]" "$rp" drop --diameter 3 --temperature 90
bad_case "--elevation -1 is outside the allowed range [0, 90]" "$rp" drop --diameter 3 --elevation -1
bad_case "--canting-sd 50 is outside the allowed range [0, 45]" "$rp" drop --diameter 3 --canting-sd 50
bad_case "--frequency 0.5 is outside the allowed range [1, 100]" "$rp" drop --diameter 3 --frequency 0.5
bad_case "give either --band or --frequency, not both" "$rp" drop --diameter 3 --band S --frequency 3
bad_case "--canting-approx is for planar canting only" "$rp" drop --diameter 3 --canting-model 3d --canting-approx
bad_case "--method mie" "$rp" drop --diameter 3 --method mie
bad_case "unexpected argument 'stray'" "$rp" drop --diameter 3 stray
bad_case "unknown option '-d'" "$rp" drop -d 3
bad_case "--diameter is required" "$rp" drop
bad_case "--band: unknown band 'W'" "$rp" drop --diameter 3 --band W
bad_case "unknown command 'frobnicate'" "$rp" frobnicate

# ---- DSD options (gate, curve) --------------------------------------------------------
bad_case "give exactly one of --preset, --dsd and --spectrum" "$rp" gate
bad_case "--preset, --dsd and --spectrum cannot be given together" "$rp" gate --preset gentle-stratiform --dsd gamma --spectrum x.csv
bad_case "give either --preset or --dsd, not both" "$rp" gate "${mp[@]}" --dsd gamma
bad_case "no-such-rain" "$rp" gate --preset no-such-rain
bad_case "--dsd gamma needs --lambda" "$rp" gate --dsd gamma --n0 8000 --mu 2
bad_case "--mu does not apply to --dsd exponential" "$rp" gate --dsd exponential --n0 8000 --lambda 2 --mu 1
bad_case "exactly one of --d0 and --dm" "$rp" gate --dsd normalized-gamma --nw 8000 --d0 1.5 --dm 1.5 --mu 3
bad_case "unknown --dsd value 'lognormal'" "$rp" gate --dsd lognormal
bad_case "--mu 20 is outside the allowed range [-2, 15]" "$rp" gate --dsd gamma --n0 8000 --mu 20 --lambda 3
bad_case "--row needs --spectrum" "$rp" gate "${mp[@]}" --row 2
bad_case "--row 0: the value must be at least 1" "$rp" gate --spectrum "$spectra/good.csv" --row 0
bad_case "--row 999 but the file has" "$rp" gate --spectrum "$spectra/good.csv" --row 999
bad_case "--dmax 12 is outside the allowed range (0, 10]" "$rp" gate "${mp[@]}" --dmax 12
bad_case "--dmin/--dmax" "$rp" gate "${mp[@]}" --dmin 3 --dmax 2
bad_case "beyond the scattering table's 0.1..8 mm" "$rp" gate "${mp[@]}" --dmax 10
bad_case "--kw2 0 is outside the allowed range (0, 1]" "$rp" gate "${mp[@]}" --kw2 0
bad_case "--height 25 is outside the allowed range [0, 20]" "$rp" gate "${mp[@]}" --height 25
bad_case "go with --dsd" "$rp" gate "${mp[@]}" --mu 3
bad_case "--method mie is for single drops" "$rp" gate "${mp[@]}" --method mie --shape sphere
bad_case "--band: unknown band 'W'" "$rp" gate "${mp[@]}" --band S,W
bad_case "--band: 'S' is listed twice" "$rp" gate "${mp[@]}" --band S,S
bad_case "has an empty item" "$rp" gate "${mp[@]}" --band S,
bad_case "--band: the list is empty" "$rp" gate "${mp[@]}" --band ""

# ---- scattering tables (--table) -------------------------------------------------------
"$rp" table --band X --dmin 0.5 --dmax 3 --dstep 0.5 --out "$work/x.nc" >/dev/null 2>&1 || bad "making x.nc"
: >"$work/empty.nc"
echo "not a table" >"$work/text.nc"
head -c 2000 "$work/x.nc" >"$work/cut.nc"
mkdir -p "$work/folder.nc"
bad_case "no-such.nc" "$rp" gate "${mp[@]}" --table "$work/no-such.nc"
bad_case "empty.nc" "$rp" gate "${mp[@]}" --table "$work/empty.nc"
bad_case "text.nc" "$rp" gate "${mp[@]}" --table "$work/text.nc"
bad_case "cut.nc" "$rp" gate "${mp[@]}" --table "$work/cut.nc"
bad_case "folder.nc" "$rp" gate "${mp[@]}" --table "$work/folder.nc"
bad_case "x.nc: table is for 9.4 GHz, not 2.8 GHz" "$rp" gate "${mp[@]}" --table "$work/x.nc" --band S
bad_case "is for one band" "$rp" gate "${mp[@]}" --table "$work/x.nc" --band S,X
bad_case "beyond the scattering table's 0.5..3 mm" "$rp" gate "${mp[@]}" --table "$work/x.nc"

# ---- spectrum CSV files: each names the file and the line (bins counted from 1) --------
for f in "$spectra"/bad_*.csv; do
  bad_case "$(basename "$f")" "$rp" gate --spectrum "$f"
done
bad_case "no-such.csv: cannot open" "$rp" gate --spectrum "$work/no-such.csv"
printf 'bin_center_mm, 1.0, 3.0, 9.0\nbin_width_mm, 2.0, 2.0, 2.0\nr1, 1000, 100, 1\n' >"$work/big_drops.csv"
bad_case "big_drops.csv row 1 r1: bin 3 (8..10 mm) has drops above the scattering table's largest diameter 8 mm" \
  "$rp" gate --spectrum "$work/big_drops.csv"
bad_case "big_drops.csv row 1 r1: bin 3" "$rp" curve --spectrum "$work/big_drops.csv" --vary elevation --from 0 --to 5 --csv "$out/c.csv"
bad_case "(bin 1)" "$rp" gate --spectrum "$spectra/bad_below_zero.csv"

# ---- table ------------------------------------------------------------------------------
bad_case "--out is required" "$rp" table --band X
bad_case "--out" "$rp" table --out "$out/no-such-dir/t.nc"
bad_case "--out" "$rp" table --out "$out"
bad_case "--dmin 0 is outside the allowed range (0, 10)" "$rp" table --out "$out/t.nc" --dmin 0
bad_case "--dmin 3 must be less than --dmax 2" "$rp" table --out "$out/t.nc" --dmin 3 --dmax 2
bad_case "--dstep 0.0001 is outside the allowed range [0.001, 10]" "$rp" table --out "$out/t.nc" --dstep 0.0001
bad_case "--dstep 5 is more than --dmax - --dmin" "$rp" table --out "$out/t.nc" --dmin 1 --dmax 2 --dstep 5

# ---- curve ------------------------------------------------------------------------------
cb=("${gs[@]}" --vary d0)
bad_case "--vary is required" "$rp" curve "${gs[@]}" --from 1 --to 2
bad_case "--vary d0 needs --from and --to" "$rp" curve "${cb[@]}" --from 1
bad_case "unknown --vary value 'size'" "$rp" curve "${gs[@]}" --vary size --from 1 --to 2
bad_case "--steps 1 is outside the allowed range [2, 1000]" "$rp" curve "${cb[@]}" --from 1 --to 2 --steps 1
bad_case "--steps: '2.5' is not a whole number" "$rp" curve "${cb[@]}" --from 1 --to 2 --steps 2.5
bad_case "--from 2 must be less than --to 1" "$rp" curve "${cb[@]}" --from 2 --to 1
bad_case "--log needs --from > 0" "$rp" curve "${cb[@]}" --from 0 --to 2 --log
bad_case ".png, .svg or .pdf" "$rp" curve "${cb[@]}" --from 1 --to 2 --plot "$out/x.gif"
bad_case "unknown --variables value 'foo'" "$rp" curve "${cb[@]}" --from 1 --to 2 --plot "$out/x.png" --variables zh,foo
bad_case "'zh' is listed twice" "$rp" curve "${cb[@]}" --from 1 --to 2 --plot "$out/x.png" --variables zh,zh
bad_case "--variables needs --plot" "$rp" curve "${cb[@]}" --from 1 --to 2 --variables zh
bad_case "--csv" "$rp" curve "${cb[@]}" --from 1 --to 2 --csv "$out/no-such-dir/a.csv"
bad_case "--plot" "$rp" curve "${cb[@]}" --from 1 --to 2 --csv "$out/a.csv" --plot "$out/no-such-dir/a.png"
bad_case "temperature" "$rp" curve "${gs[@]}" --vary temperature --from -30 --to 20 --csv "$out/a.csv"
bad_case "rain-rate" "$rp" curve "${gs[@]}" --vary rain-rate --from 1 --to 10 --csv "$out/a.csv"
bad_case "--vary d0 at 10.1667 mm" "$rp" curve "${cb[@]}" --from 1 --to 12 --csv "$out/a.csv"

# ---- relate -----------------------------------------------------------------------------
bad_case "--ensemble 20 is outside the allowed range [50, 2000000]" "$rp" relate --ensemble 20
bad_case "give either --spectra or --ensemble, not both" "$rp" relate --spectra "$spectra/good.csv" --ensemble 100
bad_case "--seed is for an ensemble" "$rp" relate --spectra "$spectra/good.csv" --seed 3
bad_case "--min-nt needs --spectra" "$rp" relate --min-nt 5
bad_case "--seed -1: the value must be at least 0" "$rp" relate --seed -1
bad_case "unknown climate 'tropical'" "$rp" relate --climate tropical
bad_case "give either --climate or --climate-file, not both" "$rp" relate --climate maritime --climate-file "$work/c.yaml"
bad_case "--relations: unknown relation 'R(XYZ)'" "$rp" relate --relations "R(XYZ)"
bad_case "spectra_no_valid_rows.csv" "$rp" relate --spectra "$src/tests/data/relate/spectra_no_valid_rows.csv" --csv "$out/s.csv"
bad_case "lower --min-zh" "$rp" relate --ensemble 60 --min-zh 79 --csv "$out/s.csv" --plot "$out/s.png"
bad_case "--min-zh 99 is outside the allowed range" "$rp" relate --min-zh 99
bad_case "--csv" "$rp" relate --ensemble 60 --csv "$out/no-such-dir/s.csv"

# ---- climate YAML (--climate-file) ------------------------------------------------------
printf 'name: x\nclusters: [\n' >"$work/syntax.yaml"
: >"$work/empty.yaml"
sed 's/^mu_model: gaussian/mu_model: gaussian\ncolour: blue/' "$src/dsd-presets/climates/maritime.yaml" >"$work/unknown_key.yaml"
sed 's/weight: [0-9.]*/weight: -1/' "$src/dsd-presets/climates/maritime.yaml" >"$work/neg_weight.yaml"
sed 's/d0_mean_mm: [0-9.]*/d0_mean_mm: abc/' "$src/dsd-presets/climates/maritime.yaml" >"$work/text_value.yaml"
bad_case "no-such.yaml" "$rp" relate --climate-file "$work/no-such.yaml"
bad_case "empty.yaml" "$rp" relate --climate-file "$work/empty.yaml"
bad_case "syntax.yaml" "$rp" relate --climate-file "$work/syntax.yaml"
bad_case "unknown_key.yaml" "$rp" relate --climate-file "$work/unknown_key.yaml"
bad_case "neg_weight.yaml" "$rp" relate --climate-file "$work/neg_weight.yaml"
bad_case "text_value.yaml" "$rp" relate --climate-file "$work/text_value.yaml"

# ---- preset YAML (a presets folder holding one bad file) --------------------------------
for name in bad_enum duplicate_key mu_range syntax_indent unknown_key nan missing_field dmin_ge_dmax; do
  rm -rf "$work/presets" && mkdir -p "$work/presets"
  cp "$src/tests/data/presets/bad/$name.yaml" "$work/presets/"
  bad_case "$name.yaml" env RAINPRINT_PRESETS="$work/presets" "$rp" presets
done

# ---- cache ------------------------------------------------------------------------------
bad_case "unknown cache action 'lst'" "$rp" cache lst
bad_case "say what to do" "$rp" cache
bad_case "unexpected argument 'extra'" "$rp" cache list extra
bad_case "unknown option '--all'" "$rp" cache clear --all
bad_case "did you mean '--verbose'?" "$rp" presets --verbos

# ---- scene, picture, score, pulses (the lead adds their cases here) ---------------------
# picture: a colour-scale end given alone that crosses the field's own other end names the
# option (it used to fail inside the figure as "--out: ... panel 0: colour scale [70, 65]");
# one scale for every field of --all is refused
cat >"$work/tiny.yaml" <<'YAML'
radar: {name: Tinmoor Test X, band: X, gate_spacing_m: 1000, gates: 20, elevations_deg: [0.5, 3.0], azimuth_step_deg: 10}
rain: {background: {nw: 3000, d0_mm: 1.2, mu: 3}}
YAML
"$rp" scene "$work/tiny.yaml" --out "$work/tiny.nc" --seed 2 >/dev/null 2>&1 || bad "making tiny.nc"
bad_case "--vmin 70 is not below the upper end 65 of the colour scale of DBZ: give --vmax too" \
  "$rp" picture "$work/tiny.nc" --vmin 70 --out "$out/p.png"
bad_case "--vmax -20 is not above the lower end -1 of the colour scale of ZDR: give --vmin too" \
  "$rp" picture "$work/tiny.nc" --field ZDR --rhi 30 --vmax -20 --out "$out/p.png"
bad_case "give either --all or --vmin, not both" "$rp" picture "$work/tiny.nc" --all --vmin 0 --out "$out/p.png"
bad_case "give either --all or --vmax, not both" "$rp" picture "$work/tiny.nc" --all --vmax 5 --out "$out/p.png"

# scene: every scenario key error names the file, the line and the key, and leaves no file
base="$work/base.yaml"
cp "$work/tiny.yaml" "$base"
scen() { # PATTERN YAML-TEXT
  printf '%s\n' "$2" >"$work/bad.yaml"
  bad_case "$1" "$rp" scene "$work/bad.yaml" --out "$out/v.nc"
}
scen "gatez" "radar: {name: A, band: X, gatez: 20, elevations_deg: [0.5]}"
scen "radar" "rain: {background: {nw: 3000, d0_mm: 1.2, mu: 3}}"
scen "gate_spacing_m" "radar: {name: A, band: X, gate_spacing_m: -500, gates: 20, elevations_deg: [0.5]}"
scen "elevations_deg" "radar: {name: A, band: X, gates: 20, elevations_deg: [0.5, 95]}"
scen "d0_mm" "radar: {name: A, band: X, gates: 20, elevations_deg: [0.5]}
rain: {cells: [{kind: gaussian, x_km: 1, y_km: 1, radius_km: 2, nw: 8000, d0_mm: nan, mu: 2}]}"
scen "gates" "radar: {name: A, band: X, gates: 90000000, elevations_deg: [0.5]}"
scen "band" "radar: {name: A, band: W, gates: 20, elevations_deg: [0.5]}"
scen "kind" "radar: {name: A, band: X, gates: 20, elevations_deg: [0.5]}
rain: {cells: [{kind: blob, x_km: 1, y_km: 1, radius_km: 2, nw: 8000, d0_mm: 1.5, mu: 2}]}"
scen "start_time" "radar: {name: A, band: X, gates: 20, elevations_deg: [0.5], start_time: \"2026-02-30T00:00:00Z\"}"
scen "gates" "radar: {name: A, band: X, gates: 2.5, elevations_deg: [0.5]}"
scen "lapse_rate_c_per_km" "radar: {name: A, band: X, gates: 20, elevations_deg: [0.5]}
atmosphere: {surface_temperature_c: 20, lapse_rate_c_per_km: fast}"
scen "document" "radar: {name: A, band: X, gates: 20, elevations_deg: [0.5]}
---
radar: {name: B}"
bad_case "--out is required" "$rp" scene "$base"
bad_case "give either --pulses or --no-noise, not both" "$rp" scene "$base" --out "$out/v.nc" --no-noise --pulses
bad_case "--keep-iq" "$rp" scene "$base" --out "$out/v.nc" --pulses --keep-iq 5 --iq-out "$out/iq.nc"
bad_case "cannot" "$rp" scene "$work/no-such.yaml" --out "$out/v.nc"
# picture and score
bad_case "did you mean 'DBZ'" "$rp" picture "$work/tiny.nc" --field DBX --out "$out/p.png"
bad_case "--sweep 7" "$rp" picture "$work/tiny.nc" --sweep 7 --out "$out/p.png"
bad_case ".png, .svg or .pdf" "$rp" picture "$work/tiny.nc" --out "$out/p.gif"
bad_case "give either --rhi or --sweep, not both" "$rp" picture "$work/tiny.nc" --rhi 10 --sweep 1 --out "$out/p.png"
bad_case "give one volume FILE.nc" "$rp" picture --out "$out/p.png"
bad_case "--field is required" "$rp" score "$work/tiny.nc" "$work/tiny.nc" --against truth_zh_dbz
bad_case "nothing" "$rp" score "$work/tiny.nc" "$work/tiny.nc" --field nothing --against truth_zh_dbz
bad_case "--bins needs --by" "$rp" score "$work/tiny.nc" "$work/tiny.nc" --field DBZ --against truth_zh_dbz --bins 3
bad_case "give TRUTH.nc and RETRIEVAL.nc" "$rp" score "$work/tiny.nc" --field DBZ --against truth_zh_dbz
# pulses
bad_case "--pulses" "$rp" pulses --pulses 1 --out "$out/iq.nc"
bad_case "--width" "$rp" pulses --width -1
bad_case "--rhohv" "$rp" pulses --rhohv 1.5
bad_case "--snr" "$rp" pulses --snr nan
bad_case "Nyquist" "$rp" pulses --width 20 --nyquist 8
bad_case "give either --prt or --nyquist, not both" "$rp" pulses --prt 0.001 --nyquist 8
bad_case "--zdr comes from the DSD" "$rp" pulses --preset maritime-downpour --zdr 1
bad_case "--elevation goes with a DSD" "$rp" pulses --elevation 5
bad_case "--realisations" "$rp" pulses --realisations 0
# curve: a varied scattering parameter given a fixed value too
bad_case "--vary temperature takes its values from --from/--to" "$rp" curve "${gs[@]}" --vary temperature --from 0 --to 20 --temperature 10

echo "$cases bad inputs"
[[ $cases -ge 60 ]] && ok || bad "fewer than 60 bad inputs ($cases)"
finish
