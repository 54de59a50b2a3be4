#!/usr/bin/env bash
# What the fuzz corpora reach: builds the fuzz targets with source coverage
# (./build-fuzz-cov; no sanitizers), replays each target's seed corpus and
# the inputs scripts/fuzz.sh found (build-fuzz/corpus/TARGET), and prints
# the line and branch coverage of the sources each target is about.
# Needs llvm-profdata and llvm-cov (Debian's llvm package). Local use; not
# part of CI.
#
#   scripts/fuzz-coverage.sh [TARGET...]
set -euo pipefail
cd "$(dirname "$0")/.."
TARGETS=("$@")
((${#TARGETS[@]})) || TARGETS=(request_path_fuzz planned_log_fuzz name_time_fuzz audio_decode_fuzz)
declare -A SOURCES=(
  [request_path_fuzz]="server/daemon/line_framer.cc server/daemon/dispatcher.cc server/daemon/job_runner.cc server/daemon/job_store.cc server/daemon/path_guard.cc server/common/base64.cc server/common/json_text.cc server/common/library_scan.cc"
  [planned_log_fuzz]="engine/compliance/planned_log.cc engine/compliance/civil_time.cc"
  [name_time_fuzz]="engine/compliance/civil_time.cc"
  [audio_decode_fuzz]="engine/audio/audio_file_source.cc engine/audio/analysis_stream.cc engine/audio/resampler.cc"
)
B=build-fuzz-cov
CC=clang CXX=clang++ cmake -S . -B "$B" -DGODWIT_FUZZ=ON -DGODWIT_FUZZ_COVERAGE=ON -DCMAKE_BUILD_TYPE=Debug >/dev/null
cmake --build "$B" -j"${FUZZ_JOBS:-$(nproc)}" --target "${TARGETS[@]}" >/dev/null
mkdir -p "$B/profiles"
for t in "${TARGETS[@]}"; do
  rm -f "$B/profiles/$t".*
  dirs=("tests/fuzz/corpus/$t")
  [[ -d "build-fuzz/corpus/$t" ]] && dirs+=("build-fuzz/corpus/$t")
  LLVM_PROFILE_FILE="$B/profiles/$t.%p.profraw" "$B/tests/fuzz/$t" -runs=0 "${dirs[@]}" >/dev/null 2>&1
  llvm-profdata merge -sparse "$B/profiles/$t".*.profraw -o "$B/profiles/$t.profdata"
  echo "== $t (inputs: ${dirs[*]})"
  # shellcheck disable=SC2086
  llvm-cov report "$B/tests/fuzz/$t" -instr-profile="$B/profiles/$t.profdata" ${SOURCES[$t]} |
    awk 'NR == 1 || /^[a-z]/ || /^TOTAL/' | sed 's/^/  /'
done
