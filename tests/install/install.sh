#!/usr/bin/env bash
# install.sh — rainprint installed like a package and used from outside the source tree:
# copy the source tree to a temporary folder, configure it without tests (cmocka is not
# needed to build the tool), build, install into a temporary prefix, delete the copy and its
# build folder, then from another working directory: run the installed tool, compile a C
# program against the library through pkg-config and a CMake project through
# find_package(rainprint), check which libraries link jansson and PLplot, and that no path
# of the source tree appears in the installed files.
# Usage: install.sh SOURCE_DIR
set -u
src=$(cd "$1" && pwd)
tmp=$(mktemp -d "${TMPDIR:-/tmp}/rainprint-install.XXXXXX")
trap 'rm -rf "$tmp"' EXIT
copy="$tmp/src" build="$tmp/build" prefix="$tmp/prefix" run="$tmp/run"
pass=0 fail=0
ok() { pass=$((pass + 1)); }
bad() { fail=$((fail + 1)); echo "FAIL: $*"; }
step() { echo "-- $*"; }

# ---- copy (the working tree as it is: tracked and new files, no build folders) --------
mkdir -p "$copy"
if git -C "$src" rev-parse --is-inside-work-tree >/dev/null 2>&1; then
  (cd "$src" && git ls-files -z --cached --others --exclude-standard |
     grep -zv '^build' | while IFS= read -r -d '' f; do [[ -e $f ]] && printf '%s\0' "$f"; done |
     xargs -0 cp --parents -t "$copy")
else
  (cd "$src" && tar --exclude='./build*' -cf - .) | (cd "$copy" && tar -xf -)
fi
[[ -f $copy/CMakeLists.txt ]] && ok || { bad "copy of the source tree"; exit 1; }

# ---- configure without tests, build, install -----------------------------------------
step "configure (BUILD_TESTING=OFF), build, install"
if cmake -S "$copy" -B "$build" -DBUILD_TESTING=OFF -DCMAKE_BUILD_TYPE=Release \
     -DCMAKE_INSTALL_PREFIX="$prefix" >"$tmp/configure.log" 2>&1 &&
   cmake --build "$build" -j2 >"$tmp/build.log" 2>&1 &&
   cmake --install "$build" >"$tmp/install.log" 2>&1; then
  ok
else
  bad "configure/build/install"; tail -30 "$tmp"/*.log; exit 1
fi
rm -rf "$copy" "$build" # out of reach from now on

tool="$prefix/bin/rainprint"
libdir=$(dirname "$(find "$prefix" -name librainprint.so -print -quit)")
pcdir=$(dirname "$(find "$prefix" -name rainprint.pc -print -quit)")
[[ -x $tool && -d $libdir && -d $pcdir ]] && ok || { bad "installed files"; find "$prefix"; exit 1; }
for f in include/rainprint/version.h include/rainprint/radar_model.h share/rainprint/dsd-presets \
         share/rainprint/scattering share/man/man1/rainprint.1 share/man/man1/rainprint-gate.1; do
  [[ -e $prefix/$f ]] && ok || bad "not installed: $f"
done
[[ -n $(find "$prefix" -name rainprintConfig.cmake) ]] && ok || bad "rainprintConfig.cmake"
[[ -n $(find "$prefix" -name rainprint-plot.pc) ]] && ok || bad "rainprint-plot.pc"

# ---- the installed tool, from elsewhere ----------------------------------------------
mkdir -p "$run" && cd "$run" || exit 1
unset RAINPRINT_TABLES RAINPRINT_PRESETS RAINPRINT_CLIMATES
export RAINPRINT_CACHE="$tmp/cache" OMP_NUM_THREADS=2
step "installed tool"
"$tool" --version >out 2>err && grep -q "^rainprint " out && ok || { bad "--version"; cat err; }
"$tool" gate --preset maritime-downpour --json >gate.json 2>err &&
  /usr/bin/python3 -c 'import json,sys; r=json.load(open(sys.argv[1])); assert r["results"][0]["zh_dbz"] > 0' gate.json &&
  ok || { bad "gate --preset maritime-downpour --json"; cat err; }
"$tool" presets >out 2>err && grep -q maritime-downpour out && ok || { bad "presets"; cat err; }
"$tool" relate --ensemble 200 --relations "R(KDP)" >out 2>err && grep -q "R(KDP)" out && ok ||
  { bad "relate --ensemble 200"; cat err; }
"$tool" gate --help >out 2>err && grep -q "^Example" out && ok || { bad "gate --help"; cat err; }

# ---- a C program through pkg-config --------------------------------------------------
step "C program through pkg-config"
cat >x.c <<'C'
#include <stdio.h>
#include <rainprint/dsd.h>
#include <rainprint/version.h>
int main(void) {
  rp_dsd d;
  rp_dsd_moments m;
  rp_error err = {0};
  if (rp_dsd_marshall_palmer(&d, 10.0, &err) != RP_OK) return 1;
  if (rp_dsd_moments_eval(&d, RP_FALL_DEFAULT, 1.0, &m, &err) != RP_OK) return 1;
  printf("%s %.3f\n", rp_version(), m.lwc_g_m3);
  return m.lwc_g_m3 > 0.0 ? 0 : 1;
}
C
export PKG_CONFIG_PATH="$pcdir" LD_LIBRARY_PATH="$libdir"
# shellcheck disable=SC2046
if cc -o x x.c $(pkg-config --cflags --libs rainprint) 2>err && ./x >out 2>>err; then ok; else
  bad "cc x.c \$(pkg-config --cflags --libs rainprint)"; cat err; fi

# ---- a CMake project through find_package ---------------------------------------------
step "CMake project through find_package(rainprint)"
mkdir -p proj && cp x.c proj/ && cat >proj/CMakeLists.txt <<'CM'
cmake_minimum_required(VERSION 3.16)
project(uses_rainprint C)
find_package(rainprint REQUIRED)
add_executable(x x.c)
target_link_libraries(x PRIVATE rainprint::rainprint)
CM
if cmake -S proj -B proj/build -DCMAKE_PREFIX_PATH="$prefix" >proj.log 2>&1 &&
   cmake --build proj/build >>proj.log 2>&1 && proj/build/x >out 2>>proj.log; then ok; else
  bad "find_package(rainprint)"; tail -20 proj.log; fi

# ---- who links what --------------------------------------------------------------------
step "linked libraries"
needed() { readelf -d "$1" | sed -n 's/.*Shared library: \[\(.*\)\]/\1/p'; }
core=$(needed "$libdir/librainprint.so") plot=$(needed "$libdir/librainprint_plot.so")
grep -q jansson <<<"$core" && bad "librainprint.so links jansson" || ok
grep -q plplot <<<"$core" && bad "librainprint.so links plplot" || ok
grep -q plplot <<<"$plot" && ok || bad "librainprint_plot.so does not link plplot: $plot"
grep -q jansson <<<"$plot" && bad "librainprint_plot.so links jansson" || ok
grep -q jansson <<<"$(needed "$tool")" && ok || bad "the tool does not link jansson"

# ---- no path of the source tree in the installed files ---------------------------------
step "no source paths"
hits=$(grep -rlF -e "$src" -e "$copy" "$prefix" 2>/dev/null)
[[ -z $hits ]] && ok || bad "source paths in: $hits"

echo "$pass passed, $fail failed"
[[ $fail -eq 0 ]]
