#!/usr/bin/env bash
# The engine benchmarks (not run in CI; about 30 minutes on 2 cores).
set -euo pipefail
cd "$(dirname "$0")/.."
scripts/install-deps.sh
scripts/build.sh >/dev/null
B=build/tests/bench/godwit_bench
$B throughput --templates 20 --hours 1
$B false-alarms
$B day --templates 100 --hours 24
$B day --templates 100 --hours 24 --no-speed-search
$B speed --hours 2
$B screen --templates 20 --hours 2
build/tests/bench/codec_day_bench --hours 1 --masters 100
/usr/bin/python3 tests/bench/daemon_bench.py --godwit build/server/godwit --godwitd build/server/godwitd --synth build/tools/godwit-synth --hostile
build/tests/bench/line_framer_bench
build/tests/bench/store_bench
build/tests/bench/accuracy_bench --hours 6 --seed 1
build/tests/bench/accuracy_bench --hours 6 --seed 2
/usr/bin/python3 tests/bench/queue_bench.py --godwit build/server/godwit --godwitd build/server/godwitd --synth build/tools/godwit-synth
/usr/bin/python3 tests/bench/queue_bench.py --godwit build/server/godwit --godwitd build/server/godwitd --synth build/tools/godwit-synth --templates-per-task 6 --day-minutes 0
