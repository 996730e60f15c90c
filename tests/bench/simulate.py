"""make bench: simulated trials per second on one core ([simulate]).

A finite problem (the tone-detection example: a state, a gaussian measurement and a lookup
among switch points per trial) and a grid problem (the interval-timing example: a state
from 401 grid states by an alias table, scalar noise, the Bayes estimate interpolated
between measurement points and a linlin loss). The Bayes rule only, OMP_NUM_THREADS=1;
the time is lopside's own of the simulated trials (JSON simulation.seconds), the median
of several runs. Usage: simulate.py LOPSIDE [RUNS]"""
import json
import os
import re
import subprocess
import sys
import tempfile

HERE = os.path.dirname(os.path.abspath(__file__))
EXAMPLES = os.path.join(HERE, "..", "..", "examples")

# (label, example, sessions, trials): about a second each at the targets.
CASES = [
    ("finite (tone detection, switch points)", "tone_detection.ini", 20000, 1000),
    ("grid (interval timing, interpolated estimates)", "interval_timing.ini", 10000, 1000),
]


def simulate_section(sessions, trials):
    return (f"[simulate]\nsessions = {sessions}\ntrials = {trials}\nseed = 1\n"
            "rules = bayes\n")


def main():
    lopside = sys.argv[1]
    runs = int(sys.argv[2]) if len(sys.argv) > 2 else 3
    env = dict(os.environ, OMP_NUM_THREADS="1")
    with tempfile.TemporaryDirectory() as folder:
        print(f"simulated trials per second, one core (median of {runs} runs)")
        for label, example, sessions, trials in CASES:
            with open(os.path.join(EXAMPLES, example), encoding="utf-8") as f:
                text = f.read()
            # The example's own [simulate] gives way to a longer one.
            text = re.sub(r"(?ms)^\[simulate\].*?(?=^\[|\Z)", "", text)
            ini = os.path.join(folder, example)
            out = os.path.join(folder, "out.json")
            with open(ini, "w", encoding="utf-8") as f:
                f.write(text + "\n" + simulate_section(sessions, trials))
            rates = []
            for _ in range(runs):
                subprocess.run([lopside, "run", ini, "--json", out, "--quiet"], env=env,
                               check=True)
                with open(out, encoding="utf-8") as f:
                    sim = json.load(f)["simulation"]
                rates.append(sim["trials_per_second"])
            rates.sort()
            print(f"  {label:48s} {rates[len(rates) // 2] / 1e6:7.1f} million trials/s "
                  f"({sessions * trials:,} trials)")


if __name__ == "__main__":
    main()
