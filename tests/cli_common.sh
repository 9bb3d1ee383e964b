# cli_common.sh — shared by the end-to-end scripts in tests/cli/ (sourced, not run).
# Usage in a script:  source "$(dirname "${BASH_SOURCE[0]}")/../cli_common.sh" NAME "$@"
# Sets rp (the tool), src (source tree), work (a fresh scratch folder in the build dir),
# py (/usr/bin/python3), and provides ok, bad, expect, has, check and finish.
name=$1
rp=$2
src=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
work="$(cd "$3" && pwd)/cli_${name}_tmp"
rm -rf "$work" && mkdir -p "$work"
py=/usr/bin/python3
pass=0 fail=0
ok() { pass=$((pass + 1)); }
bad() { fail=$((fail + 1)); echo "FAIL: $*"; }
# expect CODE CMD...: the exit code and, for failures, exactly one line on stderr;
# stdout and stderr are kept in $work/out and $work/err
expect() {
  local want=$1; shift
  "$@" >"$work/out" 2>"$work/err"
  local got=$?
  if [[ $got -ne $want ]]; then bad "exit $got (want $want): $*"; cat "$work/err"; return; fi
  if [[ $want -ne 0 && $(wc -l <"$work/err") -ne 1 ]]; then bad "want one-line message: $*"; cat "$work/err"; return; fi
  ok
}
# has PATTERN FILE: FILE is a path, or a name in $work (out, err)
has() {
  local f=$2
  [[ $f == /* ]] || f="$work/$f"
  grep -q -- "$1" "$f" && ok || bad "'$1' not in $f: $(head -c 300 "$f")"
}
# check NAME ARGS... (Python on stdin): a Python check counted as one test
check() { local what=$1; shift; "$py" - "$@" && ok || bad "$what"; }
# finish: the closing line the CI reads, and the exit code
finish() {
  echo "$pass passed, $fail failed"
  [[ $fail -eq 0 ]]
}
