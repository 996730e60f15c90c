#!/bin/sh
# Every example in examples/ and the built-in demo must run, write valid JSON and
# agree with the outside checks in tests/reference/check_examples.py.
set -u
: "${LOPSIDE:=build/lopside}" "${PYTHON:=/usr/bin/python3}"
pass=0
fail=0
out=$(mktemp -d)
trap 'rm -rf "$out"' EXIT

check() {
    if "$@" >"$out/log" 2>&1; then
        pass=$((pass + 1))
        echo "ok $name"
    else
        fail=$((fail + 1))
        echo "FAIL $name"
        sed 's/^/    /' "$out/log"
    fi
}

for ini in examples/*.ini; do
    base=$(basename "$ini" .ini)
    name="check $base"
    check "$LOPSIDE" check "$ini"
    name="run $base"
    check "$LOPSIDE" run "$ini" --json "$out/$base.json"
done
name="demo from another folder"
check sh -c "cd '$out' && '$(cd "$(dirname "$LOPSIDE")" && pwd)/$(basename "$LOPSIDE")' demo --json demo.json"
name="demo --print is the tone-detection example"
check sh -c "'$LOPSIDE' demo --print | cmp - examples/tone_detection.ini"
name="outside checks of the examples"
check "$PYTHON" tests/reference/check_examples.py "$out"

echo "$pass passed, $fail failed"
[ "$fail" -eq 0 ]
