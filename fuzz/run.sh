#!/usr/bin/env bash
# Runs the design-parser fuzz target for SECONDS (default 300) with the examples as seeds.
# Needs a nightly toolchain and cargo-fuzz (`cargo install cargo-fuzz`). Not part of CI.
# Crashes are written to fuzz/artifacts/design_parser/; the corpus grows in fuzz/corpus/.
set -euo pipefail
cd "$(dirname "$0")"
seconds="${1:-300}"
corpus=corpus/design_parser
mkdir -p "$corpus"
# Seed with the example designs and the bad-input files.
cp -n ../examples/*.toml ../tests/bad_input/*.toml "$corpus"/ 2>/dev/null || true
exec cargo +nightly fuzz run design_parser "$corpus" -- \
    -max_total_time="$seconds" -max_len=16384 -timeout=10 -print_final_stats=1
