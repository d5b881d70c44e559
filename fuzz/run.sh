#!/usr/bin/env bash
# Runs a fuzz target (design_parser, the default, or dxf_reader) for SECONDS (default 300) with
# the examples as seeds: `fuzz/run.sh 300` or `fuzz/run.sh 300 dxf_reader`.
# Needs cargo-fuzz (`cargo install cargo-fuzz`) and a nightly toolchain; without one, the
# stable toolchain is asked for the nightly flags cargo-fuzz passes (RUSTC_BOOTSTRAP=1).
# Not part of CI.
# Crashes are written to fuzz/artifacts/TARGET/; the corpus grows in fuzz/corpus/TARGET/.
set -euo pipefail
cd "$(dirname "$0")"
seconds="${1:-300}"
target="${2:-design_parser}"
corpus=corpus/$target
mkdir -p "$corpus"
max_len=16384
if [ "$target" = dxf_reader ]; then
    max_len=65536
    # Seed with the example drawing (its first byte is read as the layer pick).
    for f in ../examples/drawings/*.dxf; do
        { printf '\x80'; cat "$f"; } > "$corpus/$(basename "$f")"
    done
else
    # Seed with the example designs and the bad-input files.
    cp -n ../examples/*.toml ../tests/bad_input/*.toml "$corpus"/ 2>/dev/null || true
fi
if cargo +nightly --version >/dev/null 2>&1; then
    fuzz=(cargo +nightly fuzz)
else
    export RUSTC_BOOTSTRAP=1
    fuzz=(cargo fuzz)
fi
exec "${fuzz[@]}" run "$target" "$corpus" -- \
    -max_total_time="$seconds" -max_len="$max_len" -timeout=10 -print_final_stats=1
