#!/usr/bin/env bash
# test.sh — set up, build and run every test: the normal build with warnings as errors
# (it includes the install test), then an AddressSanitizer + UndefinedBehaviorSanitizer
# build, both running every ctest test, then a short fuzz smoke run (20 s per target).
# At most 2 jobs (the machine has 2 cores). Usage: scripts/test.sh
set -euo pipefail
here=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
jobs=2

echo "== normal build (-DRP_WERROR=ON)"
"$here/scripts/setup.sh" "$here/build" -DRP_WERROR=ON
(cd "$here/build" && ctest --output-on-failure -j"$jobs")

echo "== sanitizer build (ASan + UBSan)"
"$here/scripts/setup.sh" "$here/build-sanitize" -DRP_SANITIZE=ON -DCMAKE_BUILD_TYPE=Debug
(cd "$here/build-sanitize" &&
  ASAN_OPTIONS=detect_leaks=1 UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1 \
  ctest --output-on-failure -j"$jobs")

echo "== fuzz smoke (20 s per target)"
"$here/scripts/fuzz.sh" 20
