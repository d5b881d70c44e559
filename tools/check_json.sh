#!/usr/bin/env bash
# Regenerate the demo, tandem-check and demo-faults JSON with this tree's release
# binary and compare each with a baseline directory, ignoring timings.
# Usage: tools/check_json.sh BASELINE_DIR
set -euo pipefail
cd "$(dirname "$0")/.."
base=${1:?baseline directory}
out=$(mktemp -d)
bin=target/release/holdoff
"$bin" demo --json - >"$out/demo.json"
"$bin" check examples/tandem_3mv.toml --json - >"$out/tandem_check.json" || true
"$bin" faults examples/demo_750kv.toml --json - >"$out/demo_faults.json" || true
status=0
for f in demo tandem_check demo_faults; do
    printf '%s: ' "$f"
    python3 tools/json_same.py "$base/$f.json" "$out/$f.json" || status=1
done
rm -rf "$out"
exit $status
