#!/usr/bin/env bash
# Renders the HTML review note of the demo design in headless Chromium (Debian's package) and
# checks that the page loads without errors and that its figures are present and non-empty.
set -euo pipefail
cd "$(dirname "$0")/.."
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

if ! command -v chromium >/dev/null 2>&1; then
    echo "browser check: installing Debian's chromium"
    export DEBIAN_FRONTEND=noninteractive
    apt-get update -qq >/dev/null
    apt-get install -y -qq chromium >/dev/null
fi

# The binary as the test suite builds it: `cargo build` would compile the dependencies again
# without the features the dev-dependencies switch on (about 100 s of CPU on a cold CI run),
# and .ci/run's `cargo test --release` then reuses everything built here.
cargo test --release --no-run --quiet
# Exit 1 is a finding of the note (the demo's bare spark transient is below the design
# factor); 2 is a failed run.
rc=0
./target/release/holdoff report examples/demo_750kv.toml --out "$work/note.html" >/dev/null || rc=$?
if [ "$rc" -ge 2 ]; then
    echo "browser check: holdoff report failed (exit $rc)"
    exit 1
fi

flags=(--headless --no-sandbox --disable-gpu --disable-quic --no-first-run
       --disable-background-networking --disable-component-update --disable-sync
       --hide-scrollbars --enable-logging=stderr --v=0)
timeout 120 chromium "${flags[@]}" --user-data-dir="$work/profile-a" \
    --dump-dom "file://$work/note.html" >"$work/dom.html" 2>"$work/dom.err"
timeout 120 chromium "${flags[@]}" --user-data-dir="$work/profile-b" --window-size=1200,3000 \
    --screenshot="$work/note.png" "file://$work/note.html" >/dev/null 2>"$work/shot.err"

python3 - "$work" <<'PY'
import os, re, sys
work = sys.argv[1]
dom = open(os.path.join(work, "dom.html"), encoding="utf-8").read()
errs = open(os.path.join(work, "dom.err"), encoding="utf-8", errors="replace").read()
problems = []
if "<h2>9. Sign-off</h2>" not in dom:
    problems.append("the page did not load to its end (no sign-off section in the DOM)")
figures = re.findall(r"<figure id=\"figure-\d+\">(.*?)</figure>", dom, re.S)
if len(figures) != 5:
    problems.append(f"expected 5 figures, found {len(figures)}")
for k, f in enumerate(figures, 1):
    marks = len(re.findall(r"<(rect|path|polyline|circle|line|text)\b", f))
    if marks < 20:
        problems.append(f"figure {k} is empty ({marks} drawing elements)")
# The field map (figure 1) and the zoom around the worst hotspot (figure 2): each with its
# colour bar in kV/mm, labelled equipotentials, conductors drawn from their outlines and the
# hotspot marked.
for k, name in [(1, "field map"), (2, "hotspot zoom")]:
    f = figures[k - 1] if len(figures) >= k else ""
    bar = re.search(r'<g class="colour-bar">(.*?)</g>', f, re.S)
    if not bar or len(re.findall(r"<rect\b", bar.group(1))) < 10 or "kV/mm" not in bar.group(1):
        problems.append(f"the {name} has no colour bar in kV/mm")
    if "equipotential-label" not in f or " kV</text>" not in f:
        problems.append(f"the {name} has no labelled equipotentials")
    if 'class="conductor"' not in f or 'class="hotspot"' not in f:
        problems.append(f"the {name} draws no conductor outline or no hotspot")
if len(figures) >= 2 and "Zoom around the worst hotspot" not in figures[1]:
    problems.append("figure 2 is not the zoom around the worst hotspot")
for line in errs.splitlines():
    if re.search(r"Uncaught|CONSOLE\(\d+\).*(error|Error)|Failed to load resource", line):
        problems.append("page error: " + line.strip())
png = os.path.join(work, "note.png")
if not os.path.exists(png) or os.path.getsize(png) < 20000:
    problems.append("no screenshot, or an empty one")
if problems:
    for p in problems:
        print("browser check problem:", p)
    print("browser check: 0 passed, 1 failed")
    sys.exit(1)
print(f"browser check: page loaded, {len(figures)} figures drawn, screenshot {os.path.getsize(png)} bytes")
print("browser check: 1 passed, 0 failed")
PY
