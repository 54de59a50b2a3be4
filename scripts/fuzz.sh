#!/usr/bin/env bash
# Builds the libFuzzer targets (tests/fuzz; clang, ASan and UBSan, in
# ./build-fuzz) and runs each for a bounded time, one after another on one
# core. Fails on any crash, leak, sanitizer finding, timeout (10 s for one
# input) or memory over 2 GiB; the input that did it is kept in
# build-fuzz/artifacts/ (replay: build-fuzz/tests/fuzz/TARGET FILE).
#
#   scripts/fuzz.sh [SECONDS_PER_TARGET] [TARGET...]     (default 60 s, all four)
#
# The seed corpora in tests/fuzz/corpus/ are read, never written: new inputs
# go to build-fuzz/corpus/TARGET, which later runs start from. FUZZ_JOBS
# sets the build's parallelism (default: every core).
set -euo pipefail
cd "$(dirname "$0")/.."
SECONDS_PER_TARGET=${1:-60}
shift || true
TARGETS=("$@")
((${#TARGETS[@]})) || TARGETS=(request_path_fuzz planned_log_fuzz name_time_fuzz audio_decode_fuzz)

B=build-fuzz
CC=clang CXX=clang++ cmake -S . -B "$B" -DGODWIT_FUZZ=ON -DCMAKE_BUILD_TYPE=Debug >/dev/null
cmake --build "$B" -j"${FUZZ_JOBS:-$(nproc)}" --target "${TARGETS[@]}" >/dev/null
mkdir -p "$B/artifacts" "$B/logs"

# Longest input libFuzzer makes per target: requests grow through repeat
# marks (byte_expansion.h), not length; audio seeds are under 20 KB.
declare -A MAX_LEN=([request_path_fuzz]=16384 [planned_log_fuzz]=16384 [name_time_fuzz]=512 [audio_decode_fuzz]=65536)
declare -A DICT=([request_path_fuzz]=tests/fuzz/request_path.dict)

# Leaks inside Debian's codec libraries that we cannot fix (each explained there).
export LSAN_OPTIONS="suppressions=$PWD/tests/fuzz/lsan.supp:print_suppressions=0"
# A smaller quarantine of freed memory (default 256 MiB): requests of 32 MiB
# otherwise spend most of their time faulting in fresh pages. Use after free
# within the last 16 MiB freed is still caught.
export ASAN_OPTIONS="quarantine_size_mb=16${ASAN_OPTIONS:+:$ASAN_OPTIONS}"

failed=()
printf '%-20s %10s %8s %7s %7s %6s  %s\n' target runs exec/s cov ft corpus result
for t in "${TARGETS[@]}"; do
  work="$B/corpus/$t"
  mkdir -p "$work"
  log="$B/logs/$t.log"
  args=(-max_total_time="$SECONDS_PER_TARGET" -timeout=10 -rss_limit_mb=2048 -max_len="${MAX_LEN[$t]:-4096}"
        -print_final_stats=1 -artifact_prefix="$B/artifacts/$t-")
  [[ -n "${DICT[$t]:-}" ]] && args+=(-dict="${DICT[$t]}")
  rc=0
  "$B/tests/fuzz/$t" "${args[@]}" "$work" "tests/fuzz/corpus/$t" >"$log" 2>&1 || rc=$?
  # The last status line: "#RUNS DONE cov: N ft: N corp: N/..."
  status=$(grep -E '^#[0-9]+' "$log" | tail -1 || true)
  runs=$(grep -oP 'stat::number_of_executed_units:\s*\K[0-9]+' "$log" || echo "?")
  rate=$(grep -oP 'stat::average_exec_per_sec:\s*\K[0-9]+' "$log" || echo "?")
  cov=$(grep -oP 'cov: \K[0-9]+' <<<"$status" || echo "?")
  ft=$(grep -oP 'ft: \K[0-9]+' <<<"$status" || echo "?")
  corp=$(grep -oP 'corp: \K[0-9]+' <<<"$status" || echo "?")
  result=ok
  if ((rc != 0)); then
    result="FAILED (exit $rc; log $log)"
    failed+=("$t")
  fi
  printf '%-20s %10s %8s %7s %7s %6s  %s\n' "$t" "$runs" "$rate" "$cov" "$ft" "$corp" "$result"
done
for t in "${failed[@]}"; do
  echo "---- $t: the end of $B/logs/$t.log" >&2
  grep -v -E '^#[0-9]+' "$B/logs/$t.log" | tail -40 >&2
done
((${#failed[@]} == 0))
