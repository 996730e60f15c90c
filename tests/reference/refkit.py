"""The harness shared by the reference checks in tests/reference.

Each check script computes its references itself; this module only runs lopside and
keeps the score:

- LOPSIDE: the binary under test, as an absolute path (environment LOPSIDE, default
  build/lopside). VERBOSE: true when the environment sets VERBOSE=1, which makes
  Tally.close print every comparison with its tolerance.
- Tally: counts checks per group. Four ways to record one check:
    record(group, ok, detail)               a pass or a failure decided by the caller;
    check(group, dev, tol, detail)          a deviation within tol (NaN fails); the group's
                                            line shows its worst deviation;
    close(group, what, got, want, tol)      |got - want| <= tol, absolute (a missing or
                                            non-numeric value fails);
    close_rel(group, got, want, tol, detail)
                                            |got - want| <= tol * max(1, |want|) (a value
                                            that is not a number fails).
  report() prints one line per group, `ok GROUP: N checks` or `FAIL GROUP: F of N
  failed`, each failure's detail below it, and returns (passed, failed).
- rel_dev(got, want, scale): |got - want| relative to max(|want|, scale).
- continued(key, items): an INI entry `key = a, b, ...` continued on indented lines so
  that no line passes lopside's line limit.
- run_lopside(folder, name, text): writes NAME.ini, runs
  `LOPSIDE run NAME.ini --json NAME.json --quiet` and returns the JSON it wrote; raises
  LopsideError when lopside cannot run or exits with an error.
- run_checks(checks, arg, tally): calls every check(arg, tally); a check that crashes is
  one more failure, in the group `python error in CHECK`, and the others still run.
- finish(tally, folder): prints the group lines, keeps the folder of problem files of a
  failing run (says where) or removes it, prints the closing line `N passed, M failed`
  and returns the exit status (1 on any failure).
- main(prefix, checks, context): all of the above for a script whose checks write their
  problem files into one temporary folder.
"""

import json
import math
import os
import shutil
import subprocess
import tempfile
import traceback

LOPSIDE = os.path.abspath(os.environ.get("LOPSIDE", "build/lopside"))
VERBOSE = os.environ.get("VERBOSE") == "1"


class Tally:
    """Counts checks per group and prints one line per group.

    max_details: how many failure details to print per group (all when None)."""

    def __init__(self, max_details=None):
        self.groups = {}    # name -> {"n": checks, "failures": [details], "worst": dev or None}
        self.order = []
        self.max_details = max_details

    def record(self, group, ok, detail="", dev=None):
        """One check: whether it passed, what to print if not, and optionally its
        deviation (the group's line then shows the worst; a NaN deviation shows as inf)."""
        g = self.groups.get(group)
        if g is None:
            g = self.groups[group] = {"n": 0, "failures": [], "worst": None}
            self.order.append(group)
        g["n"] += 1
        if dev is not None:
            worst = 0.0 if g["worst"] is None else g["worst"]
            g["worst"] = max(worst, dev) if not math.isnan(dev) else math.inf
        if not ok:
            g["failures"].append(detail)
        return ok

    def check(self, group, dev, tol, detail):
        """Passes when the deviation is within tol (a NaN deviation fails)."""
        return self.record(group, dev <= tol, detail, dev)

    def close(self, group, what, got, want, tol):
        """Passes when |got - want| <= tol (NaN or a missing number fails)."""
        try:
            dev = abs(float(got) - float(want))
        except (TypeError, ValueError):
            return self.record(group, False, f"{what}: got {got!r}, expected {want!r}")
        ok = dev <= tol
        if VERBOSE:
            print(f"  {group[:2]} {what}: dev {dev:.3g} tol {tol:.3g} "
                  f"ratio {dev / tol if tol else math.inf:.3g}")
        return self.record(group, ok, f"{what}: got {float(got)!r}, expected {float(want)!r}, "
                                      f"off by {dev:.3g}, tolerance {tol:.3g}")

    def close_rel(self, group, got, want, tol, detail=""):
        """Passes when got is a number and |got - want| <= tol * max(1, |want|)."""
        ok = isinstance(got, (int, float)) and abs(got - want) <= tol * max(1.0, abs(want))
        return self.record(group, ok,
                           f"{detail}: lopside {got!r}, reference {want!r} (tol {tol})")

    def report(self):
        """Prints one line per group and the failures' details; returns (passed, failed)."""
        passed = failed = 0
        for name in self.order:
            g = self.groups[name]
            nf = len(g["failures"])
            passed += g["n"] - nf
            failed += nf
            worst = "" if g["worst"] is None else f", worst deviation {g['worst']:.3g}"
            if nf == 0:
                print(f"ok {name}: {g['n']} checks{worst}")
            else:
                print(f"FAIL {name}: {nf} of {g['n']} failed{worst}")
            shown = g["failures"][:self.max_details]
            for d in shown:
                print("    " + str(d).replace("\n", "\n    "))
            if len(shown) < nf:
                print(f"    ... and {nf - len(shown)} more")
        return passed, failed


def rel_dev(got, want, scale):
    """Deviation relative to max(|want|, scale); scale covers numbers near zero."""
    return abs(got - want) / max(abs(want), scale, 1e-300)


def continued(key, items, width=150):
    """`key = a, b, ...` continued on indented lines to stay under lopside's line limit."""
    out, line = [], f"{key} ="
    for i, item in enumerate(items):
        piece = f" {item}" + ("," if i + 1 < len(items) else "")
        if len(line) + len(piece) > width:
            out.append(line)
            line = "   "
        line += piece
    out.append(line)
    return out


class LopsideError(RuntimeError):
    """lopside could not run a problem file, or exited with an error."""

    def __init__(self, name, reason):
        super().__init__(f"{name}: {reason}")
        self.reason = reason


def run_lopside(folder, name, text, env=None, timeout=None):
    """Writes NAME.ini (text) into folder, runs `lopside run NAME.ini --json NAME.json
    --quiet` and returns the JSON. env: variables set on top of this process's
    environment; timeout: seconds (None: no limit). Raises LopsideError when lopside
    cannot be started, runs past the timeout or exits with a non-zero status."""
    path = os.path.join(folder, name + ".ini")
    out = os.path.join(folder, name + ".json")
    with open(path, "w", encoding="utf-8") as f:
        f.write(text)
    full_env = dict(os.environ, **env) if env else None
    try:
        proc = subprocess.run([LOPSIDE, "run", path, "--json", out, "--quiet"], env=full_env,
                              capture_output=True, text=True, timeout=timeout)
    except (OSError, subprocess.SubprocessError) as e:
        raise LopsideError(name, f"cannot run {LOPSIDE}: {e}") from e
    if proc.returncode != 0:
        raise LopsideError(name, f"lopside exited {proc.returncode}: {proc.stderr.strip()}")
    with open(out, encoding="utf-8") as f:
        return json.load(f)


def check_name(check):
    """A check's function name (also through functools.partial)."""
    return getattr(check, "func", check).__name__


def run_checks(checks, arg, tally):
    """Calls check(arg, tally) for every check; a crash is recorded as a failure of the
    group `python error in CHECK` and the other checks still run."""
    for check in checks:
        try:
            check(arg, tally)
        except Exception:
            tally.record(f"python error in {check_name(check)}", False,
                         traceback.format_exc().strip())


def finish(tally, folder=None):
    """Prints the group lines; keeps folder (and says where) when a check failed, else
    removes it; prints the closing `N passed, M failed`. Returns the exit status."""
    passed, failed = tally.report()
    if folder is not None:
        if failed:
            print(f"problem files kept in {folder}")
        else:
            shutil.rmtree(folder, ignore_errors=True)
    print(f"{passed} passed, {failed} failed")
    return 1 if failed else 0


def main(prefix, checks, context=None, tally=None):
    """Runs the checks with problem files in a new temporary folder named PREFIX...; each
    check gets (context(folder, tally) or the folder itself, tally). Returns the exit
    status; a missing binary is one failure."""
    if not os.access(LOPSIDE, os.X_OK):
        print(f"FAIL setup: {LOPSIDE} is not an executable (set LOPSIDE)")
        print("0 passed, 1 failed")
        return 1
    tally = Tally() if tally is None else tally
    folder = tempfile.mkdtemp(prefix=prefix)
    run_checks(checks, folder if context is None else context(folder, tally), tally)
    return finish(tally, folder)
