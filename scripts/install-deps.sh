#!/usr/bin/env bash
# Installs the Debian 12 packages godwit builds, tests and runs with, when
# any is missing. Needs root (or sudo) the first time.
set -euo pipefail
PACKAGES=(
  build-essential cmake pkg-config
  libfftw3-dev libsndfile1-dev libsoxr-dev libspdlog-dev doctest-dev nlohmann-json3-dev libcli11-dev
  libboost-dev libtomlplusplus-dev libebur128-dev libhiredis-dev libicu-dev redis-server
  libsqlite3-dev libssl-dev
  python3 python3-numpy python3-scipy python3-opencv espeak-ng lame sox rubberband-cli chromium
  clang libclang-rt-14-dev
)
missing=()
for p in "${PACKAGES[@]}"; do
  dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || missing+=("$p")
done
if ((${#missing[@]})); then
  echo "install-deps: installing ${missing[*]}" >&2
  SUDO=""
  [[ $(id -u) -eq 0 ]] || SUDO="sudo"
  export DEBIAN_FRONTEND=noninteractive
  $SUDO apt-get update -qq
  $SUDO apt-get install -y -qq --no-install-recommends "${missing[@]}" >/dev/null
fi
