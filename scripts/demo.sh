#!/usr/bin/env bash
# The main job on the bundled demo: installs what is missing, builds,
# synthesizes Kestrel FM's morning (masters, three aircheck files, the
# planned log) into build/demo and reconciles the log against what aired.
set -euo pipefail
cd "$(dirname "$0")/.."
scripts/install-deps.sh
scripts/build.sh >/dev/null
build/tools/godwit-synth demo --out build/demo
build/server/godwit reconcile --library build/demo/library \
  --schedule build/demo/schedules/kestrel-fm-2026-03-14.csv \
  --recording build/demo/airchecks/kestrel-fm-20260314T06*.flac \
  --out build/demo/report
echo "demo: reports in build/demo/report (reconcile.json, reconcile.csv, reconcile.html); what was planted: build/demo/truth.json" >&2
