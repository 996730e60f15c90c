#!/usr/bin/python3
"""Reads lopside's workbook and CSV folder with outside readers and compares them with the
JSON of the same run.

Readers: openpyxl (Debian's python3-openpyxl) for the XLSX, Python's csv module for the CSV
folder; the problem files themselves are read with configparser for the loss/payoff tables,
which the JSON does not repeat. For every example in examples/, the demo, and a few small
problems written here (an outcome table with repeats and three actions, numeric states with a
gaussian channel in a payoff file, a problem without evidence, two numeric channels whose rule
is not computed, and five problems with studies: rules that cannot be judged, two priced
channels, sweeps whose names clash or hold forbidden characters, a two-axis path sweep, designs
reached and not, a two-axis threshold sweep, sweeps and a simulation on grid states, an
estimate's sweep, and studies whose rule cannot be computed), it checks:

- the sheet names and their order, the defined names and the values they point at;
- every native table: Case's evidence model, observations, posterior, loss or payoff table and
  actions; Rule's switch points, outcome table and grid; Inputs against the file line by line;
- that the live cells hold formulas (posterior by log-sum-exp, SUMPRODUCT for expected scores,
  INDEX/MATCH for the Bayes action, _xlfn.NORM.DIST for gaussian channels) with cached values
  equal to the JSON, and that the Summary cites them;
- the provenance (SHA-256 recomputed here with hashlib);
- the sheets of the studies (workbook_studies.py): Rules, Value, one sheet per sweep (named
  by the README's rule), Designs and Simulation, every table against the JSON, the grids and
  their colour scales, chart titles, number formats and column widths; the headline names
  evpi_design and best_extra_* and the seed on the Summary, which lists every sheet;
- every CSV file against the JSON, index.csv against the folder, the sweeps' file names;
- safety: bad input writes nothing; a missing folder or a file-size limit (standing in for a
  full disk) fails with exit 1, names the path, leaves the old files untouched and no
  temporary behind.

Tolerances: libxlsxwriter stores numbers with 16 significant digits (%.16G), so cached values
read back within 2 units of the 16th digit: relative 1e-15 (absolute 1e-300 for zeros). The CSV
files write the shortest decimal that reads back to the same double as the JSON: compared
exactly, and every numeric cell (and every number in index.csv's descriptions) must be the
decimal of Python's float repr, which is the shortest round trip (0.05, never
0.050000000000000003).

Run from the repository root: LOPSIDE=build/lopside /usr/bin/python3 tests/reference/check_workbook.py
Ends with `N passed, M failed`; exits 1 on any failure.
"""

import configparser
import csv
import decimal
import glob
import hashlib
import json
import math
import os
import re
import resource
import shutil
import signal
import subprocess
import sys
import tempfile
import traceback

import openpyxl

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import workbook_studies as studies  # noqa: E402

LOPSIDE = os.path.abspath(os.environ.get("LOPSIDE", "build/lopside"))
REL = 1e-15

# Small problems of our own that reach the parts the examples do not.
EXTRA = {
    "three_way_table": """[problem]
title = Three-way feeder check
notes = Invented numbers, for the workbook tests.
score_unit = drops

[states]
labels = low, mid, high

[prior]
weights = 2, 5, 3          ; counts: normalized, with a warning

[evidence.scale]
outcomes = light, ok, heavy
given.low = 0.7, 0.2, 0.1
given.mid = 0.2, 0.6, 0.2
given.high = 0.05, 0.25, 0.7
repeats = 3
observed = ok, heavy, ok

[actions]
labels = refill, wait, recalibrate

[loss]
refill = 0, 2, 5
wait = 6, 0, 1
recalibrate = 3, 3, 3
""",
    "interval_values": """[problem]
title = Interval judgement, "long or short", with commas
unit = ms
score_unit = cents

[states]
values = 1, 2, 4, 8

[prior]
weights = 0.25, 0.25, 0.25, 0.25

[evidence.clock]
noise = gaussian
sd = 0.5, 0.7, 1.1, 2
repeats = 2
observed = 2.5, 3.1

[actions]
labels = short, long

[payoff]
short = 3, 2, -1, -4
long = -2, -1, 2, 5
""",
    "prior_only": """[problem]
title = Prior only
[states]
labels = dry, wet
[prior]
weights = 0.6, 0.4
[actions]
labels = go, stay
[loss]
go = 0, 5
stay = 2, 2
""",
    "two_readings": """[problem]
title = Two readings
[states]
labels = off, on
[prior]
weights = 0.5, 0.5
[evidence.a]
noise = gaussian
mean = 0, 1
sd = 1
observed = 0.4
[evidence.b]
noise = gaussian
mean = 0, 2
sd = 1.5
observed = 1.2
[actions]
labels = no, yes
[loss]
no = 0, 3
yes = 1, 0
""",
    "studies_feeder": """[problem]
title = Feeder check with studies
notes = Invented numbers, for the workbook tests of the studies.
score_unit = drops

[states]
labels = empty, full

[prior]
weights = 0.4, 0.6

[evidence.sensor]
outcomes = low, high
given.empty = 0.8, 0.2
given.full = 0.3, 0.7
observed = low

[evidence.scale]
noise = gaussian
mean = 0, 2
sd = 1
observed = 0.8

[actions]
labels = wait, refill

[loss]
wait = 6, 0
refill = 1, 2

[rule.cautious]              ; not judged with an outcome table: the sheet says why
kind = threshold
at = 0.5

[rule.optimist]
kind = believed
prior.weights[1] = 0.2
prior.weights[2] = 0.8

[value]
cost = 0.05
up_to = 3

[sweep.Rules]                ; the name of a sheet of the workbook
x = loss.wait[1]
x_from = 2
x_to = 10
x_points = 5

[sweep.rules]                ; the same name but for case
x = loss.wait[2]
x_from = 0
x_to = 1
x_points = 3

[sweep.grid: refill cost / scale sd? (a long name)]
x = loss.refill[1]
x_from = 0.5
x_to = 3
x_points = 4
y = evidence.scale.sd
y_from = 0.5
y_to = 2
y_points = 3

[design.refill_0_4_of_the_time]
vary = loss.refill[1]
from = 0
to = 5
goal = choice_rate.refill
equals = 0.4

[design.unreachable_risk]
vary = loss.refill[2]
from = 0
to = 1
goal = risk
equals = 100

[design.always_refill]
vary = loss.wait[2]
from = 0
to = 0.5
goal = action
equals = wait

[simulate]
sessions = 300
trials = 50
seed = 7
rules = bayes, cautious, optimist
floor = 40
""",
    "studies_roc": """[problem]
title = Detection thresholds against the signal's strength
score_unit = cents

[states]
labels = noise, signal

[prior]
weights = 0.5, 0.5

[evidence.eye]
noise = gaussian
mean = 0, 1
sd = 1
observed = 0.3

[actions]
labels = no, yes

[loss]
no = 0, 5
yes = 2, 0

[sweep.roc]
x = rule.threshold
x_from = -1
x_to = 2
x_points = 7
y = evidence.eye.mean[2]
y_from = 0.5
y_to = 2
y_points = 3
""",
    "studies_grid": """[problem]
title = Short or long on a grid of durations
unit = ms

[states]
from = 0
to = 100
points = 101

[prior]
family = normal
mean = 50
sd = 15

[evidence.timer]
noise = gaussian
sd = 10
observed = 55

[actions]
labels = short, long

[loss]
cuts = 50
short = 0, 3
long = 2, 0

[sweep.long_cost]
x = loss.long[1]
x_from = 1
x_to = 4
x_points = 4

[sweep.criterion]
x = rule.threshold
x_from = 30
x_to = 70
x_points = 9

[value]
up_to = 2

[simulate]
sessions = 200
trials = 30
seed = 3
""",
    "studies_estimate": """[problem]
title = Estimating a length with a tolerance band
unit = mm
score_unit = points

[states]
from = 0
to = 20
points = 201

[prior]
family = normal
mean = 10
sd = 3

[evidence.ruler]
noise = gaussian
sd = 2
observed = 12

[actions]
estimate = yes

[payoff]
curve = tolerance
half_width = 1
inside = 5
outside = 0

[rule.mean]
kind = posterior_mean

[sweep.ruler_sd]
x = evidence.ruler.sd
x_from = 0.5
x_to = 4
x_points = 5

[design.payoff_of_two]
vary = evidence.ruler.sd
from = 0.5
to = 6
goal = risk
equals = 2

[simulate]
sessions = 100
trials = 20
seed = 11
rules = bayes, mean
""",
}

# Two numeric channels: the rule, the design values, the sweep's points and the design
# cannot be computed; the case's value of one more measurement and the simulation can.
EXTRA["studies_uncomputed"] = EXTRA["two_readings"] + """[value]
up_to = 2
cost = 0.01
[sweep.b_sd]
x = evidence.b.sd
x_from = 1
x_to = 2
x_points = 3
[design.no_rule]
vary = evidence.b.sd
from = 1
to = 2
goal = choice_rate.yes
equals = 0.5
[simulate]
sessions = 50
trials = 20
seed = 5
"""


class Checks:
    def __init__(self):
        self.passed = 0
        self.failed = 0

    def ok(self, what, cond, detail=""):
        if cond:
            self.passed += 1
        else:
            self.failed += 1
            print(f"FAIL {what}{': ' + detail if detail else ''}")
        return cond

    def close(self, what, got, want, rel=REL):
        good = isinstance(got, (int, float)) and isinstance(want, (int, float)) and (
            abs(got - want) <= rel * abs(want) or abs(got - want) <= 1e-300)
        return self.ok(what, good, f"got {got!r}, want {want!r} (relative {rel})")

    def equal(self, what, got, want):
        return self.ok(what, got == want, f"got {got!r}, want {want!r}")


# --- running lopside -----------------------------------------------------------------------

def run(args, cwd=None, limit=None):
    """Runs lopside; limit caps the size of files it may write (bytes), like a full disk."""
    def cap():
        signal.signal(signal.SIGXFSZ, signal.SIG_IGN)
        resource.setrlimit(resource.RLIMIT_FSIZE, (limit, limit))
    return subprocess.run([LOPSIDE] + args, cwd=cwd, capture_output=True, text=True,
                          preexec_fn=cap if limit else None)


def problems(tmp):
    """(name, ini path or None for the demo, problem text) for every problem checked."""
    out = []
    for ini in sorted(glob.glob("examples/*.ini")):
        with open(ini, encoding="utf-8") as f:
            out.append((os.path.basename(ini)[:-4], os.path.abspath(ini), f.read()))
    demo = subprocess.run([LOPSIDE, "demo", "--print"], capture_output=True, text=True)
    out.append(("demo", None, demo.stdout))
    for name, text in EXTRA.items():
        path = os.path.join(tmp, name + ".ini")
        with open(path, "w", encoding="utf-8") as f:
            f.write(text)
        out.append((name, path, text))
    return out


def solve(name, ini, tmp):
    """Runs one problem with JSON, workbook and CSV; returns (json, xlsx path, csv dir)."""
    folder = os.path.join(tmp, name)
    os.makedirs(folder, exist_ok=True)
    if ini is None:
        res = run(["demo", "--json", "out.json", "--csv", "csv"], cwd=folder)
        xlsx = os.path.join(folder, "lopside-demo.xlsx")
    else:
        res = run(["run", ini, "--json", "out.json", "--workbook", "book.xlsx", "--csv", "csv"],
                  cwd=folder)
        xlsx = os.path.join(folder, "book.xlsx")
    if res.returncode != 0:
        raise RuntimeError(f"lopside failed on {name}: {res.stderr}")
    if ini is None and "Workbook written to ./lopside-demo.xlsx" not in res.stdout:
        raise RuntimeError("the demo's report does not say where its workbook went")
    with open(os.path.join(folder, "out.json"), encoding="utf-8") as f:
        return json.load(f), xlsx, os.path.join(folder, "csv")


# --- reading the workbook --------------------------------------------------------------------

def table(ws, name):
    """A native table as (header list, list of row lists, top-left (row, col), 1-based)."""
    ref = ws.tables[name].ref
    cells = ws[ref]
    header = [c.value for c in cells[0]]
    rows = [[c.value for c in r] for r in cells[1:]]
    return header, rows, (cells[0][0].row, cells[0][0].column)


def column(header, rows, name):
    i = header.index(name)
    return [r[i] for r in rows]


def names_of(wb):
    """Defined name -> (sheet, cell)."""
    out = {}
    items = wb.defined_names.definedName if hasattr(wb.defined_names, "definedName") \
        else wb.defined_names.values()
    for d in items:
        sheet, cell = d.attr_text.split("!")
        out[d.name] = (sheet, cell.replace("$", ""))
    return out


def scores_of_file(text):
    """The loss or payoff table of a problem file: (orientation, {action: [values]})."""
    cp = configparser.ConfigParser(inline_comment_prefixes=(";", "#"), comment_prefixes=(";", "#"))
    cp.read_string(text)
    orient = "payoff" if cp.has_section("payoff") else "loss"
    rows = {k: [float(v) for v in val.split(",")] for k, val in cp.items(orient)}
    return orient, rows


def state_names(j):
    st = j["problem"]["states"]
    return st["labels"] if "labels" in st else st["values"]


def is_live(j):
    """Live Case formulas: finite states, named actions, table or gaussian channels."""
    return "grid" not in j["problem"]["states"] and "actions" in j["case"] and all(
        ch["kind"] in ("table", "gaussian") for ch in j["problem"]["channels"])


def check_values_workbook(c, name, j, xlsx, text):
    """Grid states, estimates, other noise: the workbook holds values; compare them."""
    orient = j["orientation"]
    wb = openpyxl.load_workbook(xlsx, data_only=True)
    has_rule = j["rule"] is not None
    c.equal(f"{name}: sheets", wb.sheetnames, studies.expected_sheets(j))
    names = names_of(wb)
    kase = j["case"]
    key = "expected_payoff" if orient == "payoff" else "expected_loss"
    expect = {"evpi": kase["evpi"], f"case_{key}": kase[key]}
    if "bayes_estimate" in kase:
        expect["bayes_estimate"] = kase["bayes_estimate"]
    else:
        expect["bayes_action"] = kase["bayes_action"]
    for k, want_v in expect.items():
        c.ok(f"{name}: defined name {k}", k in names)
        if k in names:
            got = wb["Summary"][names[k][1]].value
            if isinstance(want_v, str):
                c.equal(f"{name}: {k}", got, want_v)
            else:
                c.close(f"{name}: {k}", got, want_v)
    if has_rule and j["rule"]["computed"]:
        rk = "bayes_payoff" if orient == "payoff" else "bayes_risk"
        c.close(f"{name}: {rk}", wb["Summary"][names[rk][1]].value, j["rule"][rk])
    h, rows, _ = table(wb["Case"], "posterior")
    post = kase.get("posterior_grid") or kase["posterior"]["p"]
    c.equal(f"{name}: posterior rows", len(rows), min(len(post), 100000))
    for got, want_v in zip(column(h, rows, "posterior"), post):
        if not c.close(f"{name}: posterior", got, want_v):
            break
    if "curve" in kase:
        h, rows, _ = table(wb["Case"], "estimate_curve")
        c.equal(f"{name}: estimate grid size", len(rows), len(kase["curve"]["estimate"]))
        for r, want_v in zip(rows, kase["curve"]["estimate"]):
            if not c.close(f"{name}: estimate", r[0], want_v):
                break
    ih, irows, _ = table(wb["Inputs"], "inputs")
    lines = text.split("\n")
    if lines and lines[-1] == "":
        lines.pop()
    c.equal(f"{name}: inputs text", [r[1] or "" for r in irows], lines)
    studies.check_study_sheets(c, name, j, wb, names, text)
    for sheet in wb.sheetnames[1:]:
        if wb[sheet].tables:
            c.ok(f"{name}: {sheet} has frozen rows", wb[sheet].freeze_panes is not None)


def check_workbook(c, name, j, xlsx, text):
    if not is_live(j):
        check_values_workbook(c, name, j, xlsx, text)
        return
    orient = j["orientation"]
    unit = j["problem"]["score_unit"] or "units"
    wb = openpyxl.load_workbook(xlsx, data_only=True)   # the cached values
    wf = openpyxl.load_workbook(xlsx)                   # the formulas
    has_rule = j["rule"] is not None
    c.equal(f"{name}: sheets", wb.sheetnames, studies.expected_sheets(j))

    # Defined names on the Summary and what they hold.
    names = names_of(wb)
    kase = j["case"]
    expect = {"bayes_action": kase["bayes_action"], "runner_up": kase["runner_up"],
              "margin": kase["margin"], "evpi": kase["evpi"]}
    if orient == "payoff":
        expect["case_expected_payoff"] = kase["expected_payoff"]
    else:
        expect["case_expected_loss"] = kase["expected_loss"]
    if has_rule:
        rule = j["rule"]
        scores = ("prior_only_payoff", "bayes_payoff") if orient == "payoff" else \
            ("prior_only_risk", "bayes_risk")
        for key in scores + ("value_of_evidence", "prior_only_action"):
            if rule.get(key) is not None:
                expect[key] = rule[key]
    expect.update(studies.study_names(j))
    c.equal(f"{name}: defined names", sorted(names), sorted(expect))
    for key, value in expect.items():
        if key not in names:
            continue
        sheet, cell = names[key]
        c.equal(f"{name}: {key} is on the Summary", sheet, "Summary")
        got = wb[sheet][cell].value
        if isinstance(value, str):
            c.equal(f"{name}: {key}", got, value)
        else:
            c.close(f"{name}: {key}", got, value)
    for key in ("bayes_action", "runner_up", "margin", "evpi"):
        formula = wf["Summary"][names[key][1]].value
        c.ok(f"{name}: Summary {key} cites the Case sheet",
             isinstance(formula, str) and formula.startswith("=Case!"), repr(formula))
    summary_text = [v for row in wb["Summary"].iter_rows(values_only=True) for v in row if v]
    c.ok(f"{name}: Summary shows the SHA-256", j["input"]["sha256"] in summary_text)
    c.ok(f"{name}: SHA-256 of the file",
         j["input"]["sha256"] == hashlib.sha256(text.encode("utf-8")).hexdigest())
    c.ok(f"{name}: Summary shows the title", j["problem"]["title"] in summary_text)
    c.ok(f"{name}: Summary has the cautions",
         any("animal-care or human-subjects" in str(v) for v in summary_text)
         and any("not medical, veterinary or safety advice" in str(v) for v in summary_text)
         and any("only as good as the model" in str(v) for v in summary_text))
    for w in j["warnings"]:
        c.ok(f"{name}: Summary shows warning {w[:40]}", f"- {w}" in summary_text)

    # Case: posterior table.
    ws, wsf = wb["Case"], wf["Case"]
    states = state_names(j)
    h, rows, (r0, c0) = table(ws, "posterior")
    c.equal(f"{name}: posterior states", column(h, rows, h[0]), states)
    for got, want in zip(column(h, rows, "prior"), j["problem"]["prior"]):
        c.close(f"{name}: prior", got, want)
    for got, want in zip(column(h, rows, "posterior"), kase["posterior"]["p"]):
        c.close(f"{name}: posterior", got, want)
    pcol = c0 + h.index("posterior")
    for i in range(len(states)):
        f = wsf.cell(r0 + 1 + i, pcol).value
        c.ok(f"{name}: posterior is log-sum-exp", isinstance(f, str) and
             f.startswith("=EXP(") and "SUMPRODUCT(EXP(" in f, repr(f))

    # Case: evidence models against the JSON channels and (for tables) their cells.
    for i, ch in enumerate(j["problem"]["channels"]):
        th, trows, _ = table(ws, f"evidence_{i + 1}")
        if ch["kind"] == "table":
            c.equal(f"{name}: evidence_{i + 1} outcomes", th[1:], ch["outcomes"])
            for r in trows:
                c.close(f"{name}: evidence_{i + 1} row sums to 1", sum(r[1:]), 1.0, 1e-6)
        else:
            c.equal(f"{name}: evidence_{i + 1} columns", th[1:], ["mean", "sd"])

    # Observations: one row per observed value, formulas per state.
    n_obs = sum(1 for line in text.splitlines() if line.strip().startswith("observed"))
    if n_obs:
        oh, orows, (o0, oc0) = table(ws, "observations")
        c.equal(f"{name}: observation columns", oh[:3], ["channel", "repeat", "observed"])
        for k in range(len(orows)):
            for s in range(len(states)):
                f = wsf.cell(o0 + 1 + k, oc0 + 3 + s).value
                ch = orows[k][0]
                kind = next(x["kind"] for x in j["problem"]["channels"] if x["name"] == ch)
                want_fn = "_xlfn.NORM.DIST(" if kind == "gaussian" else "MATCH("
                c.ok(f"{name}: observation formula uses {want_fn}",
                     isinstance(f, str) and want_fn in f, repr(f))
        # The ln likelihood column sums them: the log of the posterior ratio checks it.
        lh, lrows, _ = table(ws, "posterior")
        lnl = column(lh, lrows, "ln likelihood")
        prior = column(lh, lrows, "prior")
        post = column(lh, lrows, "posterior")
        for s in range(1, len(states)):
            if post[0] > 0 and post[s] > 0 and prior[0] > 0 and prior[s] > 0:
                c.close(f"{name}: ln likelihood difference matches the posterior ratio",
                        lnl[s] - lnl[0],
                        math.log(post[s] / prior[s]) - math.log(post[0] / prior[0]), 1e-9)
    else:
        c.ok(f"{name}: no observations table without observations",
             "observations" not in ws.tables)

    # Case: the loss or payoff table against the problem file.
    orient_file, scores = scores_of_file(text)
    c.equal(f"{name}: orientation", orient_file, orient)
    sh, srows, _ = table(ws, orient)
    actions = j["problem"]["actions"]
    c.equal(f"{name}: score table columns", sh[1:-1], [f"{a} ({unit})" for a in actions])
    for a_i, a in enumerate(actions):
        got = [r[1 + a_i] for r in srows]
        c.equal(f"{name}: {orient} of {a}", got, scores[a])
    best = [max(r[1:-1]) if orient == "payoff" else min(r[1:-1]) for r in srows]
    c.equal(f"{name}: best in each state", [r[-1] for r in srows], best)

    # Case: expected scores and the decision.
    ah, arows, (a0, ac0) = table(ws, "actions")
    key = "expected_payoff" if orient == "payoff" else "expected_loss"
    c.equal(f"{name}: actions", column(ah, arows, "action"), actions)
    for got, want in zip(column(ah, arows, f"expected {orient} ({unit})"), kase["actions"]):
        c.close(f"{name}: expected score of {want['action']}", got, want[key])
    for i in range(len(actions)):
        f = wsf.cell(a0 + 1 + i, ac0 + 1).value
        c.ok(f"{name}: expected score is SUMPRODUCT", isinstance(f, str) and
             f.startswith("=SUMPRODUCT("), repr(f))
    bayes_cell = names["bayes_action"]
    cited = wf["Summary"][bayes_cell[1]].value[len("=Case!"):].replace("$", "")
    f = wsf[cited].value
    c.ok(f"{name}: Bayes action by INDEX/MATCH", isinstance(f, str) and f.startswith("=INDEX("))
    c.equal(f"{name}: Case Bayes action", ws[cited].value, kase["bayes_action"])

    # Rule.
    if has_rule:
        check_rule(c, name, j, wb["Rule"], unit)

    # Inputs: the file line by line.
    ih, irows, _ = table(wb["Inputs"], "inputs")
    c.equal(f"{name}: inputs header", ih, ["line", "text"])
    lines = text.split("\n")
    if lines and lines[-1] == "":
        lines.pop()
    c.equal(f"{name}: inputs line numbers", [r[0] for r in irows], list(range(1, len(lines) + 1)))
    c.equal(f"{name}: inputs text", [r[1] or "" for r in irows], lines)
    for sheet in wb.sheetnames[1:]:
        if wb[sheet].tables:
            c.ok(f"{name}: {sheet} has frozen rows", wb[sheet].freeze_panes is not None)
    studies.check_study_sheets(c, name, j, wb, names, text)


def check_rule(c, name, j, ws, unit):
    rule = j["rule"]
    orient = j["orientation"]
    if not rule["computed"]:
        c.ok(f"{name}: no rule tables when not computed", not ws.tables)
        text = [v for row in ws.iter_rows(values_only=True) for v in row if v]
        c.ok(f"{name}: Rule says why", rule["not_computed"] in text)
        return
    sp = rule["switch_points"]
    if sp:
        h, rows, _ = table(ws, "switch_points")
        xcol = next(x for x in h if x.startswith("x: "))
        for got, want in zip(column(h, rows, xcol), sp):
            c.close(f"{name}: switch point", got, want["x"])
        c.equal(f"{name}: switch from", column(h, rows, "below x"), [s["from"] for s in sp])
        c.equal(f"{name}: switch to", column(h, rows, "above x"), [s["to"] for s in sp])
    else:
        c.ok(f"{name}: no switch table without switch points", "switch_points" not in ws.tables)
    if "table" in rule:
        h, rows, _ = table(ws, "rule_table")
        c.equal(f"{name}: rule_table rows", len(rows), len(rule["table"]))
        for got, want in zip(column(h, rows, "probability"), rule["table"]):
            c.close(f"{name}: row probability", got, want["probability"])
        for r, want in zip(rows, rule["table"]):
            for ch, val in want["outcomes"].items():
                if isinstance(val, dict):
                    for o, count in val.items():
                        c.equal(f"{name}: count {ch}:{o}", r[h.index(f"{ch}: {o} (count)")], count)
                else:
                    c.equal(f"{name}: outcome of {ch}", r[h.index(ch)], val)
            if "action" in want:
                c.equal(f"{name}: row action", r[h.index("Bayes action")], want["action"])
                key = "expected_payoff" if orient == "payoff" else "expected_loss"
                c.close(f"{name}: row expected score",
                        r[h.index(f"expected {orient} ({unit})")], want[key])
    if "grid" in rule:
        h, rows, _ = table(ws, "rule_grid")
        xcol = next(x for x in h if x.startswith("x: "))
        xs = column(h, rows, xcol)
        acts = column(h, rows, "Bayes action")
        nums = column(h, rows, "action number")
        grid = rule["grid"]
        n = len(grid["x"])
        want_acts = [a for row in grid["action"] for a in row]
        c.equal(f"{name}: grid size", len(rows), len(want_acts))
        for i, (got, want) in enumerate(zip(xs, grid["x"] * len(grid["action"]))):
            if not c.close(f"{name}: grid x {i % n}", got, want):
                break
        c.equal(f"{name}: grid actions", acts, want_acts)
        actions = j["problem"]["actions"]
        c.equal(f"{name}: action numbers", nums, [actions.index(a) + 1 for a in want_acts])
    c.ok(f"{name}: Rule has a chart", len(ws._charts) == 1, f"{len(ws._charts)} charts")


# --- the CSV folder ---------------------------------------------------------------------------

def read_csv(path):
    with open(path, newline="", encoding="utf-8") as f:
        rows = list(csv.reader(f))
    return rows[0], rows[1:]


def check_csv(c, name, j, folder):
    files = sorted(os.listdir(folder))
    if not is_live(j):
        check_index(c, name, folder, files)
        h, rows = read_csv(os.path.join(folder, "summary.csv"))
        summary = {r[0]: r[1] for r in rows}
        c.equal(f"{name}: summary.csv evpi", float(summary["evpi"]), j["case"]["evpi"])
        h, rows = read_csv(os.path.join(folder, "posterior.csv"))
        post = j["case"].get("posterior_grid") or j["case"]["posterior"]["p"]
        c.equal(f"{name}: posterior.csv", [float(r[2]) for r in rows], post)
        h, rows = read_csv(os.path.join(folder, "warnings.csv"))
        c.equal(f"{name}: warnings.csv", [r[0] for r in rows], j["warnings"])
        studies.check_study_csv(c, name, j, folder, files, read_csv)
        return
    check_index(c, name, folder, files)
    check_tables(c, name, j, folder, files)
    studies.check_study_csv(c, name, j, folder, files, read_csv)


NUMBER_IN_TEXT = re.compile(r"(?<![\w.])[-+]?\d+\.\d+(?:[eE][-+]?\d+)?(?![\w.])")


def not_shortest(cells):
    """The cells that read as finite numbers but are not the shortest decimal of their double.

    Python's repr of a float is the shortest text that reads back to it; Decimal compares the
    two decimals' exact values, so 0.05 matches 0.05 and 3 matches 3.0, while
    0.050000000000000003 (the same double) does not."""
    bad = []
    for cell in cells:
        try:
            v = float(cell)
        except ValueError:
            continue
        if math.isfinite(v) and decimal.Decimal(cell) != decimal.Decimal(repr(v)):
            bad.append(cell)
    return bad


def check_index(c, name, folder, files):
    ih, irows = read_csv(os.path.join(folder, "index.csv"))
    c.equal(f"{name}: index.csv header", ih, ["file", "rows", "holds"])
    listed = sorted([r[0] for r in irows] + ["index.csv"])
    c.equal(f"{name}: index.csv lists every file", listed, files)
    for r in irows:
        c.equal(f"{name}: index.csv numbers in the description of {r[0]} are shortest",
                not_shortest(NUMBER_IN_TEXT.findall(r[2])), [])
    for r in irows:
        _, data = read_csv(os.path.join(folder, r[0]))
        c.equal(f"{name}: {r[0]} row count in index", int(r[1]), len(data))
        c.equal(f"{name}: {r[0]} numbers are the shortest decimals",
                not_shortest(cell for row in data for cell in row)[:5], [])
        with open(os.path.join(folder, r[0]), "rb") as f:
            raw = f.read()
        c.ok(f"{name}: {r[0]} has CRLF line ends", raw.endswith(b"\r\n") and
             raw.count(b"\r\n") >= raw.count(b"\n"))


def check_tables(c, name, j, folder, files):
    orient = j["orientation"]
    kase = j["case"]
    h, rows = read_csv(os.path.join(folder, "posterior.csv"))
    c.equal(f"{name}: posterior.csv header", h, ["state", "prior", "posterior"])
    c.equal(f"{name}: posterior.csv prior", [float(r[1]) for r in rows], j["problem"]["prior"])
    c.equal(f"{name}: posterior.csv posterior", [float(r[2]) for r in rows],
            kase["posterior"]["p"])
    key = "expected_payoff" if orient == "payoff" else "expected_loss"
    h, rows = read_csv(os.path.join(folder, "actions.csv"))
    c.equal(f"{name}: actions.csv header", h, ["action", key, "bayes"])
    c.equal(f"{name}: actions.csv values", [(r[0], float(r[1])) for r in rows],
            [(a["action"], a[key]) for a in kase["actions"]])
    c.equal(f"{name}: actions.csv bayes", [r[0] for r in rows if r[2] == "1"],
            [kase["bayes_action"]])
    h, rows = read_csv(os.path.join(folder, "summary.csv"))
    summary = {r[0]: r[1] for r in rows}
    c.equal(f"{name}: summary.csv bayes_action", summary["bayes_action"], kase["bayes_action"])
    c.equal(f"{name}: summary.csv expected score", float(summary[key]), kase[key])
    c.equal(f"{name}: summary.csv evpi", float(summary["evpi"]), kase["evpi"])
    c.equal(f"{name}: summary.csv title", summary["title"], j["problem"]["title"])
    c.equal(f"{name}: summary.csv sha256", summary["input_sha256"], j["input"]["sha256"])
    rule = j["rule"]
    if rule:
        keys = ("bayes_payoff", "prior_only_payoff") if orient == "payoff" else \
            ("bayes_risk", "prior_only_risk")
        for k in keys + ("value_of_evidence",):
            if rule.get(k) is not None:
                c.equal(f"{name}: summary.csv {k}", float(summary[k]), rule[k])
    h, rows = read_csv(os.path.join(folder, "warnings.csv"))
    c.equal(f"{name}: warnings.csv", [r[0] for r in rows], j["warnings"])
    if rule and rule["computed"] and "grid" in rule:
        h, rows = read_csv(os.path.join(folder, "rule_grid.csv"))
        grid = rule["grid"]
        c.equal(f"{name}: rule_grid.csv x", [float(r[2]) for r in rows],
                grid["x"] * len(grid["action"]))
        c.equal(f"{name}: rule_grid.csv action", [r[3] for r in rows],
                [a for row in grid["action"] for a in row])
        h, rows = read_csv(os.path.join(folder, "switch_points.csv"))
        c.equal(f"{name}: switch_points.csv", [(float(r[2]), r[3], r[4]) for r in rows],
                [(s["x"], s["from"], s["to"]) for s in rule["switch_points"]])
    else:
        c.ok(f"{name}: no rule_grid.csv", "rule_grid.csv" not in files)
    if rule and rule["computed"] and "table" in rule:
        h, rows = read_csv(os.path.join(folder, "rule_table.csv"))
        c.equal(f"{name}: rule_table.csv probability", [float(r[h.index("probability")])
                                                        for r in rows],
                [t["probability"] for t in rule["table"]])
        if "action" in rule["table"][0]:
            c.equal(f"{name}: rule_table.csv action", [r[h.index("action")] for r in rows],
                    [t["action"] for t in rule["table"]])
            c.equal(f"{name}: rule_table.csv score", [float(r[h.index(key)]) for r in rows],
                    [t[key] for t in rule["table"]])
        for r, t in zip(rows, rule["table"]):
            for ch, val in t["outcomes"].items():
                if isinstance(val, dict):
                    for o, count in val.items():
                        c.equal(f"{name}: rule_table.csv {ch}:{o}", int(r[h.index(f"{ch}:{o}")]),
                                count)
                else:
                    c.equal(f"{name}: rule_table.csv {ch}", r[h.index(ch)], val)


# --- safety --------------------------------------------------------------------------------

def listing(folder):
    return sorted(os.listdir(folder))


def check_safety(c, tmp):
    folder = os.path.join(tmp, "safety")
    os.makedirs(folder)
    ini = os.path.abspath("examples/contamination_check.ini")
    bad = os.path.join(folder, "bad.ini")
    with open(bad, "w") as f:
        f.write("[problem]\ntitle = broken\n[states]\nlabels = a\n")
    res = run(["run", bad, "--workbook", "w.xlsx", "--csv", "out"], cwd=folder)
    c.equal("bad input exits 2", res.returncode, 2)
    c.equal("bad input writes nothing", listing(folder), ["bad.ini"])

    res = run(["run", ini, "-q", "--workbook", os.path.join(folder, "missing", "w.xlsx")])
    c.equal("workbook in a missing folder exits 1", res.returncode, 1)
    c.ok("the message names the workbook path", os.path.join(folder, "missing", "w.xlsx")
         in res.stderr, res.stderr)

    # A run's outputs land all or none: a workbook that cannot be written leaves an
    # earlier JSON of the same run untouched (and no temporary beside it).
    old_json = os.path.join(folder, "kept.json")
    with open(old_json, "w") as f:
        f.write("old results")
    res = run(["run", ini, "-q", "--json", old_json, "--workbook",
               os.path.join(folder, "missing", "w.xlsx")])
    c.equal("JSON and a failing workbook exit 1", res.returncode, 1)
    with open(old_json) as f:
        c.equal("the JSON is untouched when the workbook fails", f.read(), "old results")
    c.ok("no temporary is left beside the JSON",
         not [n for n in os.listdir(folder) if n.startswith("kept.json.tmp")], listing(folder))
    os.remove(old_json)

    blocker = os.path.join(folder, "plainfile")
    with open(blocker, "w") as f:
        f.write("not a folder")
    res = run(["run", ini, "-q", "--csv", blocker])
    c.equal("CSV folder that is a file exits 1", res.returncode, 1)
    c.ok("the message names the CSV folder", blocker in res.stderr, res.stderr)

    # A full disk, imitated by a limit on file size: the write fails half way.
    book = os.path.join(folder, "w.xlsx")
    with open(book, "wb") as f:
        f.write(b"old workbook")
    res = run(["run", ini, "-q", "--workbook", book], limit=4096)
    c.equal("workbook on a full disk exits 1", res.returncode, 1)
    c.ok("the message names the workbook", book in res.stderr, res.stderr)
    with open(book, "rb") as f:
        c.equal("the old workbook is untouched", f.read(), b"old workbook")
    out = os.path.join(folder, "out")
    os.makedirs(out)
    old = {"index.csv": b"old index", "rule_grid.csv": b"old grid", "mine.txt": b"keep"}
    for k, v in old.items():
        with open(os.path.join(out, k), "wb") as f:
            f.write(v)
    res = run(["run", ini, "-q", "--csv", out], limit=2048)
    c.equal("CSV on a full disk exits 1", res.returncode, 1)
    c.ok("the message names a CSV path", out in res.stderr, res.stderr)
    for k, v in old.items():
        with open(os.path.join(out, k), "rb") as f:
            c.equal(f"old {k} untouched", f.read(), v)
    c.equal("no new CSV file and no temporary left", listing(out), sorted(old))
    c.equal("no workbook temporary left", sorted(x for x in listing(folder)),
            ["bad.ini", "out", "plainfile", "w.xlsx"])

    # The folder is created, with missing parents, and a second run replaces the files.
    deep = os.path.join(folder, "a", "b", "csv")
    for _ in range(2):
        res = run(["run", ini, "-q", "--csv", deep])
        c.equal("CSV into a new nested folder", res.returncode, 0)
    c.ok("index.csv written", os.path.exists(os.path.join(deep, "index.csv")))
    c.ok("no temporaries after a second run", not any(".tmp-" in x for x in listing(deep)))

    # [output] paths are relative to the problem file.
    sub = os.path.join(folder, "sub")
    os.makedirs(sub)
    with open(ini, encoding="utf-8") as f:
        text = f.read()
    with open(os.path.join(sub, "p.ini"), "w", encoding="utf-8") as f:
        f.write(text + "\n[output]\nworkbook = rel.xlsx\ncsv = relcsv\n")
    res = run(["run", "sub/p.ini", "-q"], cwd=folder)
    c.equal("[output] run", res.returncode, 0)
    c.ok("[output] workbook beside the file", os.path.exists(os.path.join(sub, "rel.xlsx")))
    c.ok("[output] csv beside the file", os.path.exists(os.path.join(sub, "relcsv", "index.csv")))


def check_curve(c, name, j, xlsx, folder, text):
    """The curve of an estimate problem as understood, against the file itself (read
    with configparser): its name, numbers in the file's orientation and knots in the JSON,
    and the same curve named on summary.csv and the workbook's Summary."""
    if "estimates" not in j["problem"]:
        return
    cp = configparser.ConfigParser(inline_comment_prefixes=(";", "#"), comment_prefixes=(";", "#"))
    cp.read_string(text)
    sec = "payoff" if cp.has_section("payoff") else "loss"
    given = dict(cp.items(sec))
    got = j["problem"].get("curve") or {}
    c.equal(f"{name}: JSON curve name", got.get("name"), given["curve"])
    c.equal(f"{name}: JSON curve relative", got.get("relative"), given.get("relative") == "yes")
    if "half_width" in given:
        given["below"] = given["above"] = given.pop("half_width")
    defaults = {"scale": "1", "inside": "0"}
    expect = {"squared": ["scale"], "absolute": ["scale"], "linlin": ["under", "over"],
              "quadquad": ["under", "over"], "linex": ["a", "scale"],
              "tolerance": ["below", "above", "inside", "outside"], "points": []}[given["curve"]]
    for key in expect:
        c.close(f"{name}: JSON curve {key}", got.get(key), float(given.get(key, defaults.get(key))))
    if given["curve"] == "points":
        for key in ("error", "value"):
            want = [float(v) for v in given[key].split(",")]
            c.ok(f"{name}: JSON curve {key}", got.get(key) == want, f"{got.get(key)} != {want}")
    h, rows = read_csv(os.path.join(folder, "summary.csv"))
    summary = {r[0]: r[1] for r in rows}
    c.ok(f"{name}: summary.csv names the curve",
         summary.get("curve", "").startswith(given["curve"]), summary.get("curve"))
    wb = openpyxl.load_workbook(xlsx)
    lines = [str(v) for row in wb["Summary"].iter_rows(values_only=True) for v in row if v]
    c.ok(f"{name}: Summary names the curve",
         any(v.startswith(given["curve"] + ":") for v in lines), "no curve line")


def main():
    c = Checks()
    tmp = tempfile.mkdtemp(prefix="lopside-workbook-")
    try:
        for name, ini, text in problems(tmp):
            try:
                j, xlsx, folder = solve(name, ini, tmp)
                check_workbook(c, name, j, xlsx, text)
                check_csv(c, name, j, folder)
                check_curve(c, name, j, xlsx, folder, text)
                print(f"ok {name}")
            except Exception:  # a crash in one problem is one failure, not the end
                c.ok(f"{name} ran", False, traceback.format_exc())
        check_safety(c, tmp)
    finally:
        if c.failed:
            print(f"files kept in {tmp}")
        else:
            shutil.rmtree(tmp)
    print(f"{c.passed} passed, {c.failed} failed")
    return 1 if c.failed else 0


if __name__ == "__main__":
    sys.exit(main())
