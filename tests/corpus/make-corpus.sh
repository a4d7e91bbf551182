#!/bin/sh
# Remakes the recorded streams and truth files of the regression corpus from
# the simulator, one case per line of cases.txt. Every case runs at 100 Hz in
# --fast mode with its seed, so the same simulator gives byte-identical files;
# a change of the simulator shows up as a diff of these files in git.
#
#   tests/corpus/make-corpus.sh [BUILD_DIR]     (default: build)
#
# Then rewrite the expected outputs from the streams and review the diff:
#   TENSILED_CORPUS_REGENERATE=1 BUILD_DIR/bin/corpus_tests
#
# Errors: stops at the first case the simulator refuses (it names the option).
set -eu
here=$(cd "$(dirname "$0")" && pwd)
build=${1:-build}
sim="$build/bin/tensile-sim"
[ -x "$sim" ] || { echo "make-corpus.sh: no simulator at $sim; build first or give BUILD_DIR" >&2; exit 2; }
grep -v '^#' "$here/cases.txt" | grep -v '^[[:space:]]*$' | while read -r name format checks options; do
    case "$format" in
        binary) out="$here/$name.bin" ;;
        lines|keyvalue) out="$here/$name.txt" ;;
        *) echo "make-corpus.sh: case $name: format '$format', expected lines, keyvalue or binary" >&2; exit 2 ;;
    esac
    # shellcheck disable=SC2086  # options are words by design
    "$sim" --format "$format" --rate 100 --fast $options --out "$out" --truth "$here/$name.truth.json"
    echo "$name: $(wc -c < "$out") bytes"
done
