#!/usr/bin/env bash
# Offline analysis of a 1,000,000-frame recorded run: `tensilectl analyze`
# against the peer a lab would otherwise write (pandas + numpy, see
# ../shared/bench/README.md), whole process against whole process, same file.
# Prints both times, the ratio (goal: at least 10x) and tensilectl's peak memory.
# Usage: bench/offline_analysis.sh [FRAMES] [PEER_SCRIPT]
set -euo pipefail
cd "$(dirname "$0")/.."
frames=${1:-1000000}
peer=${2:-../shared/bench/peer_numpy.py}
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
csv="$work/run.csv"
/usr/bin/python3 bench/make_table.py "$frames" "$csv"
echo "input: $frames frames, $(du -h "$csv" | cut -f1)"

seconds() { local s; s=$(date +%s.%N); "$@" > /dev/null; echo "$(date +%s.%N) - $s" | bc -l; }
best() {  # best of three, to keep the page cache and scheduler out of it
  local b=999999 t
  for _ in 1 2 3; do t=$(seconds "$@"); if (( $(echo "$t < $b" | bc -l) )); then b=$t; fi; done
  echo "$b"
}
ours=$(best build/bin/tensilectl analyze "$csv" --area 80 --gauge-length 80 --json)
rss=$( { /usr/bin/time -f %M build/bin/tensilectl analyze "$csv" --area 80 --gauge-length 80 --json > /dev/null; } 2>&1 )
if [ -f "$peer" ]; then
  theirs=$(best /usr/bin/python3 "$peer" "$csv" 80 80)
  # Agreement on clean data: Rp0.2 and Rm within 0.5 % of the peer's.
  build/bin/tensilectl analyze "$csv" --area 80 --gauge-length 80 --json > "$work/ours.json"
  /usr/bin/python3 "$peer" "$csv" 80 80 > "$work/peer.json"
  /usr/bin/python3 - "$work/ours.json" "$work/peer.json" <<'PY'
import json, sys
ours, peer = json.load(open(sys.argv[1])), json.load(open(sys.argv[2]))
for mine, theirs in (("Rp0.2_MPa", "Rp02_MPa"), ("Rm_MPa", "Rm_MPa"), ("E_MPa", "E_MPa")):
    d = 100 * (ours[mine] - peer[theirs]) / peer[theirs]
    print(f"{mine:10s} tensilectl {ours[mine]:10.2f}  peer {peer[theirs]:10.2f}  difference {d:+.3f} %")
PY
  printf 'tensilectl analyze: %.3f s (peak %d MB)\npeer (pandas+numpy): %.3f s\nratio: %.1fx faster (goal 10x)\n' \
    "$ours" $((rss / 1024)) "$theirs" "$(echo "$theirs / $ours" | bc -l)"
else
  printf 'tensilectl analyze: %.3f s (peak %d MB); peer script %s not found, no ratio\n' "$ours" $((rss / 1024)) "$peer"
fi
