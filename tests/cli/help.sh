# help.sh — every command answers -h, --help and --version, and every example in every
# --help runs as printed (from a scratch folder holding a copy of the source's examples/,
# as if run in the source folder) and succeeds.
# Usage: bash help.sh TOOL BUILD_DIR
source "$(dirname "${BASH_SOURCE[0]}")/../cli_common.sh" help "$@"
rp="$(cd "$(dirname "$rp")" && pwd)/$(basename "$rp")" # the examples run from elsewhere
export RAINPRINT_CACHE="$work/cache" # "cache clear" must not empty the shared test cache

commands=$("$rp" --help | sed -n '/^Commands:/,/^$/p' | awk 'NR > 1 && NF { print $1 }')
[[ $(wc -w <<<"$commands") -ge 7 ]] && ok || bad "command list: $commands"
for c in $commands; do
  expect 0 "$rp" "$c" --help
  has "^Usage: rainprint $c" out
  has "^Example" out
  cp "$work/out" "$work/help_$c"
  expect 0 "$rp" "$c" -h
  cmp -s "$work/out" "$work/help_$c" && ok || bad "$c -h differs from --help"
  expect 0 "$rp" "$c" --version
  has "^rainprint [0-9]" out
  # the examples: lines after "Example(s):", "\" continuation lines joined
  sed -n '/^Examples\{0,1\}:$/,$p' "$work/help_$c" | tail -n +2 | sed 's/^ *//' |
    sed -e ':a' -e '/\\$/N; s/\\\n */ /; ta' >"$work/examples_$c"
  [[ -s $work/examples_$c ]] && ok || bad "$c: no example"
  mkdir -p "$work/run_$c"
  # examples that name files of the source folder (examples/...) find a copy of them
  [[ -d $src/examples ]] && cp -r "$src/examples" "$work/run_$c/"
  while IFS= read -r line; do
    [[ $line == rainprint\ * ]] || continue
    (cd "$work/run_$c" && eval "\"$rp\" ${line#rainprint }") >"$work/ex_out" 2>"$work/ex_err"
    rc=$?
    [[ $rc -eq 0 ]] && ok || { bad "example of $c exits $rc: $line"; head -3 "$work/ex_err"; }
  done <"$work/examples_$c"
done
# -h also on the top level; unknown commands get a suggestion
expect 0 "$rp" -h
expect 2 "$rp" gat
has "did you mean 'gate'" err
finish
