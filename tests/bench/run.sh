#!/bin/sh
# make bench: lopside against a numpy reference and the log-likelihood floor
# (bench.py), simulated trials per second (simulate.py) and a 201-point sweep
# (sweep.py). Medians of several runs; compare ratios within one run only (the machine
# is shared and noisy). Environment: LOPSIDE, FLOOR, PYTHON, RUNS.
set -eu
: "${LOPSIDE:=build/bench/lopside}" "${FLOOR:=build/bench/floor}" "${PYTHON:=/usr/bin/python3}"
: "${RUNS:=5}"
export OMP_NUM_THREADS="${OMP_NUM_THREADS:-$(nproc)}"
"$PYTHON" tests/bench/bench.py "$LOPSIDE" "$FLOOR" "$RUNS"
"$PYTHON" tests/bench/simulate.py "$LOPSIDE" "$RUNS"
"$PYTHON" tests/bench/sweep.py "$LOPSIDE" "$RUNS"
