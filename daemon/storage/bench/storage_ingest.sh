#!/bin/sh
# Builds and runs the storage benchmark: recorder ingest rate into durable
# storage, and stored size against sqlite3's CSV import of the same frames.
# Usage: daemon/storage/bench/storage_ingest.sh [frames]   (from the repository root)
set -e
cmake -S . -B build >/dev/null
cmake --build build -j2 --target storage_ingest >/dev/null
exec build/bin/storage_ingest "${1:-2000000}"
