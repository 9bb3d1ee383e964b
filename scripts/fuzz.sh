#!/usr/bin/env bash
# fuzz.sh — build the libFuzzer targets of tests/fuzz (clang, its own build folder) and
# run each for SECONDS (default 60), two at a time on 2 cores, each from its seed corpus
# in tests/fuzz/corpus/<target>. Exits 1 on any finding (crash, sanitizer report, oracle
# abort, leak, timeout, out-of-memory), printing where the input was saved; prints the
# executions of every target. Usage: scripts/fuzz.sh [SECONDS]
# Environment: RP_FUZZ_BUILD (build folder, default build-fuzz), RP_FUZZ_TARGETS (names
# without the fuzz_ prefix, default all; table_hdf5 is extra: HDF5 itself crashes on
# crafted files), RP_FUZZ_NO_BUILD=1 (run the targets already built).
set -euo pipefail
here=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
secs=${1:-60}
build=${RP_FUZZ_BUILD:-"$here/build-fuzz"}
read -r -a targets <<<"${RP_FUZZ_TARGETS:-preset climate spectrum table scenario}"

if [[ "${RP_FUZZ_NO_BUILD:-0}" != 1 ]]; then
  cmake -S "$here" -B "$build" -DCMAKE_C_COMPILER=clang -DRP_FUZZ=ON -DBUILD_TESTING=OFF \
        -DCMAKE_BUILD_TYPE=RelWithDebInfo >/dev/null
  cmake --build "$build" -j2 --target fuzz_all >/dev/null
fi

runs="$build/fuzz-runs"
mkdir -p "$runs"
export ASAN_OPTIONS="detect_leaks=1:abort_on_error=1:symbolize=1"
export LSAN_OPTIONS="suppressions=$here/tests/lsan.supp"
export UBSAN_OPTIONS="print_stacktrace=1:halt_on_error=1"
export OMP_NUM_THREADS=1

run_one() {
  local t=$1 dir="$runs/$1"
  rm -rf "$dir"
  mkdir -p "$dir/corpus" "$dir/artifacts"
  # new inputs go to the work corpus; the seeds in the tree are only read
  "$build/fuzz_$t" "$dir/corpus" "$here/tests/fuzz/corpus/$t" \
    -max_total_time="$secs" -timeout=10 -rss_limit_mb=2048 -malloc_limit_mb=1024 \
    -max_len=65536 -print_final_stats=1 -artifact_prefix="$dir/artifacts/" \
    >"$dir/log" 2>&1
}

status=0
pids=()
names=()
for t in "${targets[@]}"; do
  run_one "$t" &
  pids+=($!)
  names+=("$t")
  if ((${#pids[@]} == 2)); then
    for i in 0 1; do wait "${pids[$i]}" || echo "fuzz_${names[$i]}: exit status $?" >&2; done
    pids=()
    names=()
  fi
done
for i in "${!pids[@]}"; do wait "${pids[$i]}" || echo "fuzz_${names[$i]}: exit status $?" >&2; done

for t in "${targets[@]}"; do
  dir="$runs/$t"
  execs=$(grep -o 'stat::number_of_executed_units: [0-9]*' "$dir/log" | awk '{print $2}' || true)
  found=$(find "$dir/artifacts" -type f | wc -l)
  if ((found > 0)) || ! grep -q 'Done [0-9]* runs' "$dir/log"; then
    echo "fuzz_$t: FINDING after ${execs:-?} executions (log $dir/log, inputs in $dir/artifacts)"
    status=1
  else
    echo "fuzz_$t: ${execs:-?} executions in ${secs} s, no finding"
  fi
done
exit $status
