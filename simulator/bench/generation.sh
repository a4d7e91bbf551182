#!/usr/bin/env bash
# Generation speed of tensile-sim in --fast mode to a file: three channels,
# ASCII table, 100 kHz sampling of the S355 demo lot (about 7.5 million frames).
# Target: at least 2,000,000 frames/s. A benchmark, not a test: run it by hand.
set -euo pipefail
bin=${1:-build/bin/tensile-sim}
out=$(mktemp)
trap 'rm -f "$out"' EXIT
start=$(date +%s.%N)
"$bin" --fast --rate 100000 --format table --out "$out"
end=$(date +%s.%N)
frames=$(($(wc -l < "$out") - 1))
awk -v f="$frames" -v s="$start" -v e="$end" 'BEGIN { printf "%d frames in %.2f s: %.0f frames/s\n", f, e - s, f / (e - s) }'
