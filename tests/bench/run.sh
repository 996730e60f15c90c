#!/bin/sh
# make bench: times lopside on problems of our own. Prints medians of several runs;
# compare ratios within one run only (the machine is shared and noisy).
set -eu
: "${LOPSIDE:=build/bench/lopside}"
export OMP_NUM_THREADS="${OMP_NUM_THREADS:-$(nproc)}"
RUNS=${RUNS:-5}
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT

median_seconds() {
    for i in $(seq "$RUNS"); do
        start=$(date +%s.%N)
        "$@" >/dev/null
        end=$(date +%s.%N)
        awk -v a="$start" -v b="$end" 'BEGIN { print b - a }'
    done | sort -n | awk '{ a[NR] = $1 } END { printf "%.3f", a[int((NR + 1) / 2)] }'
}

: "${FLOOR:=build/bench/floor}" "${PYTHON:=/usr/bin/python3}"
"$PYTHON" tests/bench/bench.py "$LOPSIDE" "$FLOOR" "$RUNS"
"$PYTHON" tests/bench/simulate.py "$LOPSIDE" "$RUNS"
"$PYTHON" tests/bench/sweep.py "$LOPSIDE" "$RUNS"
