#!/usr/bin/env bash
# The sanitizer side of the hardening tests (registered in CMakeLists.txt
# beside this file). Each step is one ctest:
#
#   build SRC TREE LAUNCHER TARGET...   configure TREE (e.g. build/sanitize) with
#                                       ASan + UBSan and our fuzz driver, build TARGETs
#   unit TREE [--alone] EXE...          run the Catch2 executables of TREE, two at a
#                                       time or one at a time
#   fuzz TREE SEEDS SECONDS TARGET...   run each fuzz target from SEEDS/<name> for SECONDS
#   selftest TREE                       the driver must find fuzz_planted_overflow's bug
#   e2e TREE                            the sanitized tensiled runs its demo rig (the
#                                       sanitized tensile-sim over TCP) for one test
#
# Any sanitizer report is fatal (ASan halts; UBSan is built with
# -fno-sanitize-recover and told to halt and print a stack), so a report
# fails the step. The fuzz driver writes a crashing input into the target's
# seed folder, where it stays a seed and fails every run until fixed.
# Error policy: the first failing step or executable ends the script non-zero
# after naming it; timings of each piece are printed for the results file.
set -uo pipefail

export ASAN_OPTIONS="halt_on_error=1:abort_on_error=1:detect_leaks=${TENSILED_DETECT_LEAKS:-1}:check_initialization_order=1:strict_init_order=1:detect_stack_use_after_return=1:print_summary=1"
export UBSAN_OPTIONS="halt_on_error=1:print_stacktrace=1:print_summary=1"
# Leaks inside libraries that are not ours, each with its reason, are listed
# in lsan.supp beside this script.
export LSAN_OPTIONS="suppressions=$(cd "$(dirname "$0")" && pwd)/lsan.supp:print_suppressions=0"

now() { date +%s%N; }
since() { local ms=$(( ($(now) - $1) / 1000000 )); printf '%d.%d' $((ms / 1000)) $((ms % 1000 / 100)); }

step=${1:-}; shift || true
case "$step" in
build)
    src=$1 tree=$2 launcher=$3; shift 3
    # Run from the main build (TENSILED_SANITIZER_TREE): the outer make's
    # jobserver is not ours; the tree takes its own two jobs.
    unset MAKEFLAGS MFLAGS MAKELEVEL
    t0=$(now)
    args=(-S "$src" -B "$tree" -DCMAKE_BUILD_TYPE=RelWithDebInfo -DTENSILED_SANITIZE=ON -DTENSILED_FUZZ_STANDALONE=ON
          # -O0 -g0: the build is compile-bound and the instrumented tests
          # run in well under a minute even unoptimised; without debug info
          # the assembler has far less to do. Sanitizer stacks still name the
          # functions (the symbol table), without file and line.
          "-DCMAKE_CXX_FLAGS_RELWITHDEBINFO=-O0 -g0"
          # Unity build: sources of a target compiled in batches, so the
          # heavy headers (Boost.Asio and Beast, nlohmann-json, spdlog) are
          # parsed once per batch instead of once per file.
          -DCMAKE_UNITY_BUILD=ON -DCMAKE_UNITY_BUILD_BATCH_SIZE=16)
    [ -n "$launcher" ] && args+=("-DCMAKE_CXX_COMPILER_LAUNCHER=$launcher")
    mkdir -p "$tree"
    cmake "${args[@]}" >"$tree/configure.log" 2>&1 || { cat "$tree/configure.log"; echo "sanitizer tree: configure failed"; exit 1; }
    echo "configure: $(since "$t0") s"
    t1=$(now)
    cmake --build "$tree" -j2 --target "$@" || { echo "sanitizer tree: build failed"; exit 1; }
    echo "build of $*: $(since "$t1") s (total $(since "$t0") s)"
    ;;
unit)
    # Two executables at a time (the machine has two cores), or one at a
    # time after --alone (the suites ctest runs serially in the main tree:
    # live rigs with timing). Each one's output goes to
    # TREE/unit-logs/EXE.log and is printed when it fails. Reports of every
    # process they start (tensiled, tensile-sim, tensilectl...) go to a
    # reports folder: a child whose report its test never looked at (a
    # leak found as a daemon exits after SIGTERM) still fails the step.
    tree=$1; shift
    width=2
    if [ "${1:-}" = --alone ]; then width=1; shift; fi
    t0=$(now)
    logs="$tree/unit-logs"
    mkdir -p "$logs"
    reports=$(mktemp -d "$tree/sanitizer-reports.XXXXXX")
    export ASAN_OPTIONS="$ASAN_OPTIONS:log_path=$reports/asan"
    export UBSAN_OPTIONS="$UBSAN_OPTIONS:log_path=$reports/ubsan"
    run_one() {
        local t1; t1=$(now)
        if "$tree/bin/$1" >"$logs/$1.log" 2>&1; then
            echo "$1: passed in $(since "$t1") s"
        else
            cat "$logs/$1.log"; echo "FAILED under ASan + UBSan: $1 (log: $logs/$1.log)"; return 1
        fi
    }
    failed=0
    pids=()
    for exe in "$@"; do
        run_one "$exe" &
        pids+=($!)
        if [ ${#pids[@]} -ge "$width" ]; then wait "${pids[0]}" || failed=1; pids=("${pids[@]:1}"); fi
    done
    for pid in "${pids[@]}"; do wait "$pid" || failed=1; done
    if compgen -G "$reports/*" >/dev/null; then
        for r in "$reports"/*; do echo "== sanitizer report $r"; cat "$r"; done
        echo "FAILED: sanitizer reports above (kept in $reports)"; failed=1
    else
        rmdir "$reports"
    fi
    echo "$* under ASan + UBSan: $(since "$t0") s"
    exit $failed
    ;;
fuzz)
    tree=$1 seeds=$2 seconds=$3; shift 3
    t0=$(now)
    for target in "$@"; do
        name=${target#fuzz_}
        "$tree/bin/$target" --seconds "$seconds" --seed 1 "$seeds/$name" || {
            echo "FAILED: $target found a crash or sanitizer report; the input is in $seeds/$name (crash-*)"; exit 1; }
    done
    echo "all fuzz targets: $(since "$t0") s"
    ;;
selftest)
    # The driver must find the planted overflow, fail, and keep the input.
    tree=$1
    seeds=$(mktemp -d)
    trap 'rm -rf "$seeds"' EXIT
    printf 'BBBBBBBB' >"$seeds/eight-b"
    if "$tree/bin/fuzz_planted_overflow" --seconds 5 --seed 1 "$seeds" >"$seeds.log" 2>&1; then
        cat "$seeds.log"; echo "FAILED: the planted heap overflow was not found"; exit 1
    fi
    grep -q "heap-buffer-overflow" "$seeds.log" || { cat "$seeds.log"; echo "FAILED: no ASan report for the planted bug"; exit 1; }
    crash=$(ls "$seeds"/crash-* 2>/dev/null | head -1)
    [ -n "$crash" ] || { cat "$seeds.log"; echo "FAILED: the crashing input was not written"; exit 1; }
    size=$(wc -c <"$crash"); first=$(head -c1 "$crash")
    [ "$size" -gt 8 ] && [ "$first" = B ] || { echo "FAILED: the kept input ($size bytes) is not one that triggers the bug"; exit 1; }
    # Replaying the kept input alone fails again: it is a working reproducer.
    # (from inside the temp folder: a replay writes its crash file into the current one)
    if (cd "$seeds" && "$tree/bin/fuzz_planted_overflow" "$crash") >/dev/null 2>&1; then echo "FAILED: the kept input does not reproduce"; exit 1; fi
    rm -f "$seeds.log"
    echo "the planted overflow was found and kept ($size bytes)"
    ;;
e2e)
    # The whole pipeline instrumented: tensiled --demo starts tensile-sim
    # from its own folder (the sanitized one), reads it over TCP, analyses,
    # records, serves the monitor, and exits after one specimen. A report
    # from either process ends it non-zero and lands in its output; the
    # results must match the simulator's truth (tolerances of
    # tests/daemon/faults_test.cpp: Rp0.2 within 1 %, Rm within 0.5 %).
    tree=$1
    data=$(mktemp -d)
    trap 'rm -rf "$data"' EXIT
    t0=$(now)
    if ! timeout 300 "$tree/bin/tensiled" --demo --demo-speed 10 --demo-runs 1 --demo-data "$data" --monitor-port 0 \
            >"$data/out.log" 2>&1; then
        cat "$data/out.log"; echo "FAILED: sanitized tensiled + tensile-sim (exit status or sanitizer report above)"; exit 1
    fi
    if grep -qE "AddressSanitizer|LeakSanitizer|runtime error:" "$data/out.log"; then
        cat "$data/out.log"; echo "FAILED: a sanitizer report in the demo run"; exit 1
    fi
    python3 - "$data/demo-run-1.json" "$data/demo-truth-1.json" <<'PY' || { cat "$data/out.log"; exit 1; }
import json, sys
run, truth = json.load(open(sys.argv[1])), json.load(open(sys.argv[2]))
assert run["state"] == "finished", f"run state {run['state']}, expected finished"
for key, tol in (("Rp0.2_MPa", 0.01), ("Rm_MPa", 0.005)):
    if key in truth and truth[key]:
        err = abs(run[key] - truth[key]) / truth[key]
        assert err < tol, f"{key}: {run[key]} against the truth {truth[key]} ({100 * err:.2f} %, limit {100 * tol} %)"
        print(f"{key}: {run[key]:.1f} MPa, truth {truth[key]:.1f} MPa")
PY
    echo "sanitized tensiled + tensile-sim, one test over TCP: passed in $(since "$t0") s, no sanitizer report"
    ;;
*)
    echo "usage: $0 build SRC TREE LAUNCHER TARGET... | unit TREE [--alone] EXE... | fuzz TREE SEEDS SECONDS TARGET... | selftest TREE | e2e TREE" >&2
    exit 2
    ;;
esac
