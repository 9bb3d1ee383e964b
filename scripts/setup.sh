#!/usr/bin/env bash
# setup.sh — install the Debian packages rainprint needs (idempotent, quiet when all
# are present), then configure and build. Usage: scripts/setup.sh [BUILD_DIR [cmake args...]]
set -euo pipefail

here=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
build=${1:-"$here/build"}
shift || true

packages=(build-essential make cmake pkg-config
          libgsl-dev libfftw3-dev libnetcdf-dev netcdf-bin libcmocka-dev
          libcyaml-dev libyaml-dev libjansson-dev libplplot-dev plplot-driver-cairo
          python3 python3-numpy python3-scipy python3-netcdf4 python3-xarray valgrind
          clang libclang-rt-14-dev libomp-dev)

missing=()
for p in "${packages[@]}"; do
  status=$(dpkg-query -W -f='${Status}' "$p" 2>/dev/null || true)
  [[ "$status" == "install ok installed" ]] || missing+=("$p")
done

if ((${#missing[@]})); then
  echo "setup: installing ${missing[*]}" >&2
  sudo=()
  if [[ $(id -u) -ne 0 ]]; then
    command -v sudo >/dev/null || { echo "setup: need root (or sudo) to install packages" >&2; exit 1; }
    sudo=(sudo)
  fi
  export DEBIAN_FRONTEND=noninteractive
  "${sudo[@]}" apt-get update -qq
  "${sudo[@]}" apt-get install -y -qq --no-install-recommends "${missing[@]}" >/dev/null
fi

cmake -S "$here" -B "$build" -DCMAKE_BUILD_TYPE=RelWithDebInfo "$@" >/dev/null
cmake --build "$build" -j"$(nproc)" >/dev/null
