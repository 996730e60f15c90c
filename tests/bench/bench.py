"""make bench: lopside against the numerical-Python way on the same problems.

For three sizes (states x measurements) and four losses it checks that lopside and the
numpy reference (tests/bench/reference.py: posterior matrix times loss matrix on the
same grids) give the same Bayes risk within the reference's own grid error (its answers
on the grid and on one with twice the step differ by that much) plus 1e-6 relative:
lopside answers for the continuous model, the reference for its grid. Then it prints
median times of several runs: lopside's rule on the file's grids (as before the
accuracy check), one whole solve on them, the accurate path (that solve, the companion
on a coarser grid, and any refinement) and its ratio to one solve; the reference's time
and the speed-up; peak memory; and lopside's rule time as a multiple of the floor
(tests/bench/floor.c: the M x S log-likelihood terms alone). Ratios compare numbers from
this one run only.
Usage: bench.py LOPSIDE FLOOR [RUNS]"""
import json
import os
import subprocess
import sys
import tempfile
import time

from problems import CURVES, ini

SIZES = [(1000, 200), (4000, 500), (10000, 1000)]
AGREEMENT = 1e-6
HERE = os.path.dirname(os.path.abspath(__file__))


def run(cmd, env=None):
    """Runs cmd; returns its stdout and wall seconds (exits the bench if it fails)."""
    start = time.perf_counter()
    proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=env)
    out, err = proc.communicate()
    wall = time.perf_counter() - start
    if proc.returncode != 0:
        sys.exit(f"bench: {' '.join(cmd)} failed:\n{err.decode()}")
    return out.decode(), wall


def peak_mib(cmd, env=None):
    """Peak resident memory of one run of cmd, in MiB (getrusage of the child)."""
    pid = os.fork()
    if pid == 0:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, 1)
        os.dup2(devnull, 2)
        os.execvpe(cmd[0], cmd, env if env is not None else os.environ)
    _, status, usage = os.wait4(pid, 0)
    if status != 0:
        sys.exit(f"bench: {' '.join(cmd)} failed")
    return usage.ru_maxrss / 1024.0


def median(values):
    values = sorted(values)
    return values[len(values) // 2]


def main():
    lopside, floor = sys.argv[1], sys.argv[2]
    runs = int(sys.argv[3]) if len(sys.argv) > 3 else 5
    # The machine may pin OpenBLAS to an older kernel for safety; the reference runs
    # with the library's own choice, as a scientist's numpy would (see DEVELOPERS.md).
    numpy_env = {k: v for k, v in os.environ.items()
                 if k not in ("OPENBLAS_CORETYPE", "OPENBLAS_L2_SIZE")}
    ref_runs = max(1, runs // 2)
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for n_s, n_m in SIZES:
            floor_s = float(run([floor, str(n_s), str(n_m), str(max(5, runs))])[0])
            for loss in CURVES:
                path = os.path.join(tmp, f"{loss}-{n_s}.ini")
                out = os.path.join(tmp, f"{loss}-{n_s}.json")
                with open(path, "w", encoding="utf-8") as f:
                    f.write(ini(loss, n_s, n_m))
                rule_times, one_times, accurate_times, whole_times = [], [], [], []
                for _ in range(runs):
                    _, wall = run([lopside, "run", path, "--quiet", "--json", out])
                    with open(out, encoding="utf-8") as f:
                        result = json.load(f)
                    timing = result["timing"]
                    one_times.append(timing["file_grid_seconds"])
                    accurate_times.append(timing["accurate_seconds"])
                    whole_times.append(wall)
                    if timing["solves"] == 2:  # no refinement: the rule reported is the file's
                        rule_times.append(timing["rule_seconds"])
                if not rule_times:
                    rule_times = [median(one_times)]
                risk = result["rule"]["bayes_risk"]
                ref_times, ref_risk = [], None
                ref_cmd = [sys.executable, os.path.join(HERE, "reference.py"), str(n_s),
                           str(n_m), loss]
                for _ in range(ref_runs):
                    text, _ = run(ref_cmd, env=numpy_env)
                    ref_risk, seconds = (float(v) for v in text.split())
                    ref_times.append(seconds)
                coarse_cmd = [sys.executable, os.path.join(HERE, "reference.py"),
                              str((n_s + 1) // 2), str((n_m + 1) // 2), loss]
                coarse_risk = float(run(coarse_cmd, env=numpy_env)[0].split()[0])
                grid_error = abs(ref_risk - coarse_risk)
                if abs(risk - ref_risk) > grid_error + AGREEMENT * abs(ref_risk):
                    sys.exit(f"bench: {loss} at {n_s} x {n_m}: lopside's Bayes risk {risk!r} "
                             f"and the reference's {ref_risk!r} differ by more than the "
                             f"reference's grid error {grid_error:.3g} plus {AGREEMENT} "
                             f"relative; no times are printed")
                rows.append({
                    "states": n_s, "measurements": n_m, "loss": loss,
                    "lopside_rule": median(rule_times), "lopside_whole": median(whole_times),
                    "lopside_one": median(one_times), "lopside_accurate": median(accurate_times),
                    "solves": result["timing"]["solves"],
                    "numpy": median(ref_times), "floor": floor_s,
                    "lopside_mib": peak_mib([lopside, "run", path, "--quiet"]),
                    "numpy_mib": peak_mib(ref_cmd, numpy_env),
                    "agreement": abs(risk - ref_risk) / abs(ref_risk),
                })
                print(f"  measured {loss:9s} {n_s:6d} x {n_m:5d}", file=sys.stderr)

    print(f"lopside against numpy ({os.cpu_count()} cores; medians of {runs} lopside runs "
          f"and {ref_runs} numpy runs; Bayes risks agree within the reference's grid error "
          f"plus {AGREEMENT:g} relative)")
    print()
    head = (f"{'states x meas.':>15} {'loss':>10} {'rule s':>8} {'1 solve':>8} "
            f"{'accurate':>9} {'ratio':>6} {'solves':>6} {'whole s':>8} "
            f"{'numpy s':>9} {'speed-up':>9} {'x floor':>8} {'ns/term':>8} "
            f"{'MiB':>6} {'numpy MiB':>10}")
    print(head)
    print("-" * len(head))
    for r in rows:
        terms = r["states"] * r["measurements"]
        print(f"{r['states']:>7} x {r['measurements']:<5} {r['loss']:>10} "
              f"{r['lopside_rule']:8.4f} {r['lopside_one']:8.4f} {r['lopside_accurate']:9.4f} "
              f"{r['lopside_accurate'] / r['lopside_one']:5.1f}x {r['solves']:6d} "
              f"{r['lopside_whole']:8.3f} {r['numpy']:9.3f} "
              f"{r['numpy'] / r['lopside_rule']:8.0f}x {r['lopside_rule'] / r['floor']:7.1f}x "
              f"{1e9 * r['lopside_rule'] / terms:8.2f} {r['lopside_mib']:6.0f} "
              f"{r['numpy_mib']:10.0f}")
    print()
    print("rule s: the rule and Bayes risk on the file's grids (JSON timing.rule_seconds);\n"
          "1 solve: the whole engine once on the file's grids (timing.file_grid_seconds);\n"
          "accurate: every solve of the accuracy check (timing.accurate_seconds), `ratio` times "
          "one solve,\nin `solves` solves; whole s: the whole command with reading and writing; "
          "x floor: rule s\nover the time of the M x S log-likelihood terms alone; ns/term: rule "
          "s per state-measurement\npair (flat when the cost grows as M x S).")


if __name__ == "__main__":
    main()
