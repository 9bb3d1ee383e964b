# cache_progress.sh — `rainprint cache list|clear` on a cache of its own, and the progress
# bar: drawn on a terminal only (nothing on stderr otherwise; `script` gives a terminal).
# Usage: bash cache_progress.sh TOOL BUILD_DIR
source "$(dirname "${BASH_SOURCE[0]}")/../cli_common.sh" cache_progress "$@"
export RAINPRINT_CACHE="$work/cache"

# an empty (missing) cache lists as empty
expect 0 "$rp" cache list
has "0 tables" out
expect 0 "$rp" cache list --json
check "empty cache json" "$work/out" <<'PY'
import json, sys
r = json.load(open(sys.argv[1]))
assert r["tables"] == [] and r["total_bytes"] == 0, r
PY
# a table that is neither shipped (15 C) nor cached is computed and cached
expect 0 "$rp" gate --preset gentle-stratiform --band C --temperature 15 --json
has '"table": "computed"' out
expect 0 "$rp" cache list --json
check "one cached table" "$work/out" <<'PY'
import json, sys
r = json.load(open(sys.argv[1]))
assert len(r["tables"]) == 1 and r["total_bytes"] > 0, r
t = r["tables"][0]
assert t["name"].startswith("table_") and t["name"].endswith(".nc"), t
assert "15.00C" in t["summary"], t
PY
expect 0 "$rp" gate --preset gentle-stratiform --band C --temperature 15 --json
has '"table": "cache"' out
# clear removes the table and nothing else
touch "$work/cache/keep-me.txt"
expect 0 "$rp" cache clear
has "Removed 1 file" out
[[ -e $work/cache/keep-me.txt ]] && ok || bad "cache clear removed a file that is not a table"
expect 0 "$rp" cache list
has "0 tables" out
expect 0 "$rp" gate --preset gentle-stratiform --band C --temperature 15 --json
has '"table": "computed"' out

# progress: nothing on stderr when it is not a terminal
expect 0 "$rp" curve --preset gentle-stratiform --vary temperature --from 0 --to 20 --steps 3 --band S --csv "$work/c.csv"
[[ ! -s $work/err ]] && ok || bad "stderr not empty without a terminal: $(cat "$work/err")"
# on a terminal the bar is drawn and erased (carriage returns)
if command -v script >/dev/null; then
  script -qec "\"$rp\" curve --preset gentle-stratiform --vary temperature --from 0 --to 20 --steps 3 --band S --csv \"$work/d.csv\"" /dev/null >"$work/tty" 2>&1
  grep -q "3/3 values" "$work/tty" && ok || bad "no progress bar on a terminal: $(head -c 300 "$work/tty")"
fi
finish
