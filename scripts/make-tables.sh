#!/usr/bin/env bash
# make-tables.sh — regenerate the shipped scattering tables in scattering/:
# S, C and X band at 0, 10, 20 and 30 C, default shape model and canting, elevation 0,
# T-matrix, diameters 0.1..8.0 mm in 0.1 mm steps plus the knots the table builder adds
# beside the shape model's breakpoints (0.7 and 1.5 mm for the default Thurai shapes).
# Usage: scripts/make-tables.sh [TOOL]
set -euo pipefail
here=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
rp=${1:-"$here/build/rainprint"}
for band in S C X; do
  for t in 0 10 20 30; do
    "$rp" table --band "$band" --temperature "$t" --out "$here/scattering/rainprint_${band}_${t}C.nc"
  done
done
