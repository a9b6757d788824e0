#!/bin/sh
# Writes report.html for small forecast, bands, compare and fit runs and screenshots each in
# headless Chromium (Debian's package, installed if missing), then checks each screenshot is
# not blank. Not part of CI: look at the PNGs yourself (DEVELOPERS.md, "Looking at the outputs").
# Usage: scripts/report-screenshots.sh [OUT_DIR]   (default target/report-screenshots)
set -eu
cd "$(dirname "$0")/.."
out=${1:-target/report-screenshots}
mkdir -p "$out"
out=$(cd "$out" && pwd)

if ! command -v chromium >/dev/null 2>&1; then
    apt-get update && apt-get install -y chromium
fi
cargo build --release --quiet
bin=target/release/fadecast

"$bin" forecast examples/airport-tug-2c.toml --out "$out/forecast" >/dev/null
"$bin" bands examples/van-fleet-bands.toml --samples 40 --warranty 8:80 --quiet --out "$out/bands" >/dev/null
"$bin" compare examples/van-fleet-overnight.toml --profile profiles/overnight-charge-1c-drive.toml \
    --profile profiles/fast-charge-2c.toml --samples 12 --out "$out/compare" >/dev/null
"$bin" fit examples/fit/van-storage-fit.toml --holdout-after 200 --out "$out/fit" >/dev/null

status=0
for run in forecast bands compare fit; do
    profile=$(mktemp -d)
    chromium --headless --no-sandbox --disable-gpu --disable-quic --no-first-run \
        --disable-background-networking --disable-component-update --disable-sync \
        --user-data-dir="$profile" --screenshot="$out/$run.png" --window-size=1200,3000 \
        "file://$out/$run/report.html" >/dev/null 2>&1
    rm -rf "$profile"
    # A blank page compresses to almost nothing; a page with text and plots does not.
    size=$(wc -c <"$out/$run.png")
    if [ "$size" -lt 40000 ]; then
        echo "$run: screenshot looks blank ($size bytes): $out/$run.png" >&2
        status=1
    else
        echo "$run: $out/$run.png ($size bytes)"
    fi
done
exit $status
