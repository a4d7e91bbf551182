#!/usr/bin/env bash
# Soak: tensiled against tensile-sim for hours, watching for slow leaks.
#
#   bench/soak.sh [--hours H | --minutes M] [--out DIR] [--bin DIR] [--every S]
#
# Defaults: 6 hours, results in bench/soak-out, binaries in build/bin,
# a sample every 10 s. Not part of CI (ctest never runs it).
#
# What it does: one tensiled with a rig config of one TCP source (three
# channels), and a loop of simulated tests: each test is one tensile-sim
# process streaming at 10,000 lines/s (1 kHz of simulated time at 10x pace),
# which drops its connection once mid-test for 1 s of simulated time
# (`--fault disconnect`) and ends the connection at its end; the daemon
# reconnects with backoff each time. Each test is armed through the API
# before its simulator starts, so every test is one stored run.
#
# Every sample goes to DIR/soak.csv: elapsed seconds, tensiled's resident
# memory (VmRSS, KiB) and open file descriptors (/proc), acquisition frames,
# source records, bad records, lost frames, recorder frames dropped and
# committed, write errors, runs stored, runs finished, and the heap SQLite
# holds (its page caches fill as the database grows, up to their limit).
# DIR/summary.txt gives
# first/last/max of memory and descriptors, the totals lost, and the runs.
# A leak shows as memory or descriptors climbing from run to run; lost or
# dropped frames should stay 0 whatever the length.
#
# Error policy: a missing binary, a daemon that does not start, or a daemon
# that dies ends the script non-zero with the reason; everything started is
# stopped by its pid on exit.
set -euo pipefail

here=$(cd "$(dirname "$0")/.." && pwd)
seconds=$((6 * 3600))
out="$here/bench/soak-out"
bindir="$here/build/bin"
every=10
while [ $# -gt 0 ]; do
    case "$1" in
    --hours) seconds=$(awk "BEGIN {print int($2 * 3600)}"); shift 2 ;;
    --minutes) seconds=$(awk "BEGIN {print int($2 * 60)}"); shift 2 ;;
    --out) out=$2; shift 2 ;;
    --bin) bindir=$2; shift 2 ;;
    --every) every=$2; shift 2 ;;
    *) echo "soak.sh: unknown argument '$1'; expected --hours H, --minutes M, --out DIR, --bin DIR or --every S" >&2; exit 2 ;;
    esac
done
for b in tensiled tensile-sim; do
    [ -x "$bindir/$b" ] || { echo "soak.sh: $bindir/$b not found; build it first (cmake --build build --target $b)" >&2; exit 2; }
done
command -v curl >/dev/null || { echo "soak.sh: curl is needed" >&2; exit 2; }

rm -rf "$out"
mkdir -p "$out"
. "$here/bench/rig_harness.sh"
sim_port=$(free_port)
write_tcp_rig "$out" harbourline-soak "$sim_port" 10

daemon=0 sim=0
cleanup() {
    [ "$sim" -gt 0 ] && kill "$sim" 2>/dev/null || true
    [ "$daemon" -gt 0 ] && kill "$daemon" 2>/dev/null && wait "$daemon" 2>/dev/null || true
}
trap cleanup EXIT

start_daemon "$bindir" "$out"
arm='{"specimen": {"label": "HM-SOAK", "shape": "round", "diameter_mm": 12.5, "gauge_length_mm": 62.5}}'

echo "elapsed_s,rss_kib,open_fds,frames,records,bad_records,lost_frames,frames_dropped,frames_committed,write_errors,runs,runs_finished,sqlite_kib" >"$out/soak.csv"
sample() {
    local s rss fds
    kill -0 "$daemon" 2>/dev/null || { echo "soak.sh: tensiled died (see $out/tensiled.out)" >&2; exit 1; }
    rss=$(awk '/^VmRSS/ {print $2}' "/proc/$daemon/status")
    fds=$(ls "/proc/$daemon/fd" | wc -l)
    # Through files: the run list outgrows a command-line argument (128 KiB)
    # after a few hundred runs, which ended an earlier soak at 65 minutes.
    api status >"$out/status.json"
    api 'runs?limit=10000' >"$out/runs.json"
    python3 - "$out/status.json" "$out/runs.json" "$1" "$rss" "$fds" >>"$out/soak.csv" <<'PY'
import json, sys
s, runs = json.load(open(sys.argv[1])), json.load(open(sys.argv[2]))
src, rec = s["sources"][0], s["recorder"]
finished = sum(1 for r in runs["runs"] if r["state"] == "finished")
print(",".join(str(v) for v in [sys.argv[3], sys.argv[4], sys.argv[5], s["acquisition"]["frames"], src["records"],
      src["bad_records"], src["lost_frames"], rec["frames_dropped"], rec["frames_committed"], rec["write_errors"],
      runs["count"], finished, s.get("memory", {}).get("sqlite_bytes", 0) // 1024]))
PY
}

start=$(date +%s)
next_sample=$start
seed=1
while [ $(( $(date +%s) - start )) -lt "$seconds" ]; do
    arm "$arm"
    "$bindir/tensile-sim" --material harbourline-1018cd-lot3 --tcp "127.0.0.1:$sim_port" --realtime --speed 10 \
        --rate 1000 --seed "$seed" --fault disconnect@30+1 --truth "$out/truth-last.json" >/dev/null 2>&1 &
    sim=$!
    while kill -0 "$sim" 2>/dev/null; do
        now=$(date +%s)
        if [ "$now" -ge "$next_sample" ]; then sample $((now - start)); next_sample=$((now + every)); fi
        [ $((now - start)) -ge "$seconds" ] && break
        sleep 1
    done
    wait "$sim" 2>/dev/null || true
    sim=0
    # The run finishes a settle time after fracture; then the next specimen.
    for _ in $(seq 50); do
        case "$(api status)" in *'"state":"armed"'*|*'"state":"running"'*) sleep 0.2 ;; *) break ;; esac
    done
    seed=$((seed + 1))
done
sample $(( $(date +%s) - start ))

python3 - "$out/soak.csv" "$seconds" >"$out/summary.txt" <<'PY'
import csv, sys
rows = list(csv.DictReader(open(sys.argv[1])))
col = lambda k: [float(r[k]) for r in rows]
rss, fds = col("rss_kib"), col("open_fds")
last = rows[-1]
print(f"soak of {float(last['elapsed_s']) / 60:.1f} min ({len(rows)} samples), asked for {int(sys.argv[2]) / 60:.1f} min")
print(f"resident memory: first {rss[0] / 1024:.1f} MiB, last {rss[-1] / 1024:.1f} MiB, max {max(rss) / 1024:.1f} MiB")
half = rss[len(rss) // 2:]
print(f"  second half: min {min(half) / 1024:.1f} MiB, max {max(half) / 1024:.1f} MiB")
print(f"open descriptors: first {fds[0]:.0f}, last {fds[-1]:.0f}, max {max(fds):.0f}")
sq = col("sqlite_kib")
rest = [r - q for r, q in zip(rss, sq)]
rest_half = rest[len(rest) // 2:]
print(f"SQLite heap: first {sq[0] / 1024:.1f} MiB, last {sq[-1] / 1024:.1f} MiB, max {max(sq) / 1024:.1f} MiB; "
      f"resident memory less SQLite's, second half: {min(rest_half) / 1024:.1f} to {max(rest_half) / 1024:.1f} MiB")
print(f"frames: {last['frames']} acquired, {last['records']} records, {last['bad_records']} bad records, "
      f"{last['lost_frames']} lost on the wire, {last['frames_dropped']} dropped by the recorder, "
      f"{last['write_errors']} write errors")
print(f"runs stored: {last['runs']}, finished: {last['runs_finished']}")
PY
cat "$out/summary.txt"
