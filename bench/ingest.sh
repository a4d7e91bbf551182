#!/usr/bin/env bash
# Live ingest: tensile-sim streams a whole S355 test flat out at RATE Hz over
# loopback TCP into tensiled (parsers → time base → aligner → engine → SQLite
# recorder, durable commits). Prints frames per second from arming to the end
# of the run, frames lost, the daemon's peak memory, and the stored size of
# the frames beside sqlite3's plain CSV import of the same test (the plain
# tool a lab would otherwise use). The simulator shares the machine's cores.
# Usage: bench/ingest.sh [RATE_HZ]   (default 100000)
set -euo pipefail
cd "$(dirname "$0")/.."
rate=${1:-100000}
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

/usr/bin/time -f "%M" -o "$work/rss" build/bin/tensiled --demo --demo-flat-out "$rate" --demo-runs 1 \
  --demo-data "$work/d" > "$work/log" 2>&1
db="$work/d/tensiled.db"
armed=$(grep -m1 'armed:' "$work/log" | cut -d' ' -f2)
ended=$(grep -m1 'ended:' "$work/log" | cut -d' ' -f2)
secs=$(/usr/bin/python3 -c "import sys;from datetime import datetime as d;f='%H:%M:%S.%f';print((d.strptime(sys.argv[2],f)-d.strptime(sys.argv[1],f)).total_seconds())" "$armed" "$ended")
records=$(sqlite3 "$db" "SELECT CAST(value AS INTEGER) FROM counters WHERE name = 'records' AND source = 'frame';")
stored=$(sqlite3 "$db" "SELECT sum(frame_count) FROM frame_chunks;")
# The recorder files every drop as an alarm whose message starts with the count.
dropped=$(sqlite3 "$db" "SELECT coalesce(sum(CAST(message AS INTEGER)), 0) FROM alarms
                         WHERE kind = 'queue_full' AND message LIKE '% frames dropped%';")
pieces=$(sqlite3 "$db" "SELECT coalesce(sum(CAST(message AS INTEGER)), 0) FROM alarms
                        WHERE kind = 'queue_full' AND message NOT LIKE '% frames dropped%';")
ours=$(sqlite3 "$db" "SELECT sum(length(data)) FROM frame_chunks;")
# Raw chunks the recorder packed quickly because it was falling behind.
grep -o 'run [0-9]*: [0-9]* of [0-9]* raw-byte chunks packed quickly' "$work/log" | head -1 || true

# Event reaction time at the demo's real-time pace (20x), the way a rig runs.
build/bin/tensiled --demo --demo-speed 20 --demo-runs 2 --demo-data "$work/l" 2>&1 | grep -o 'event reaction time.*' || true

# The same test as a plain CSV table, imported by sqlite3.
build/bin/tensile-sim --material harbourline-s355-lot7 --format table --fast --rate "$rate" --out "$work/run.csv"
sqlite3 "$work/plain.db" ".mode csv" ".import $work/run.csv frames"
plain=$(stat -c %s "$work/plain.db")
plain_rows=$(sqlite3 "$work/plain.db" "SELECT count(*) FROM frames;")

/usr/bin/python3 - "$records" "$secs" "$stored" "$dropped" "$(cat "$work/rss")" "$ours" "$stored" "$plain" "$plain_rows" "$pieces" <<'PY'
import sys
records, secs, stored, dropped, rss, ours, ours_rows, plain, plain_rows, pieces = sys.argv[1:]
records, secs, stored, rss = int(records), float(secs), int(stored), int(rss)
per_frame_ours = int(ours) / int(ours_rows)
per_frame_plain = int(plain) / int(plain_rows)
print(f"ingest: {records} records in {secs:.2f} s = {records / secs:,.0f} frames/s (goal 2,000,000 on one core)")
print(f"frames stored in the run: {stored}; frames the recorder had to drop: {dropped}"
      f" (goal 0); raw pieces, events or counters dropped: {pieces}")
print(f"tensiled peak memory: {rss / 1024:.0f} MB (goal: flat, under 64 MB)")
print(f"stored size: {per_frame_ours:.2f} bytes/frame against sqlite3 CSV import {per_frame_plain:.2f} bytes/frame"
      f" = {per_frame_plain / per_frame_ours:.1f}x smaller (goal 3x), lossless")
PY
