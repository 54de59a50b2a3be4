#!/usr/bin/env bash
# Builds godwit and runs every test (doctest suite and command-line tests)
# through CTest, warnings as errors. Installs missing Debian packages first.
set -euo pipefail
cd "$(dirname "$0")/.."
scripts/install-deps.sh
GODWIT_WERROR=ON scripts/build.sh
ctest --test-dir build --output-on-failure -j "$(nproc)"
