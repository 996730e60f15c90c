"""make bench: a 201-point sweep of a 1,001-state x 501-measurement problem ([sweep.NAME]).

Grid states (an interval judged short or long against 800 ms, normal prior, gaussian
clock noise) and a payoff table swept over 201 false-alarm payoffs: at every point the
problem is re-built and its case, rule, choice rates and switch points solved. Prints the
median wall time of the whole command over several runs, the time per point, and the
same problem solved once without the sweep. Usage: sweep.py LOPSIDE [RUNS]"""
import os
import subprocess
import sys
import tempfile
import time

PROBLEM = """[problem]
title = Bench: 201-point sweep of a 1,001-state x 501-measurement choice
unit = ms
score_unit = points
[states]
from = 400
to = 1200
points = 1001
[prior]
family = normal
mean = 800
sd = 120
[evidence.clock]
noise = gaussian
sd = 80
grid_points = 501
observed = 850
[actions]
labels = short, long
[payoff]
cuts = 800
short = 1, -1
long = -2, 1
"""

SWEEP = """[sweep.penalty]
x = payoff.long[1]
x_from = -5
x_to = 0
x_points = 201
"""


def median_wall(cmd, runs):
    times = []
    for _ in range(runs):
        start = time.perf_counter()
        subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL)
        times.append(time.perf_counter() - start)
    times.sort()
    return times[len(times) // 2]


def main():
    lopside = sys.argv[1]
    runs = int(sys.argv[2]) if len(sys.argv) > 2 else 5
    with tempfile.TemporaryDirectory() as folder:
        one = os.path.join(folder, "one.ini")
        swept = os.path.join(folder, "sweep.ini")
        with open(one, "w", encoding="utf-8") as f:
            f.write(PROBLEM)
        with open(swept, "w", encoding="utf-8") as f:
            f.write(PROBLEM + SWEEP)
        t_one = median_wall([lopside, "run", one, "--quiet"], runs)
        t_sweep = median_wall([lopside, "run", swept, "--quiet"], runs)
    threads = os.environ.get("OMP_NUM_THREADS", "unset")
    print(f"sweep (median of {runs} runs, OMP_NUM_THREADS={threads})")
    print(f"  201 points, 1,001 states x 501 measurements: {t_sweep:.3f} s whole run, "
          f"{1000 * (t_sweep - t_one) / 201:.2f} ms per point; one solve without the sweep "
          f"{t_one:.3f} s")


if __name__ == "__main__":
    main()
