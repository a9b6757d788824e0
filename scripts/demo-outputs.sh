#!/usr/bin/env bash
# Writes every demo's forecast (fade.csv, summary.json) and the demo ensemble's bands into
# OUT_DIR with the given fadecast binary, so two versions can be compared number by number
# with scripts/compare-outputs.py. Usage: scripts/demo-outputs.sh BINARY OUT_DIR
set -euo pipefail
binary=$1
out=$2
cd "$(dirname "$0")/.."
mkdir -p "$out"
for scenario in examples/*.toml; do
    name=$(basename "$scenario" .toml)
    "$binary" forecast "$scenario" --out "$out/forecast-$name" > "$out/forecast-$name.txt" 2>&1 || true
done
"$binary" bands examples/van-fleet-bands.toml --samples 24 --seed 7 --jobs 2 --quiet \
    --out "$out/bands-van-fleet" > "$out/bands-van-fleet.txt" 2>&1 || true
