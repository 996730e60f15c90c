#!/usr/bin/python3
"""lopside against the continuous model, computed without any grid (contmodel.py).

The contract (design.md "Numerical rules"): a grid problem means the prior restricted to
[from, to], the evidence and the loss exactly as stated, continuous actions unless an
estimate grid is given; grids are lopside's devices, and every reported number must agree
with the continuous model to the problem's `accuracy` (default 1e-6):
- scores (expected losses, risks, EVPI, EVSI, regrets): accuracy × the score scale
  (choices: the largest |loss| in the table; tolerance: max(|inside|, |outside|); points:
  the largest |value|; other curves: |prior-only risk|);
- probabilities and rates: accuracy, absolute;
- positions (posterior mean, sd, median, mode, q05, q95, Bayes estimates, switch points):
  accuracy × (to - from).
The tolerances below are exactly these, with no slack. Besides, on every problem: value of
evidence ≥ 0, regret ≥ 0, 0 ≤ EVSI(n) ≤ EVPI and EVSI non-decreasing in n, and, where the
JSON has `accuracy`, that it reports reached and asked. Where lopside reports reached >
asked (it says it missed the accuracy), that problem's numbers are held to 3 × reached
instead of the accuracy asked, and a note at the end lists it.

Every problem is an INI text below (invented scenarios and numbers). The reference reads
the same text. Groups: 1 prior families; 2 noise families and responses; 3 loss curves;
4 choices over grid states (cuts on and between grid points, at lines, payoff); 5 hard
regimes (narrow and wide noise, coarse grids, data far in the prior's tail, many repeats);
6 counts with a zero rate; 7 threshold and believed rules; 8 value of information;
9 the accuracy key; 10 a seeded random search (`--random N --seed S`, default 30 and 1).

Run from the repository root: LOPSIDE=build/lopside /usr/bin/python3 tests/reference/check_continuous.py
Prints one line per group with its worst deviation (in units of the tolerance scale, i.e.
the deviation divided by the scale: compare it with the accuracy) and ends with
`N passed, M failed`; exits 1 on failure.
"""

import argparse
import math
import random
import sys

import numpy as np
from scipy import special, stats

sys.dont_write_bytecode = True  # no __pycache__ beside the scripts
import refkit  # noqa: E402
import contmodel as cm  # noqa: E402


# Problems where lopside reports accuracy.reached above the accuracy asked.
NOTES = []


class Runner:
    def __init__(self, folder, tally):
        self.folder, self.tally = folder, tally

    def run(self, name, text, group):
        try:
            return refkit.run_lopside(self.folder, name, text, timeout=120)
        except refkit.LopsideError as e:
            self.tally.record(group, False, str(e))
            return None


def get(d, *path):
    for p in path:
        if d is None:
            return None
        d = d.get(p) if isinstance(d, dict) else None
    return d


class Cmp:
    """Comparisons of one problem, with the contract's units. The group's worst deviation
    is recorded relative to the unit (score scale, 1, or to - from)."""

    def __init__(self, tally, group, name, model):
        self.t, self.g, self.name, self.m = tally, group, name, model
        self.acc = model.accuracy

    def num(self, what, got, want, unit):
        tol = self.acc * unit
        detail = f"{self.name}: {what}: lopside {got!r}, continuous {want!r}"
        try:
            dev = abs(float(got) - float(want))
        except (TypeError, ValueError):
            return self.t.record(self.g, False, detail + " (missing)", math.inf)
        if math.isnan(dev):
            return self.t.record(self.g, False, detail, math.inf)
        ok = dev <= tol
        if refkit.VERBOSE:
            print(f"  {self.name} {what}: dev {dev:.3g} tol {tol:.3g}")
        return self.t.record(self.g, ok, f"{detail}, off by {dev:.3g} = {dev / unit:.3g} of "
                                         f"{unit:.4g}, tolerance {tol:.3g}", dev / unit)

    def pos(self, what, got, want):
        return self.num(what, got, want, self.m.span)

    def score(self, what, got, want):
        return self.num(what, got, want, self.m.score_scale())

    def prob(self, what, got, want):
        return self.num(what, got, want, 1.0)

    def holds(self, what, ok):
        return self.t.record(self.g, bool(ok), f"{self.name}: {what}")


# ---------------------------------------------------------------------------------------
def check_problem(runner, tally, group, name, text, mode=True, rule=True, evsi=True,
                  rules=(), switch=True):
    """Runs one problem and compares every main number the continuous model defines.
    mode: compare the posterior mode (off where the posterior has no unique maximum);
    rule/evsi: compare the decision rule and value of information; rules: [(name, kind,
    arg)] with kind 'threshold' (arg = t) or 'believed' (arg = [(path, value)])."""
    d = runner.run(name, text, group)
    if d is None:
        return
    m = cm.Model(text)
    c = Cmp(tally, group, name, m)
    acc = d.get("accuracy")
    if isinstance(acc, dict):
        c.holds(f"accuracy: reached {acc.get('reached')!r} and asked {acc.get('asked')!r} reported",
                isinstance(acc.get("reached"), (int, float)) and isinstance(acc.get("asked"), (int, float)))
        # lopside says it did not reach the accuracy asked (an honest miss, not a defect):
        # its numbers are held to 3 × what it reached instead, and a note says so.
        if isinstance(acc.get("reached"), (int, float)) and isinstance(acc.get("asked"), (int, float)) \
                and acc["reached"] > acc["asked"]:
            c.acc = 3 * acc["reached"]
            NOTES.append(f"{name}: accuracy.reached {acc['reached']:.3g} > asked {acc['asked']:.3g} "
                         f"(worst: {(acc.get('worst') or {}).get('quantity')}); checked within 3 × reached")
    ref = m.case(mode=mode)
    post = get(d, "case", "posterior")
    for key, want in ref["posterior"].items():
        c.pos(f"posterior {key}", get(post, key), want)
    got_act = get(d, "case", "bayes_action")
    if m.kind == "choice":
        c.holds(f"Bayes action {got_act!r}, continuous {ref['action']!r}", got_act == ref["action"])
        got = {a.get("action"): a.get("expected_loss") for a in get(d, "case", "actions") or []}
        for lab, el in zip(m.loss.labels, ref["actions"]):
            c.score(f"expected loss of {lab}", got.get(lab), el)
    else:
        # An estimate within the position tolerance, or one as good to the score tolerance
        # (a flat expected loss leaves its minimizer loosely defined).
        try:
            dev = abs(float(got_act) - ref["action"])
            ok = dev <= c.acc * m.span or \
                m.EL(m.case_dens(), float(got_act)) - ref["expected_loss"] <= c.acc * m.score_scale()
        except (TypeError, ValueError):
            dev, ok = math.inf, False
        tally.record(group, ok, f"{name}: Bayes estimate {got_act!r}, continuous {ref['action']!r} "
                                f"(off by {dev:.3g}, tolerance {c.acc * m.span:.3g})", dev / m.span)
    c.score("case expected loss", get(d, "case", "expected_loss"), ref["expected_loss"])
    c.score("case EVPI", get(d, "case", "evpi"), ref["evpi"])
    if not m.channels or not rule:
        return
    r = d.get("rule") or {}
    por = m.prior_only_risk()
    c.score("prior-only risk", r.get("prior_only_risk"), por)
    br, switches, rng = m.bayes_risk()
    if br is not None:
        c.score("Bayes risk", r.get("bayes_risk"), br)
    for key in ("prior_only_risk", "bayes_risk"):
        if r.get(key) is None:
            break
    else:
        c.holds(f"value of evidence {r['prior_only_risk'] - r['bayes_risk']!r} >= 0",
                r["prior_only_risk"] - r["bayes_risk"] >= 0)
    if m.kind == "choice" and switch:
        got_sw = [p.get("x") for p in r.get("switch_points") or []]
        ch = m.channel()
        inner = m.pred_range(ch, ch.repeats, 5e-7)
        # Switch points are measurements: the contract's unit is the measurement span
        # (README, "Accuracy"), which lopside reports; held to no more than the state
        # range plus twice the predictive's 1e-10 range computed here, so a span inflated
        # by the grid cannot loosen the check.
        span = get(d, "accuracy", "scales", "measurement_span")
        limit = m.span + 2 * (rng[1] - rng[0])
        unit = span if isinstance(span, (int, float)) and 0 < span <= limit else m.span
        c.holds(f"measurement span {span!r} within the state range plus twice the "
                f"predictive's range {limit:.6g}", unit == span)
        # Every switch point where the predictive is not negligible must be reported;
        # every reported one must be a switch point (beyond the 1e-10 range: unverifiable).
        for x in switches:
            if inner[0] <= x <= inner[1]:
                near = min(got_sw, key=lambda g: abs(g - x)) if got_sw else None
                c.num(f"switch point near {x:.6g}", near, x, unit)
        for g in got_sw:
            if rng[0] <= g <= rng[1]:
                near = min(switches, key=lambda x: abs(g - x)) if switches else None
                c.num(f"reported switch point {g:.6g} is a switch point", g, near, unit)
    # Rules on choice problems.
    ch = m.channel() if m.channels else None
    got_rules = {x.get("name"): x for x in d.get("rules") or []}
    for rname, kind, arg in rules:
        if kind == "threshold":
            want = m.threshold_risk(ch, ch.repeats, arg)
        else:
            b = cm.Model(text, arg)
            regions, _, _ = b.bayes_choice_rule(b.channel(ch.name), ch.repeats)
            want = m.region_risk(ch, ch.repeats, regions)
        g = got_rules.get(rname, {})
        c.score(f"rule {rname} risk", g.get("risk"), want)
        if br is not None:
            c.score(f"rule {rname} regret", g.get("regret"), want - br)
    for x in d.get("rules") or []:
        c.holds(f"rule {x.get('name')}: regret {x.get('regret')!r} >= 0",
                x.get("regret") is not None and x["regret"] >= 0)
    # Value of information.
    v = d.get("value")
    if v and br is not None:
        evpi = br - m.best_known_loss(m.prior)
        c.score("value EVPI", v.get("evpi"), evpi)
        extra = [e for e in v.get("extra") or [] if e.get("channel") == ch.name]
        prev = 0.0
        for e in sorted(extra, key=lambda e: e.get("n", 0)):
            ev = e.get("evsi")
            if evsi:
                brn = m.bayes_risk(ch, ch.repeats + e["n"])[0]
                if brn is not None:
                    c.score(f"EVSI n={e['n']}", ev, br - brn)
            ok = ev is not None and 0 <= ev <= v.get("evpi", math.inf) and ev >= prev
            c.holds(f"EVSI n={e.get('n')}: {ev!r} within [EVSI(n-1) = {prev!r}, EVPI = "
                    f"{v.get('evpi')!r}]", ok)
            prev = ev if ev is not None else prev


# ---------------------------------------------------------------------------------------
# Problems. Each is (group, name, text, options).
def ini(*sections):
    """sections: (name, {key: value}) pairs; lists continue on indented lines."""
    out = []
    for name, entries in sections:
        out.append(f"[{name}]")
        for k, val in entries.items():
            if isinstance(val, str) and len(val) > 120:
                out += refkit.continued(k, [x.strip() for x in val.split(",")])
            else:
                out.append(f"{k} = {val}")
        out.append("")
    return "\n".join(out)


def est(title, states, prior, evidence, loss, actions=None, value=None, extra=()):
    secs = [("problem", {"title": title}), ("states", states), ("prior", prior)]
    secs += [(k, e) for k, e in evidence]
    secs.append(("actions", dict({"estimate": "yes"}, **(actions or {}))))
    secs.append(loss)
    secs += list(extra)
    if value:
        secs.append(("value", value))
    return ini(*secs)


def choice(title, states, prior, evidence, labels, loss, value=None, extra=()):
    secs = [("problem", {"title": title}), ("states", states), ("prior", prior)]
    secs += [(k, e) for k, e in evidence]
    secs.append(("actions", {"labels": ", ".join(labels)}))
    secs.append(loss)
    secs += list(extra)
    if value:
        secs.append(("value", value))
    return ini(*secs)


SQ = ("loss", {"curve": "squared"})
G1, G2, G3, G4 = ("1 prior families", "2 noise families and responses", "3 loss curves",
                  "4 choices over grid states")
G5, G6, G7, G8, G9 = ("5 hard regimes", "6 counts with a zero rate", "7 threshold and believed rules",
                      "8 value of information", "9 the accuracy key")


def problems():
    P = []
    add = lambda g, n, t, **o: P.append((g, n, t, o))
    # 1. Prior families (squared or absolute loss: every posterior summary is compared).
    gauge = [("evidence.gauge", {"noise": "gaussian", "sd": 0.02, "observed": "10.03"})]
    add(G1, "uniform_gauge", est("Part width on a gauge, flat prior", {"from": 9.9, "to": 10.1, "points": 401},
                                 {"family": "uniform"}, gauge, SQ), mode=False)
    add(G1, "uniform_inner", est("Part width, flat prior on a narrower band",
                                 {"from": 9.8, "to": 10.2, "step": 0.001},
                                 {"family": "uniform", "low": 9.95, "high": 10.08}, gauge,
                                 ("loss", {"curve": "absolute"})), mode=False)
    add(G1, "normal_reach", est("Reach endpoint, normal prior", {"from": -60, "to": 60, "points": 1201},
                                {"family": "normal", "mean": 2, "sd": 4},
                                [("evidence.hand", {"noise": "gaussian", "sd": 3, "repeats": 2,
                                                    "observed": "5.1, 3.3"})], SQ, value={"up_to": 3}))
    add(G1, "lognormal_rt", est("Reaction time, lognormal prior, scalar timing noise",
                                {"from": 100, "to": 1500, "step": 2},
                                {"family": "lognormal", "median": 420, "log_sd": 0.35},
                                [("evidence.clock", {"noise": "scalar", "weber": 0.12, "sd_floor": 15,
                                                     "observed": 510})],
                                ("loss", {"curve": "linlin", "under": 0.01, "over": 0.03})))
    add(G1, "gamma_flash", est("Photon rate of a dim flash, gamma prior",
                               {"from": 0, "to": 40, "points": 801}, {"family": "gamma", "shape": 2.5, "scale": 2},
                               [("evidence.tube", {"noise": "poisson", "window": 0.5, "repeats": 2,
                                                   "observed": "3, 5"})], SQ, value={"up_to": 2}))
    add(G1, "beta_unit", est("Contamination fraction, beta prior on the unit interval",
                             {"from": 0, "to": 1, "points": 501}, {"family": "beta", "alpha": 2, "beta": 5},
                             [("evidence.assay", {"noise": "binomial", "trials": 12, "observed": 4})],
                             ("loss", {"curve": "absolute"})))
    add(G1, "beta_partial", est("Contamination fraction, beta prior cut to [0.05, 0.6]",
                                {"from": 0.05, "to": 0.6, "points": 221}, {"family": "beta", "alpha": 1.5, "beta": 3},
                                [("evidence.assay", {"noise": "binomial", "trials": 10, "observed": 2})], SQ))
    add(G1, "student_drift", est("Gaze drift, heavy-tailed prior", {"from": -30, "to": 30, "points": 1201},
                                 {"family": "student", "center": 0, "scale": 1.5, "df": 3},
                                 [("evidence.eye", {"noise": "gaussian", "sd": 2, "observed": 6.5})], SQ))
    add(G1, "exponential_wait", est("Waiting time, exponential prior, lognormal report",
                                    {"from": 0.01, "to": 30, "points": 1500}, {"family": "exponential", "mean": 4},
                                    [("evidence.report", {"noise": "lognormal", "log_sd": 0.4, "observed": 2.2})], SQ))
    add(G1, "table_band", est("Band position, tabulated prior", {"from": 0, "to": 10, "points": 501},
                              {"family": "table", "at": "1, 3, 6, 9", "density": "0, 2, 1, 0"},
                              [("evidence.probe", {"noise": "gaussian", "sd": 0.8, "observed": 4.1})],
                              ("loss", {"curve": "tolerance", "half_width": 0.5, "outside": 1})))
    add(G1, "mixture_target", ini(
        ("problem", {"title": "Target in one of two places, mixture prior"}),
        ("states", {"from": -15, "to": 15, "points": 1201}),
        ("prior", {"family": "mixture", "parts": "near, far"}),
        ("prior.near", {"weight": 0.7, "family": "normal", "mean": -2, "sd": 1}),
        ("prior.far", {"weight": 0.3, "family": "normal", "mean": 4, "sd": 1.5}),
        ("evidence.eye", {"noise": "gaussian", "sd": 2.5, "observed": 1.5}),
        ("actions", {"estimate": "yes"}), SQ))
    # 2. Noise families and responses.
    add(G2, "linear_gaussian", est("Pointing with gain and offset", {"from": -40, "to": 40, "points": 1601},
                                   {"family": "normal", "mean": 0, "sd": 8},
                                   [("evidence.hand", {"noise": "gaussian", "sd": 3, "repeats": 3,
                                                       "observed": "2.4, 3.9, 3.0", "response": "linear",
                                                       "offset": 0.2, "slope": 0.95})], SQ))
    add(G2, "power_lognormal", est("Brightness magnitude estimates", {"from": 0.05, "to": 20, "points": 1996},
                                   {"family": "exponential", "mean": 4},
                                   [("evidence.rating", {"noise": "lognormal", "log_sd": 0.2, "repeats": 2,
                                                         "observed": "3.1, 3.6", "response": "power", "offset": 0.5,
                                                         "gain": 2, "exponent": 0.33})], SQ, value={"up_to": 2}))
    add(G2, "saturating_poisson", est("Spike counts against contrast", {"from": 0, "to": 1, "points": 1001},
                                      {"family": "beta", "alpha": 1.5, "beta": 4},
                                      [("evidence.cell", {"noise": "poisson", "window": 0.5, "repeats": 3,
                                                          "observed": "12, 15, 9", "response": "saturating",
                                                          "base": 2, "top": 40, "half": 0.2, "exponent": 2})], SQ))
    add(G2, "logistic_binomial", est("Two-interval detection, 40 trials", {"from": 0, "to": 1, "points": 201},
                                     {"family": "uniform"},
                                     [("evidence.observer", {"noise": "binomial", "trials": 40, "observed": 31,
                                                             "response": "logistic", "low": 0.5, "high": 0.98,
                                                             "mid": 0.3, "width": 0.05})], SQ))
    add(G2, "table_scalar", est("A nonlinear internal clock", {"from": 150, "to": 1500, "points": 1351},
                                {"family": "lognormal", "median": 550, "log_sd": 0.3},
                                [("evidence.clock", {"noise": "scalar", "weber": 0.12, "sd_floor": 30,
                                                     "observed": 700, "response": "table", "at": "200, 600, 1000",
                                                     "value": "180, 640, 1150"})], SQ))
    add(G2, "two_channels", est("Flash rate from a counter and a rating", {"from": 0, "to": 30, "points": 601},
                                {"family": "gamma", "shape": 3, "scale": 2},
                                [("evidence.counter", {"noise": "poisson", "repeats": 2, "observed": "6, 9"}),
                                 ("evidence.rating", {"noise": "gaussian", "sd": 2, "observed": 8.5})],
                                SQ), rule=False)
    # 3. Loss curves, normal prior and gaussian noise (±15 prior sd on the grid).
    nn = dict(states={"from": -60, "to": 60, "points": 1201}, prior={"family": "normal", "mean": 0, "sd": 4},
              evidence=[("evidence.hand", {"noise": "gaussian", "sd": 2.5, "observed": 3.2})])
    for nm, loss in (("squared", {"curve": "squared", "scale": 2}),
                     ("absolute", {"curve": "absolute"}),
                     ("linlin", {"curve": "linlin", "under": 1, "over": 4}),
                     ("quadquad", {"curve": "quadquad", "under": 3, "over": 1}),
                     ("linex", {"curve": "linex", "a": 0.8, "scale": 1.5}),
                     ("tolerance", {"curve": "tolerance", "half_width": 1.5, "outside": 2}),
                     ("points", {"curve": "points", "error": "-4, 0, 2", "value": "3, 0, 5"})):
        add(G3, f"curve_{nm}", est(f"Reach endpoint, {nm} loss", loss=("loss", loss), value={"up_to": 2}, **nn))
    add(G3, "curve_tolerance_payoff", est("Juice inside an asymmetric band",
                                          loss=("payoff", {"curve": "tolerance", "below": 1, "above": 2,
                                                           "inside": 3, "outside": 0}), **nn))
    add(G3, "curve_points_payoff", est("Graded juice by error", loss=("payoff", {"curve": "points",
                                                                                "error": "-3, -1, 0, 1, 3",
                                                                                "value": "0, 2, 3, 2, 0"}), **nn))
    # Steps made of ramps 1e-3 wide on a grid 100 times coarser: the points curve is
    # integrated against the continuous density, not sampled at the states.
    add(G3, "curve_points_steps", est("Saccade landing: reward band, penalty past it",
                                      {"from": -12, "to": 12, "step": 0.1},
                                      {"family": "normal", "mean": 0, "sd": 3},
                                      [("evidence.eye", {"noise": "gaussian", "sd": 1.5, "observed": 0.8})],
                                      ("payoff", {"curve": "points",
                                                  "error": "-1.001, -1, 1, 1.001, 3, 3.001",
                                                  "value": "0, 5, 5, -8, -8, 0"})))
    add(G3, "curve_relative_squared", est("Relative error of a rate estimate", {"from": 0.5, "to": 60, "points": 1191},
                                          {"family": "gamma", "shape": 4, "scale": 3},
                                          [("evidence.counter", {"noise": "poisson", "observed": 14})],
                                          ("loss", {"curve": "squared", "relative": "yes"})))
    add(G3, "estimate_grid", est("Band centre from a grid of settings", loss=("loss", {"curve": "tolerance",
                                                                                       "half_width": 1, "outside": 1}),
                                 actions={"from": -5, "to": 5, "points": 11}, **nn))
    # 4. Choices over grid states (reaction-time deadlines).
    tim = dict(states={"from": 100, "to": 1100, "points": 501}, prior={"family": "normal", "mean": 600, "sd": 120},
               evidence=[("evidence.clock", {"noise": "gaussian", "sd": 80, "observed": 650})])
    three = ["short", "unsure", "long"]
    add(G4, "cuts_on_grid", choice("Short or long interval, cuts on grid points", labels=three,
                                   loss=("loss", {"cuts": "500, 600, 702", "short": "0, 0, 4, 8",
                                                  "unsure": "1.5, 1.5, 1.5, 1.5", "long": "8, 4, 0, 0"}), **tim))
    add(G4, "cuts_between", choice("Short or long, cut between grid points", labels=["short", "long"],
                                   loss=("loss", {"cuts": 601.3, "short": "0, 5", "long": "3, 0"}),
                                   value={"up_to": 2}, **tim))
    add(G4, "at_lines", choice("Short or long, graded loss lines", labels=three,
                               loss=("loss", {"at": "400, 600, 800", "short": "0, 2, 9", "unsure": "2, 2, 2",
                                              "long": "9, 2.5, 0"}), **tim))
    add(G4, "two_switches", choice("In time or not, a window of deadlines", labels=["go", "wait"],
                                   loss=("loss", {"cuts": "451, 600, 749.5", "go": "0, 2, 6, 2",
                                                  "wait": "5, 3, 0, 4"}), **tim))
    add(G4, "payoff_cuts_coarse", choice("Points for a timing call, coarse grid",
                                         {"from": 100, "to": 1100, "step": 25},
                                         {"family": "normal", "mean": 600, "sd": 120},
                                         [("evidence.clock", {"noise": "gaussian", "sd": 80, "observed": 560})],
                                         ["early", "late"], ("payoff", {"cuts": 612.5, "early": "3, -2",
                                                                       "late": "-1, 2"})))
    # 5. Hard regimes.
    add(G5, "narrow_noise", est("Gauge far finer than the spread of parts", {"from": -50, "to": 50, "step": 0.1},
                                {"family": "normal", "mean": 0, "sd": 10},
                                [("evidence.gauge", {"noise": "gaussian", "sd": 0.01, "observed": 3.21})],
                                SQ, value={"up_to": 2}))
    add(G5, "wide_noise", est("A reading much noisier than the prior", {"from": -15, "to": 15, "points": 601},
                              {"family": "normal", "mean": 0, "sd": 1},
                              [("evidence.probe", {"noise": "gaussian", "sd": 100, "observed": 40})],
                              ("loss", {"curve": "absolute"}), value={"up_to": 2}))
    add(G5, "coarse_grid", est("Coarse grid, step near posterior sd / 4", {"from": -40, "to": 40, "step": 0.5},
                               {"family": "normal", "mean": 0, "sd": 3},
                               [("evidence.probe", {"noise": "gaussian", "sd": 2, "observed": 1.7})],
                               ("loss", {"curve": "linlin", "under": 2, "over": 1})))
    add(G5, "far_tail", est("A reading 80 prior sd out", {"from": -10, "to": 100, "points": 2201},
                            {"family": "normal", "mean": 0, "sd": 1},
                            [("evidence.probe", {"noise": "gaussian", "sd": 0.5, "observed": 80})], SQ))
    add(G5, "far_tail_choice", choice("Contamination far above the usual", {"from": 0, "to": 200, "points": 2001},
                                      {"family": "normal", "mean": 10, "sd": 2},
                                      [("evidence.assay", {"noise": "gaussian", "sd": 1, "observed": 170})],
                                      ["pass", "hold", "reject"],
                                      ("loss", {"cuts": "15, 160.05", "pass": "0, 10, 50", "hold": "2, 2, 10",
                                                "reject": "20, 5, 0"})), rule=False)
    add(G5, "many_repeats", est("200 identical readings", {"from": -20, "to": 20, "points": 801},
                                {"family": "normal", "mean": 0, "sd": 3},
                                [("evidence.gauge", {"noise": "gaussian", "sd": 2, "repeats": 200,
                                                     "observed": ", ".join(["3.7"] * 200)})], SQ))
    add(G5, "many_repeats_choice", choice("Pass a part on 200 readings", {"from": 9, "to": 11, "points": 401},
                                          {"family": "normal", "mean": 10, "sd": 0.1},
                                          [("evidence.gauge", {"noise": "gaussian", "sd": 0.05, "repeats": 200,
                                                               "observed": ", ".join(["10.08"] * 200)})],
                                          ["pass", "rework"],
                                          ("loss", {"cuts": "9.9, 10.1", "pass": "6, 0, 6",
                                                    "rework": "1, 1, 1"})))
    # 6. Counts with a zero rate.
    add(G6, "rate_grid_from_zero", choice("Flash seen or not, rate from zero", {"from": 0, "to": 30, "points": 301},
                                          {"family": "gamma", "shape": 2, "scale": 3},
                                          [("evidence.tube", {"noise": "poisson", "observed": 7})],
                                          ["low", "high"], ("loss", {"cuts": 6.05, "low": "0, 5", "high": "2, 0"}),
                                          value={"up_to": 3}))
    add(G6, "rate_grid_explicit_counts", choice("Flash seen or not, explicit count range",
                                                {"from": 0, "to": 30, "points": 301},
                                                {"family": "gamma", "shape": 2, "scale": 3},
                                                [("evidence.tube", {"noise": "poisson", "observed": 7,
                                                                    "grid_from": 0, "grid_to": 25})],
                                                ["low", "high"],
                                                ("loss", {"cuts": 6.05, "low": "0, 5", "high": "2, 0"}),
                                                value={"up_to": 3}))
    add(G6, "rate_exponential_zero", est("Dark count rate, exponential prior from zero",
                                         {"from": 0, "to": 25, "points": 501}, {"family": "exponential", "mean": 2},
                                         [("evidence.tube", {"noise": "poisson", "window": 2, "repeats": 2, "observed": "0, 1"})],
                                         ("loss", {"curve": "absolute"})))
    # 7. Threshold and believed rules on grid choices.
    rules7 = [("rule.early", {"kind": "threshold", "at": 560}), ("rule.late", {"kind": "threshold", "at": 640}),
              ("rule.vague", {"kind": "believed", "prior.sd": 300}),
              ("rule.sharp", {"kind": "believed", "evidence.clock.sd": 40})]
    add(G7, "rules_timing", choice("Short or long, rules compared", labels=["short", "long"],
                                   loss=("loss", {"cuts": 600.5, "short": "0, 5", "long": "3, 0"}),
                                   extra=rules7, **tim),
        rules=[("early", "threshold", 560), ("late", "threshold", 640),
               ("vague", "believed", [("prior.sd", "300")]),
               ("sharp", "believed", [("evidence.clock.sd", "40")])])
    add(G7, "rules_counts", choice("Flash seen or not, rules compared", {"from": 0, "to": 30, "points": 601},
                                   {"family": "gamma", "shape": 2, "scale": 3},
                                   [("evidence.tube", {"noise": "poisson", "repeats": 2, "observed": "4, 6"})],
                                   ["low", "high"], ("loss", {"cuts": 6.05, "low": "0, 5", "high": "2, 0"}),
                                   extra=[("rule.strict", {"kind": "threshold", "at": 15.5}),
                                          ("rule.keen", {"kind": "believed", "prior.scale": 6})]),
        rules=[("strict", "threshold", 15.5), ("keen", "believed", [("prior.scale", "6")])])
    add(G7, "rules_at_lines", choice("Graded deadline, rules compared", labels=["short", "long"],
                                     loss=("loss", {"at": "450, 750", "short": "0, 6", "long": "6, 1"}),
                                     extra=[("rule.mid", {"kind": "threshold", "at": 600}),
                                            ("rule.vague", {"kind": "believed", "prior.sd": 250})], **tim),
        rules=[("mid", "threshold", 600), ("vague", "believed", [("prior.sd", "250")])])
    # 8. Value of information.
    add(G8, "evsi_choice", choice("Is another look at the clock worth it", labels=["short", "long"],
                                  loss=("loss", {"cuts": 600.5, "short": "0, 5", "long": "3, 0"}),
                                  value={"up_to": 3, "cost": 0.01}, **tim))
    add(G8, "evsi_useless", choice("A probe that barely sees the state", {"from": -10, "to": 10, "points": 401},
                                   {"family": "normal", "mean": 0.3, "sd": 1},
                                   [("evidence.probe", {"noise": "gaussian", "sd": 1000, "observed": 5})],
                                   ["left", "right"], ("loss", {"cuts": 0, "left": "0, 1", "right": "1, 0"}),
                                   value={"up_to": 3}), switch=False)
    add(G8, "evsi_binomial", choice("Assay more wells or not", {"from": 0, "to": 1, "points": 401},
                                    {"family": "beta", "alpha": 1, "beta": 8},
                                    [("evidence.assay", {"noise": "binomial", "trials": 5, "observed": 1})],
                                    ["use", "discard"], ("loss", {"cuts": 0.2, "use": "0, 10", "discard": "2, 2"}),
                                    value={"up_to": 3}))
    # 9. The accuracy key.
    add(G9, "accuracy_tight", est("Reach endpoint at accuracy 1e-8", {"from": -60, "to": 60, "points": 1201},
                                  {"family": "normal", "mean": 0, "sd": 4},
                                  [("evidence.hand", {"noise": "gaussian", "sd": 2.5, "observed": 3.2})],
                                  ("loss", {"curve": "linlin", "under": 1, "over": 3})).replace(
        "[problem]\n", "[problem]\naccuracy = 1e-8\n"))
    add(G9, "accuracy_loose", choice("Short or long at accuracy 1e-4", labels=["short", "long"],
                                     loss=("loss", {"cuts": 600.5, "short": "0, 5", "long": "3, 0"}), **tim).replace(
        "[problem]\n", "[problem]\naccuracy = 1e-4\n"))
    return P


# ---------------------------------------------------------------------------------------
# 6b. Finite numeric states with a zero rate (values = 0, 5, 20, Poisson counts): exact
#     sums. A count k > 0 rules the zero-rate state out; the rule decides on the sum of
#     `repeats` counts, Poisson with mean repeats·window·v. The sums run to the count where
#     the largest state's Poisson tail is below 1e-16.
FINITE = """[problem]
title = Flash intensity from photon counts, one state is a dark trial
[states]
values = 0, 5, 20
[prior]
weights = 0.5, 0.3, 0.2
[evidence.tube]
noise = poisson
window = 0.4
repeats = 2
observed = 1, 0
[actions]
labels = dark, dim, bright
[loss]
dark = 0, 4, 9
dim = 3, 0, 4
bright = 8, 3, 0
[value]
up_to = 3
"""


def check_finite_zero_rate(runner, tally):
    G = G6
    d = runner.run("finite_zero_rate", FINITE, G)
    if d is None:
        return
    vals, w = np.array([0.0, 5.0, 20.0]), np.array([0.5, 0.3, 0.2])
    L = np.array([[0, 4, 9], [3, 0, 4], [8, 3, 0]], float)
    labels = ["dark", "dim", "bright"]
    acc, S = 1e-6, 9.0

    def pmf(k, n):
        mu = n * 0.4 * vals
        return np.where(mu > 0, stats.poisson.pmf(k, np.where(mu > 0, mu, 1)), (k == 0) * 1.0)
    post = w * pmf(1, 1) * pmf(0, 1)
    post /= post.sum()
    close = lambda what, got, want, unit=S: tally.close(G, f"finite_zero_rate: {what}", got, want, acc * unit)
    for i, p in enumerate(get(d, "case", "posterior", "p") or [None] * 3):
        close(f"posterior p[{vals[i]:g}]", p, post[i], 1.0)
    el = L @ post
    got = {a.get("action"): a.get("expected_loss") for a in get(d, "case", "actions") or []}
    for lab, e in zip(labels, el):
        close(f"expected loss of {lab}", got.get(lab), e)
    tally.record(G, get(d, "case", "bayes_action") == labels[int(np.argmin(el))],
                 f"finite_zero_rate: Bayes action {get(d, 'case', 'bayes_action')!r}")

    def rule(n):
        kmax = int(stats.poisson.isf(1e-16, n * 0.4 * vals.max())) + 1
        risk, acts = 0.0, []
        for k in range(kmax + 1):
            joint = w * pmf(k, n)
            e = L @ joint
            acts.append(int(np.argmin(e)))
            risk += e.min()
        sw = [float(k) for k in range(1, len(acts)) if acts[k] != acts[k - 1]]
        return risk, sw
    br, sw = rule(2)
    r = d.get("rule") or {}
    close("prior-only risk", r.get("prior_only_risk"), float(np.min(L @ w)))
    close("Bayes risk", r.get("bayes_risk"), br)
    got_sw = [p.get("x") for p in r.get("switch_points") or []]
    tally.record(G, got_sw == sw, f"finite_zero_rate: switch points {got_sw}, exact (first count) {sw}")
    v = d.get("value") or {}
    evpi = br - float(w @ L.min(axis=0))
    close("value EVPI", v.get("evpi"), evpi)
    prev = 0.0
    for e in sorted(v.get("extra") or [], key=lambda e: e.get("n", 0)):
        ev = e.get("evsi")
        close(f"EVSI n={e.get('n')}", ev, br - rule(2 + e["n"])[0])
        tally.record(G, ev is not None and prev <= ev <= v.get("evpi", math.inf),
                     f"finite_zero_rate: EVSI n={e.get('n')} {ev!r} outside [{prev!r}, EVPI]")
        prev = ev if ev is not None else prev


# ---------------------------------------------------------------------------------------
# 0. The reference itself against closed forms (no lopside run): a wrong quadrature,
#    quantile or switch-point search in contmodel.py shows here, not as a lopside failure.
#    Tolerance 1e-9 of the unit, far below the 1e-6 the contract asks of lopside.
def check_reference(runner, tally):
    G = "0 reference against closed forms"
    tol = 1e-9
    P = {n: t for _, n, t, _ in problems()}

    def close(what, got, want, unit=1.0):
        tally.close(G, what, got, want, tol * unit)
    # Normal prior N(0, 4²), one reading 3.2 with sd 2.5, grid ±15 prior sd: the conjugate
    # normal posterior (Gelman et al. 2013, Sec. 2.5, from memory); truncation < 1e-40.
    v = 1 / (1 / 16 + 1 / 2.5 ** 2)
    mpost, sd = v * 3.2 / 2.5 ** 2, math.sqrt(v)
    m = cm.Model(P["curve_squared"])
    c = m.case()
    close("normal: posterior mean", c["posterior"]["mean"], mpost)
    close("normal: posterior sd", c["posterior"]["sd"], sd)
    close("normal: posterior q95", c["posterior"]["q95"], mpost + sd * stats.norm.ppf(0.95))
    close("normal: squared loss, scale 2: 2v", c["expected_loss"], 2 * v)
    close("normal: Bayes risk 2v (shift-invariant)", m.bayes_risk()[0], 2 * v)
    close("normal: EVSI n=2 = 2(v - v₃)", m.bayes_risk()[0] - m.bayes_risk(n=3)[0],
          2 * (v - 1 / (1 / 16 + 3 / 2.5 ** 2)))
    # A flat prior on [9.9, 10.1], one gauge reading 10.03 with sd 0.02: the normal
    # likelihood truncated to the interval (scipy.stats.truncnorm).
    tn = stats.truncnorm((9.9 - 10.03) / 0.02, (10.1 - 10.03) / 0.02, loc=10.03, scale=0.02)
    c = cm.Model(P["uniform_gauge"]).case(mode=False)
    close("flat prior: truncated-normal mean", c["posterior"]["mean"], tn.mean(), 0.2)
    close("flat prior: truncated-normal q05", c["posterior"]["q05"], tn.ppf(0.05), 0.2)
    # linlin: the quantile τ = 1/5 (Berger 1985, Sec. 2.4.2, from memory); its expected loss
    # (under + over)·sd·φ(z_τ) for a normal posterior (own derivation).
    c = cm.Model(P["curve_linlin"]).case()
    z = stats.norm.ppf(0.2)
    close("normal: linlin estimate m + sd·z_0.2", c["action"], mpost + sd * z)
    close("normal: linlin expected loss 5·sd·φ(z)", c["expected_loss"], 5 * sd * stats.norm.pdf(z))
    c = cm.Model(P["curve_absolute"]).case()
    close("normal: absolute expected loss sd·√(2/π)", c["expected_loss"], sd * math.sqrt(2 / math.pi))
    # LINEX under a normal posterior: e = m - a·v/2, expected loss scale·a²v/2 (Zellner 1986,
    # from memory).
    c = cm.Model(P["curve_linex"]).case()
    close("normal: LINEX estimate m - a v/2", c["action"], mpost - 0.8 * v / 2)
    close("normal: LINEX expected loss scale·a²v/2", c["expected_loss"], 1.5 * 0.8 ** 2 * v / 2)
    c = cm.Model(P["curve_tolerance"]).case()
    close("normal: tolerance estimate at the mean", c["action"], mpost)
    close("normal: tolerance loss 2·P(|s - m| > 1.5)", c["expected_loss"], 2 * 2 * stats.norm.sf(1.5 / sd))
    # Gamma(2, scale 3) prior, Poisson count 7: posterior gamma(9, rate 4/3) cut to [0, 30]
    # (Gelman et al. 2013, Sec. 2.6, from memory).
    post = stats.gamma(9, scale=3 / 4)
    F = post.cdf(30)
    m = cm.Model(P["rate_grid_from_zero"])
    c = m.case()
    close("gamma-Poisson: mean (truncated at 30)", c["posterior"]["mean"],
          9 * 0.75 * stats.gamma(10, scale=0.75).cdf(30) / F)
    close("gamma-Poisson: median", c["posterior"]["median"], post.ppf(0.5 * F))
    close("gamma-Poisson: expected loss of low = 5·P(s >= 6.05)", c["actions"][0],
          5 * (F - post.cdf(6.05)) / F)
    # The count rule's Bayes risk: Σ_k min(5·P(K=k, s >= c), 2·P(K=k, s < c)) with the
    # gamma-Poisson joint mass b^a Γ(a+k)/(Γ(a) k! (b+1)^(a+k))·P(a+k, (b+1)s) between s
    # bounds (own derivation from the gamma integral), prior cut to [0, 30].
    a, rate, T, cut = 2.0, 1 / 3, 30.0, 6.05

    def mass(k, lo, hi):
        coef = math.exp(a * math.log(rate) + math.lgamma(a + k) - math.lgamma(a) - math.lgamma(k + 1)
                        - (a + k) * math.log(rate + 1))
        return coef * (special.gammainc(a + k, (rate + 1) * hi) - special.gammainc(a + k, (rate + 1) * lo)) \
            / special.gammainc(a, rate * T)
    want = sum(min(5 * mass(k, cut, T), 2 * mass(k, 0, cut)) for k in range(200))
    close("gamma-Poisson choice: Bayes risk over all counts", m.bayes_risk()[0], want)
    # Beta(2, 5) prior, 4 of 12: posterior beta(6, 13) (Gelman et al. 2013, Sec. 2.4).
    c = cm.Model(P["beta_unit"]).case()
    b = stats.beta(6, 13)
    med = b.ppf(0.5)
    close("beta-binomial: median", c["posterior"]["median"], med)
    close("beta-binomial: absolute loss E|s - median|", c["expected_loss"],
          b.expect(lambda s: abs(s - med), epsabs=1e-13, epsrel=1e-12, points=[med]))
    # Two actions, one cut c, normal model on ±12 prior sd: switch where P(s < c | x) = 5/8;
    # Bayes risk 5·P(s >= c, x < t) + 3·P(s < c, x >= t) from the bivariate normal of (s, x).
    text = P["cuts_between"].replace("from = 100", "from = -840").replace("to = 1100", "to = 2040")
    m = cm.Model(text)
    mu, tau, sig, cut = 600.0, 120.0, 80.0, 601.3
    vv = 1 / (1 / tau ** 2 + 1 / sig ** 2)
    mt = cut - math.sqrt(vv) * stats.norm.ppf(5 / 8)
    t = sig ** 2 * (mt / vv - mu / tau ** 2)
    br, sw, _ = m.bayes_risk()
    close("normal choice: switch point", sw[0] if sw else None, t)
    bv = stats.multivariate_normal([mu, mu], [[tau ** 2, tau ** 2], [tau ** 2, tau ** 2 + sig ** 2]])
    p_lo_lo = bv.cdf([cut, t])
    ps, px = stats.norm.cdf(cut, mu, tau), stats.norm.cdf(t, mu, math.hypot(tau, sig))
    want = 5 * (px - p_lo_lo) + 3 * (ps - p_lo_lo)
    tally.close(G, "normal choice: Bayes risk (bivariate normal CDF, ~1e-8 accurate)", br, want, 1e-7)


# ---------------------------------------------------------------------------------------
# 10. Seeded random problems: normal prior, gaussian noise, a choice with cuts or an
#     estimate with a random curve.
def random_problems(n, seed):
    rng = random.Random(seed)
    out = []
    for i in range(n):
        mu = round(rng.uniform(-50, 50), 3)
        tau = round(10 ** rng.uniform(-1, 1.5), 4)
        sigma = round(tau * 10 ** rng.uniform(-1.5, 1), 4)
        reps = rng.choice([1, 1, 2, 5])
        obs = [round(rng.gauss(mu + rng.gauss(0, tau), sigma), 4) for _ in range(reps)]
        half = 12 * tau if rng.random() < 0.5 else rng.uniform(4, 8) * tau
        states = {"from": round(mu - half, 4), "to": round(mu + half, 4),
                  "points": rng.choice([101, 201, 401, 1001])}
        prior = {"family": "normal", "mean": mu, "sd": tau}
        ev = [("evidence.reading", {"noise": "gaussian", "sd": sigma, "repeats": reps,
                                    "observed": ", ".join(repr(x) for x in obs)})]
        if rng.random() < 0.5:
            k = rng.choice([1, 2])
            cuts = sorted(round(mu + rng.gauss(0, tau), 4) for _ in range(k))
            # Neither row may be at least as good in every band: when one action never
            # loses, a "switch point" is only where the other bands' posterior mass
            # underflows, and its position is rounding noise in any computation.
            while True:
                go = [rng.choice([0, 1, 2, 4]) for _ in range(k + 1)]
                stay = [rng.choice([0, 1, 3, 5]) for _ in range(k + 1)]
                if any(a < b for a, b in zip(go, stay)) and any(b < a for a, b in zip(go, stay)):
                    break
            rows = {"go": ", ".join(map(str, go)), "stay": ", ".join(map(str, stay))}
            text = choice(f"Random choice {i}", states, prior, ev, ["go", "stay"],
                          ("loss", dict({"cuts": ", ".join(map(str, cuts))}, **rows)))
        else:
            curve = rng.choice([{"curve": "squared"}, {"curve": "absolute"},
                                {"curve": "linlin", "under": rng.choice([1, 2, 5]), "over": rng.choice([1, 3])},
                                {"curve": "quadquad", "under": rng.choice([1, 4]), "over": rng.choice([1, 2])},
                                {"curve": "linex", "a": round(rng.uniform(-1, 1) / tau, 4) or 0.5},
                                {"curve": "tolerance", "half_width": round(tau * rng.uniform(0.2, 2), 4),
                                 "outside": 1}])
            text = est(f"Random estimate {i}", states, prior, ev, ("loss", curve))
        out.append((f"random_{i}", text))
    return out


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--random", type=int, default=30, help="random problems (default 30)")
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--only", help="run only problems whose name contains this")
    ap.add_argument("--details", type=int, default=6, help="failures shown per group (0: all)")
    args = ap.parse_args()

    def fixed(runner, tally):
        for g, name, text, opts in problems():
            if args.only and args.only not in name:
                continue
            try:
                check_problem(runner, tally, g, name, text, **opts)
            except Exception as e:  # one problem's reference failing is one failure
                import traceback
                tally.record(g, False, f"{name}: reference error {e!r}\n{traceback.format_exc()}")

    def randoms(runner, tally):
        G = f"10 random normal problems (seed {args.seed})"
        for name, text in random_problems(args.random, args.seed):
            if args.only and args.only not in name:
                continue
            try:
                check_problem(runner, tally, G, name, text)
            except Exception as e:
                tally.record(G, False, f"{name}: reference error {e!r}")

    def notes(runner, tally):
        for n in NOTES:
            print(f"note: {n}")

    checks = [check_reference, fixed, check_finite_zero_rate] + ([randoms] if args.random > 0 else []) + [notes]
    return refkit.main("lopside_continuous_", checks, context=Runner, tally=refkit.Tally(max_details=args.details or None))


if __name__ == "__main__":
    sys.exit(main())
