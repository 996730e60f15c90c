#!/bin/sh
# make bench: times lopside on problems of our own. Prints medians of several runs;
# compare ratios within one run only (the machine is shared and noisy).
set -eu
: "${LOPSIDE:=build/bench/lopside}"
RUNS=${RUNS:-5}
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT

# A target-position estimate with a tolerance band: 10,000 grid states and 1,000
# measurement points, the size design.md sets the first performance target at.
cat >"$dir/tolerance.ini" <<'INI'
[problem]
title = Bench: tolerance band, 10,000 states x 1,000 measurements
unit = mm
score_unit = points
[states]
from = -50
to = 50
points = 10000
[prior]
family = normal
mean = 0
sd = 12
[evidence.vision]
noise = gaussian
sd = 4
grid_points = 1000
[actions]
estimate = yes
[loss]
curve = tolerance
half_width = 2
outside = 1
INI

median_seconds() {
    for i in $(seq "$RUNS"); do
        start=$(date +%s.%N)
        "$@" >/dev/null
        end=$(date +%s.%N)
        awk -v a="$start" -v b="$end" 'BEGIN { print b - a }'
    done | sort -n | awk '{ a[NR] = $1 } END { printf "%.3f", a[int((NR + 1) / 2)] }'
}

echo "lopside bench ($(nproc) cores, median of $RUNS runs)"
t=$(median_seconds "$LOPSIDE" run "$dir/tolerance.ini" --quiet)
echo "tolerance loss, 10,000 states x 1,000 measurements, whole run: $t s"
