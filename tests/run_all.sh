#!/bin/sh
# Runs every test suite and prints one closing line: "tests: N passed, M failed".
# Each suite ends its own output with a line "N passed, M failed".
# Environment: LOPSIDE (the binary), UNIT_TESTS (the unit-test binary), PYTHON.
set -u
export LC_ALL=C
: "${LOPSIDE:=build/lopside}" "${UNIT_TESTS:=build/unit_tests}" "${PYTHON:=/usr/bin/python3}"
export LOPSIDE PYTHON

total_pass=0
total_fail=0
log=$(mktemp)
trap 'rm -f "$log"' EXIT

run_suite() {
    name=$1
    shift
    echo "== $name"
    "$@" >"$log" 2>&1
    status=$?
    cat "$log"
    summary=$(grep -E '^[0-9]+ passed, [0-9]+ failed' "$log" | tail -n 1)
    if [ -z "$summary" ]; then
        echo "$name: no summary line (exit $status): counted as one failure"
        total_fail=$((total_fail + 1))
        return
    fi
    pass=$(echo "$summary" | sed -E 's/^([0-9]+) passed.*/\1/')
    fail=$(echo "$summary" | sed -E 's/^[0-9]+ passed, ([0-9]+) failed.*/\1/')
    if [ "$status" -ne 0 ] && [ "$fail" -eq 0 ]; then
        echo "$name: exit $status with no failed test: counted as one failure"
        fail=1
    fi
    total_pass=$((total_pass + pass))
    total_fail=$((total_fail + fail))
}

run_suite "layers: includes run one way (tests/check_layers.py)" "$PYTHON" tests/check_layers.py
run_suite "key table against README and program (tests/check_keys.py)" "$PYTHON" tests/check_keys.py
run_suite "unit tests (Check)" "$UNIT_TESTS"
run_suite "input catalogue (tests/cases)" sh tests/run_cases.sh
run_suite "examples" sh tests/run_examples.sh
run_suite "scipy references (tests/reference)" "$PYTHON" tests/reference/check_finite.py
run_suite "value, sweeps and designs (tests/reference/check_studies.py)" "$PYTHON" \
    tests/reference/check_studies.py
run_suite "simulation against scipy (tests/reference)" "$PYTHON" tests/reference/check_simulation.py
run_suite "scipy references, grids (tests/reference)" "$PYTHON" tests/reference/check_grid.py
run_suite "continuous model, no grid (tests/reference/check_continuous.py)" "$PYTHON" \
    tests/reference/check_continuous.py --random 200 --seed 1
run_suite "workbook and CSV read back (openpyxl, csv)" "$PYTHON" tests/reference/check_workbook.py

echo
echo "tests: $total_pass passed, $total_fail failed"
[ "$total_fail" -eq 0 ]
