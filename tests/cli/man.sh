#!/usr/bin/env bash
# The man pages in docs/man are generated from each command's --help
# (scripts/make-man.py): they must be current, and groff must read them without warnings.
# Usage: man.sh TOOL BUILD_DIR
set -u
source "$(dirname "${BASH_SOURCE[0]}")/../cli_common.sh" man "$@"
"$py" "$src/scripts/make-man.py" "$rp" --check "$src/docs/man" >"$work/out" 2>&1 && ok || { bad "man pages out of date"; cat "$work/out"; }
for page in "$src"/docs/man/*.1; do
  if command -v groff >/dev/null; then
    groff -ww -man -Tutf8 "$page" >/dev/null 2>"$work/err" && [[ ! -s "$work/err" ]] && ok || { bad "groff warnings in $page"; cat "$work/err"; }
  fi
done
finish
