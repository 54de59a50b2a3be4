#!/usr/bin/env bash
# The main job on the bundled demo: installs what is missing, builds,
# synthesizes Kestrel FM's morning (masters, an aircheck with planted spots)
# into build/demo and locates every spot in it.
set -euo pipefail
cd "$(dirname "$0")/.."
scripts/install-deps.sh
scripts/build.sh >/dev/null
build/tools/godwit-synth demo --out build/demo
build/server/godwit locate --library build/demo/library \
  --recording build/demo/airchecks/kestrel-fm-20260314T060000.flac \
  --out build/demo/matches.json
echo "demo: matches written to build/demo/matches.json; planted truth in build/demo/truth.json" >&2
/usr/bin/python3 - <<'PY'
import json
doc = json.load(open("build/demo/matches.json"))
truth = {(p["template"], round(p["offset_s"], 3)) for p in json.load(open("build/demo/truth.json"))["plants"]}
print(f"{'spot':<24} {'offset_s':>12} {'score':>7} {'polarity':>8}  planted?")
for m in doc["matches"]:
    hit = any(t == m["template"] and abs(o - m["offset_s"]) < 0.001 for t, o in truth)
    print(f"{m['template']:<24} {m['offset_s']:12.6f} {m['score']:7.4f} {m['polarity']:8d}  {'yes' if hit else 'NO'}")
PY
