#!/usr/bin/env bash
# The tool under valgrind (memcheck, full leak check): every run must be free of memory
# errors and of definite or indirect leaks. "Possibly lost" blocks are not counted: the
# ones seen come from system libraries' caches (libgomp thread TLS, fontconfig/pango,
# which differ with the state of the font cache), see valgrind.supp and deps.md.
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
run 0 cache clear
run 2 cache lst
echo "$pass passed, $fail failed"
[[ $fail -eq 0 ]]
