#!/usr/bin/env bash
# Memory through one long run at a steady rate: tensiled reads a whole S355
# test from tensile-sim at RATE Hz in real time (150 kHz: about 11 million
# frames in a little over two minutes) over loopback TCP, and the daemon's
# resident memory is sampled every half second from arming to the stored
# run. Prints the frames of the run, memory at arming, its maximum, the
# spread over the second half of the run (flat: a few MiB at most), and
# frames lost or dropped (goal 0). bench/ingest.sh is the flat-out case,
# where the recorder's queues fill by design; this one is a rig at a
# rate it can hold for hours.
#
#   bench/long_run_memory.sh [RATE_HZ] [--bin DIR] [--out DIR]
#
# Defaults: 150000 Hz, binaries in build/bin, results in a temporary folder
# (kept with --out: rss.csv, tensiled.out, summary.txt). Not part of CI.
# Error policy: a missing binary, a daemon that does not start or dies, or a
# run that is not stored ends the script non-zero with the reason.
set -euo pipefail

here=$(cd "$(dirname "$0")/.." && pwd)
rate=150000
bindir="$here/build/bin"
out=""
while [ $# -gt 0 ]; do
    case "$1" in
    --bin) bindir=$2; shift 2 ;;
    --out) out=$2; shift 2 ;;
    [0-9]*) rate=$1; shift ;;
    *) echo "long_run_memory.sh: unknown argument '$1'; expected RATE_HZ, --bin DIR or --out DIR" >&2; exit 2 ;;
    esac
done
for b in tensiled tensile-sim; do
    [ -x "$bindir/$b" ] || { echo "long_run_memory.sh: $bindir/$b not found; build it first" >&2; exit 2; }
done
command -v curl >/dev/null || { echo "long_run_memory.sh: curl is needed" >&2; exit 2; }
if [ -z "$out" ]; then out=$(mktemp -d); keep=0; else rm -rf "$out"; mkdir -p "$out"; keep=1; fi

. "$here/bench/rig_harness.sh"
sim_port=$(free_port)
write_tcp_rig "$out" harbourline-long-run "$sim_port" 1

daemon=0 sim=0
cleanup() {
    [ "$sim" -gt 0 ] && kill "$sim" 2>/dev/null || true
    [ "$daemon" -gt 0 ] && kill "$daemon" 2>/dev/null && wait "$daemon" 2>/dev/null || true
    [ "$keep" = 1 ] || rm -rf "$out"
}
trap cleanup EXIT

start_daemon "$bindir" "$out"
rss() { awk '/^VmRSS/ {print $2}' "/proc/$daemon/status"; }

arm='{"specimen": {"label": "HM-LONG", "shape": "round", "diameter_mm": 12.5, "gauge_length_mm": 62.5}}'
arm "$arm"
echo "elapsed_s,rss_kib" >"$out/rss.csv"
t0=$(date +%s.%N)
echo "0,$(rss)" >>"$out/rss.csv"
"$bindir/tensile-sim" --material harbourline-s355-lot7 --tcp "127.0.0.1:$sim_port" --realtime --speed 1 \
    --rate "$rate" --seed 7 >/dev/null 2>&1 &
sim=$!
while kill -0 "$sim" 2>/dev/null; do
    kill -0 "$daemon" 2>/dev/null || { echo "long_run_memory.sh: tensiled died (see $out/tensiled.out)" >&2; exit 1; }
    echo "$(echo "$(date +%s.%N) - $t0" | bc),$(rss)" >>"$out/rss.csv"
    sleep 0.5
done
wait "$sim" 2>/dev/null || true
sim=0
for _ in $(seq 100); do
    case "$(api status)" in *'"state":"armed"'*|*'"state":"running"'*) sleep 0.2 ;; *) break ;; esac
done
echo "$(echo "$(date +%s.%N) - $t0" | bc),$(rss)" >>"$out/rss.csv"
api status >"$out/status.json"
api 'runs?limit=1' >"$out/runs.json"

python3 - "$out/rss.csv" "$out/status.json" "$out/runs.json" "$rate" >"$out/summary.txt" <<'PY'
import csv, json, sys
rows = [(float(r["elapsed_s"]), int(r["rss_kib"])) for r in csv.DictReader(open(sys.argv[1]))]
status, runs = json.load(open(sys.argv[2])), json.load(open(sys.argv[3]))
run = runs["runs"][0] if runs["runs"] else None
if run is None or run["state"] != "finished":
    sys.exit(f"long_run_memory.sh: the run was not stored as finished: {run}")
src, rec = status["sources"][0], status["recorder"]
mib = lambda k: k / 1024
rss = [r for _, r in rows]
half = rss[len(rss) // 2:]
print(f"one run at {int(sys.argv[4]):,} Hz in real time: {rec['frames_committed']:,} frames stored "
      f"in {rows[-1][0]:.0f} s ({len(rows)} memory samples)")
print(f"tensiled resident memory: at arming {mib(rss[0]):.1f} MiB, maximum {mib(max(rss)):.1f} MiB (goal: under 64), "
      f"at the end {mib(rss[-1]):.1f} MiB")
print(f"  second half of the run: {mib(min(half)):.1f} to {mib(max(half)):.1f} MiB (flat: a spread of a few MiB)")
print(f"frames lost on the wire: {src['lost_frames']}, bad records: {src['bad_records']}, "
      f"dropped by the recorder: {rec['frames_dropped']}, write errors: {rec['write_errors']} (goal 0)")
PY
cat "$out/summary.txt"
