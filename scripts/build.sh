#!/usr/bin/env bash
# Configures and builds godwit in ./build (Release). GODWIT_WERROR=ON in the
# environment turns warnings into errors (scripts/test.sh and CI); unset, the
# build keeps what it was configured with.
set -euo pipefail
cd "$(dirname "$0")/.."
cmake -S . -B build -DCMAKE_BUILD_TYPE=Release ${GODWIT_WERROR:+-DGODWIT_WERROR=$GODWIT_WERROR} >/dev/null
cmake --build build -j"$(nproc)"
