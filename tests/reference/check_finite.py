#!/usr/bin/python3
"""Independent scipy/numpy reference for lopside's finite-state problems.

Every number lopside writes to its JSON is recomputed here from the problem file's own
parameters, with scipy and numpy only, never from an earlier lopside output:

1. Random problems (fixed seed): 2-4 labelled states, 2-4 actions, [loss] or [payoff], an
   outcome-table channel (Dirichlet rows, 1-4 repeats), a gaussian channel (per-state means
   and sds, equal or unequal, 1-3 repeats), or both, each with and without `observed`.
   - case.posterior.p        Bayes' rule in log space: scipy.stats.multinomial.logpmf and
                             scipy.stats.norm.logpdf, normalized with scipy.special.logsumexp
   - case.actions, bayes_action, expected_loss, evpi, ties
                             the posterior times the loss matrix; EVPI as
                             E_post[loss of the Bayes action] - E_post[min_a loss];
                             plus one problem with an exact tie between two actions, and
                             one whose observed outcome is impossible in one state
   - rule.prior_only_risk    min_a of the prior times the loss matrix
   - rule.table              row probabilities from scipy.stats.multinomial.pmf; for
                             table-only problems each row's Bayes action and expected loss
   - rule.bayes_risk         table only: sum over all count vectors of
                             min_a sum_s prior_s P(counts | s) loss(a, s); with a gaussian
                             channel: scipy.integrate.quad of
                             min_a sum_s prior_s P(row | s) N(x; mean_s, sd_s/sqrt(n)) loss(a, s)
                             split at switch points found here
   - rule.switch_points      scipy.optimize.brentq on the difference of posterior expected
                             losses, bracketed on our own fine grid over mean +- 8 sd
   - rule.grid.action        the Bayes action at every grid point, ties aside (one list
                             per row, in the order of rule.table)
   Payoff problems: every expected_payoff / bayes_payoff / prior_only_payoff is minus the
   reference loss.
2. Equal-variance gaussian detection: the criterion d'/2 + ln(beta)/d' of Green & Swets (1966)
   and the expected payoff of that criterion from normal CDFs.
3. A screening example (1% prevalence, 80% sensitivity, 9.6% false positives): Bayes' rule by
   hand, and the posterior of about 0.078 quoted by Eddy (1982) and Gigerenzer & Hoffrage (1995).
4. 1,000 repeats of an outcome table with 1,000 observed labels: the posterior is finite and
   matches scipy.stats.binom.logpmf in log space (no underflow), and so does the Bayes risk.

Run from the repository root: LOPSIDE=build/lopside /usr/bin/python3 tests/reference/check_finite.py
Prints one line per check group and ends with `N passed, M failed`; exits 1 on any failure.
Problem files of a failing run are kept and their folder is printed.
"""

import itertools
import math
import sys
import traceback

import numpy as np
from scipy import integrate, optimize, special, stats

sys.dont_write_bytecode = True  # no __pycache__ beside the scripts
import refkit  # noqa: E402  (the shared harness, beside this file)
from refkit import rel_dev  # noqa: E402
SEED = 20240611
N_RANDOM = 42

# ---------------------------------------------------------------------------------------
# Tolerances, each with its reason.
# Posterior: both sides add log terms and exponentiate differences of the sums. With a few
# terms the relative error is ~1e-15; adding 1,000 per-label log terms of total ~-800 one by
# one accumulates ~1e-11 (measured against 60-digit decimal arithmetic: lopside 2e-11, the
# scipy side 1e-13). 1e-9 leaves a wide margin while any modelling difference (a missing
# term, a wrong sd, sd instead of sd/sqrt(n)) shows up far above it.
POSTERIOR_RTOL = 1e-9
# Expected losses, EVPI, prior-only risk, table-only Bayes risk, row probabilities: finite sums
# of products, exact up to rounding (~1e-15 of the loss scale); 1e-9 (relative, or absolute
# in units of the largest |loss| for numbers near zero) catches any real difference.
SCORE_TOL = 1e-9
# Bayes risk with a gaussian channel: our side is scipy.integrate.quad, asked for 1e-12 but
# trusted only to ~1e-9 over several pieces and rows; 1e-7 of the loss scale allows for
# quad's accuracy and is still far below the change any misplaced switch point, missing
# row or wrong sd would make.
RISK_QUAD_TOL = 1e-7
# Switch points: lopside refines to 1e-12 and brentq here to 1e-14, but the root of a
# difference of expected losses is only determined to (rounding of that difference) / (its
# slope), ~1e-15 / slope; shallow crossings (unequal sds, near-tangent likelihood ratios)
# make that ~1e-10. 1e-8 (scaled by max(1, |x|)) keeps clear of that and is still far
# below any grid spacing, so a switch point found only to grid accuracy would fail.
SWITCH_TOL = 1e-8
# Bayes action "ties aside": lopside's action is accepted when its reference expected loss
# is within SCORE_TOL (of the loss scale) of the reference minimum.
TIE_TOL = SCORE_TOL
# Exact ties: two expected losses equal in exact arithmetic differ after rounding by a few
# units of 1e-16 of the loss scale (sums of at most 4 products); 1e-13 covers that.
EXACT_TIE_TOL = 1e-13
# Closed forms (Green & Swets criterion, screening posterior): exact arithmetic on both
# sides, so 1e-9 for the criterion (lopside's root finder stops at 1e-12) and 1e-12 for
# a posterior that is a ratio of three products.
CLOSED_FORM_TOL = 1e-9
SCREENING_TOL = 1e-12
# The screening posterior quoted from the literature (from memory, about 0.078): its
# rounding to two significant figures allows +-0.001.
SCREENING_QUOTED, SCREENING_QUOTED_TOL = 0.078, 0.001

# Our own switch-point search: this many points over [min_s mean_s - 8 sd_s,
# max_s mean_s + 8 sd_s] (sd of the mean of the repeats). lopside's grid covers +-4.9 sd
# with 201 points by default, so ours is about 60 times finer.
SEARCH_POINTS = 12001
SEARCH_SDS = 8.0
# The risk integral runs over mean +- 12 sd of every state: the gaussian mass left outside
# is below 1e-32, far under RISK_QUAD_TOL.
INTEGRAL_SDS = 12.0

STATE_NAMES = ["clean", "trace", "moderate", "heavy"]
ACTION_NAMES = ["use", "retest", "discard", "quarantine"]
OUTCOME_NAMES = ["clear", "faint", "flagged"]


# ---------------------------------------------------------------------------------------
# Problems and their files
class Problem:
    """A finite problem in loss orientation; `payoff` files hold minus the loss."""

    def __init__(self, name, title, states, weights, actions, loss, payoff=False,
                 table=None, gauss=None, table_name="swab", gauss_name="turbidity"):
        self.name = name
        self.title = title
        self.states = list(states)
        self.weights = np.array(weights, dtype=float)
        self.prior = self.weights / self.weights.sum()
        self.actions = list(actions)
        self.loss = np.array(loss, dtype=float)          # actions x states
        self.payoff = payoff
        # table: {"outcomes": [...], "given": states x outcomes, "repeats": n,
        #         "observed": [labels] or None}
        self.table = table
        # gauss: {"mean": [per state], "sd": [per state], "sd_one": bool, "repeats": n,
        #         "observed": [values] or None}
        self.gauss = gauss
        self.table_name = table_name
        self.gauss_name = gauss_name

    @property
    def scale(self):
        return float(np.max(np.abs(self.loss))) or 1.0

    def kind(self):
        parts = []
        if self.table:
            parts.append(f"table x{self.table['repeats']}")
        if self.gauss:
            sd = "equal sd" if len(set(self.gauss["sd"])) == 1 else "unequal sd"
            parts.append(f"gaussian x{self.gauss['repeats']} {sd}")
        observed = any(c and c["observed"] is not None for c in (self.table, self.gauss))
        parts.append("observed" if observed else "no observation")
        parts.append("payoff" if self.payoff else "loss")
        return ", ".join(parts)

    def ini(self):
        num = lambda v: repr(float(v))
        lines = ["[problem]", f"title = {self.title}", "", "[states]",
                 "labels = " + ", ".join(self.states), "", "[prior]",
                 "weights = " + ", ".join(num(w) for w in self.weights), ""]
        if self.table:
            t = self.table
            lines += [f"[evidence.{self.table_name}]", "outcomes = " + ", ".join(t["outcomes"])]
            for s, row in zip(self.states, t["given"]):
                lines.append(f"given.{s} = " + ", ".join(num(v) for v in row))
            lines.append(f"repeats = {t['repeats']}")
            if t["observed"] is not None:
                lines += refkit.continued("observed", t["observed"])
            lines.append("")
        if self.gauss:
            g = self.gauss
            sd = [g["sd"][0]] if g["sd_one"] else g["sd"]
            lines += [f"[evidence.{self.gauss_name}]", "noise = gaussian",
                      "mean = " + ", ".join(num(v) for v in g["mean"]),
                      "sd = " + ", ".join(num(v) for v in sd),
                      f"repeats = {g['repeats']}"]
            if g["observed"] is not None:
                lines += refkit.continued("observed", [num(v) for v in g["observed"]])
            lines.append("")
        lines += ["[actions]", "labels = " + ", ".join(self.actions), ""]
        lines.append("[payoff]" if self.payoff else "[loss]")
        sign = -1.0 if self.payoff else 1.0
        for a, row in zip(self.actions, self.loss):
            lines.append(f"{a} = " + ", ".join(num(sign * v + 0.0) for v in row))
        return "\n".join(lines) + "\n"


def run_lopside(problem, folder, tally, tag):
    """Writes the problem file and runs lopside; returns its JSON, or None. Every run is
    one check of the group "lopside runs"."""
    try:
        out, err = refkit.run_lopside(folder, problem.name, problem.ini(), timeout=120), ""
    except refkit.LopsideError as e:
        out, err = None, e.reason
    tally.record("lopside runs", out is not None, f"{tag}: {err}")
    return out


# ---------------------------------------------------------------------------------------
# Reference computations
def compositions(n, k):
    """All count vectors of n repeats over k outcomes."""
    for cuts in itertools.combinations(range(n + k - 1), k - 1):
        prev, counts = -1, []
        for c in cuts + (n + k - 1,):
            counts.append(c - prev - 1)
            prev = c
        yield tuple(counts)


def table_rows(p):
    """[(counts or None, log P(counts | s) per state)] for the rule's rows."""
    if not p.table:
        return [(None, np.zeros(len(p.states)))]
    t = p.table
    rows = []
    for counts in compositions(t["repeats"], len(t["outcomes"])):
        logp = np.array([stats.multinomial.logpmf(counts, t["repeats"], g) for g in t["given"]])
        rows.append((counts, logp))
    return rows


def sd_of_mean(g):
    return np.array(g["sd"], dtype=float) / math.sqrt(g["repeats"])


def reference_posterior(p):
    logw = np.log(p.prior)
    if p.table and p.table["observed"] is not None:
        t = p.table
        counts = [t["observed"].count(o) for o in t["outcomes"]]
        logw = logw + np.array([stats.multinomial.logpmf(counts, t["repeats"], g)
                                for g in t["given"]])
    if p.gauss and p.gauss["observed"] is not None:
        g = p.gauss
        x = np.array(g["observed"], dtype=float)
        logw = logw + np.array([stats.norm.logpdf(x, m, s).sum()
                                for m, s in zip(g["mean"], g["sd"])])
    return np.exp(logw - special.logsumexp(logw))


def expected_losses_at(p, row_logw, x):
    """Posterior expected loss of every action at measurements x (actions x len(x))."""
    g = p.gauss
    mean = np.array(g["mean"], dtype=float)[:, None]
    sd = sd_of_mean(g)[:, None]
    logw = row_logw[:, None] + stats.norm.logpdf(np.atleast_1d(x)[None, :], mean, sd)
    post = np.exp(logw - special.logsumexp(logw, axis=0, keepdims=True))
    return p.loss @ post


def find_switches(p, row_logw, lo, hi, a, b, out, depth=0):
    """Switch points in [lo, hi] where a is best at lo and b at hi (brentq); a third action
    best at the crossing splits the bracket."""
    def diff(x):
        el = expected_losses_at(p, row_logw, x)[:, 0]
        return float(el[a] - el[b])

    flo, fhi = diff(lo), diff(hi)
    if flo == 0:
        root = lo
    elif fhi == 0:
        root = hi
    else:
        root = optimize.brentq(diff, lo, hi, xtol=1e-14, rtol=4 * np.finfo(float).eps,
                               maxiter=500)
    el = expected_losses_at(p, row_logw, root)[:, 0]
    c = int(np.argmin(el))
    if c in (a, b) or depth > len(p.actions) or el[a] - el[c] <= TIE_TOL * p.scale:
        out.append((root, a, b))
        return
    find_switches(p, row_logw, lo, root, a, c, out, depth + 1)
    find_switches(p, row_logw, root, hi, c, b, out, depth + 1)


def row_switches(p, row_logw, lo, hi):
    """All switch points of one row on our own grid of SEARCH_POINTS over [lo, hi]."""
    xs = np.linspace(lo, hi, SEARCH_POINTS)
    best = np.argmin(expected_losses_at(p, row_logw, xs), axis=0)
    out = []
    for i in np.nonzero(best[1:] != best[:-1])[0]:
        find_switches(p, row_logw, xs[i], xs[i + 1], int(best[i]), int(best[i + 1]), out)
    return out


def row_risk_quad(p, row_logw, cuts, lo, hi):
    """Integral over [lo, hi] of min_a sum_s w_s N(x; mean_s, sd_s) loss(a, s), split at
    the switch points so each piece is smooth; returns (value, quad's error estimate)."""
    g = p.gauss
    means = [float(m) for m in g["mean"]]
    sds = [float(s) for s in sd_of_mean(g)]
    coef = [math.exp(lw) / (s * math.sqrt(2 * math.pi)) for lw, s in zip(row_logw, sds)]
    loss_rows = [[float(v) for v in row] for row in p.loss]

    def integrand(x):
        dens = [c * math.exp(-0.5 * ((x - m) / s) ** 2) for c, m, s in zip(coef, means, sds)]
        return min(sum(d * l for d, l in zip(dens, row)) for row in loss_rows)

    edges = [lo] + sorted(c for c in cuts if lo < c < hi) + [hi]
    marks = sorted({m + k * s for m, s in zip(means, sds) for k in (-3, -1, 0, 1, 3)})
    total = err = 0.0
    for a, b in zip(edges[:-1], edges[1:]):
        inner = [x for x in marks if a < x < b]
        val, e = integrate.quad(integrand, a, b, points=inner or None, limit=400,
                                epsabs=1e-13 * p.scale, epsrel=1e-12)
        total += val
        err += e
    return total, err


def lopside_row_key(p, outcomes):
    """Count tuple of a lopside `given`/`outcomes` object for our single table channel."""
    if outcomes is None or not p.table:
        return None
    v = outcomes[p.table_name]
    if isinstance(v, str):
        return tuple(1 if o == v else 0 for o in p.table["outcomes"])
    return tuple(int(v[o]) for o in p.table["outcomes"])


# ---------------------------------------------------------------------------------------
# Checks of one problem
def check_case(p, out, tally, tag):
    case = out["case"]
    ref = reference_posterior(p)
    got = np.array(case["posterior"]["p"], dtype=float)
    dev = float(np.max(np.abs(got - ref) / np.maximum(np.abs(ref), 1e-300)))
    tally.check("posterior", dev, POSTERIOR_RTOL,
                f"{tag}: lopside {got.tolist()}, reference {ref.tolist()}")

    el = p.loss @ ref
    got_el = np.array([a["expected_loss"] for a in case["actions"]], dtype=float)
    names = [a["action"] for a in case["actions"]]
    dev = max(rel_dev(g, w, p.scale) for g, w in zip(got_el, el))
    detail = f"{tag}: lopside {got_el.tolist()}, reference {el.tolist()}"
    if names != p.actions:
        dev, detail = math.inf, f"{tag}: actions {names}, expected {p.actions}"
    if p.payoff:
        pay = [a.get("expected_payoff") for a in case["actions"]]
        if any(v is None for v in pay):
            dev, detail = math.inf, f"{tag}: expected_payoff missing in a payoff problem"
        else:
            dev = max(dev, max(rel_dev(g, -w, p.scale) for g, w in zip(pay, el)))
    tally.check("expected loss per action", dev, SCORE_TOL, detail)

    # The Bayes action, ties aside: its reference expected loss is within TIE_TOL of the
    # minimum; the deviation is that gap or the error of case.expected_loss, whichever is larger.
    best = float(np.min(el))
    chosen = case["bayes_action"]
    gap = el[p.actions.index(chosen)] - best if chosen in p.actions else math.inf
    dev = max(gap / p.scale, rel_dev(case["expected_loss"], best, p.scale))
    tally.check("Bayes action and its expected loss", dev, SCORE_TOL,
                f"{tag}: lopside {chosen} at {case['expected_loss']!r}, reference "
                f"{p.actions[int(np.argmin(el))]} at {best!r}")

    # case.ties: actions tied in exact arithmetic (reference gap below EXACT_TIE_TOL) must
    # all be listed when there are two or more; none further than TIE_TOL from the minimum
    # may be; in between either is right. An empty list means no tie.
    gaps = (el - best) / p.scale
    must = [a for a, d in zip(p.actions, gaps) if d <= EXACT_TIE_TOL]
    may = [a for a, d in zip(p.actions, gaps) if d <= TIE_TOL]
    ties = case.get("ties")
    ok = (isinstance(ties, list) and all(t in may for t in ties) and
          (ties == [] and len(must) == 1 or len(ties) > 1 and set(must) <= set(ties)))
    tally.record("ties", ok, f"{tag}: lopside ties {ties}, reference tied {must}, within "
                             f"{TIE_TOL} {may} (expected losses {el.tolist()})")

    evpi = best - float(ref @ p.loss.min(axis=0))
    dev = rel_dev(case["evpi"], evpi, p.scale)
    tally.check("EVPI", dev, SCORE_TOL,
                f"{tag}: lopside {case['evpi']!r}, reference {evpi!r}")


def check_rule(p, out, tally, tag):
    rule = out["rule"]
    if rule is None and not (p.table or p.gauss):
        return      # no evidence: format.md reports a rule only when there is evidence
    prior_only = float(np.min(p.loss @ p.prior))
    dev = rel_dev(rule["prior_only_risk"], prior_only, p.scale)
    tally.check("prior-only risk", dev, SCORE_TOL,
                f"{tag}: lopside {rule['prior_only_risk']!r}, reference {prior_only!r}")
    if not (p.table or p.gauss):
        return
    if not rule or not rule.get("computed"):
        tally.record("rule computed", False, f"{tag}: rule not computed: {rule}")
        return

    rows = table_rows(p)
    logprior = np.log(p.prior)

    # rule.table: row probabilities, and for table-only problems the row's decision.
    if p.table:
        got_rows = {lopside_row_key(p, r["outcomes"]): r for r in rule.get("table", [])}
        dev, detail = 0.0, ""
        if set(got_rows) != {c for c, _ in rows}:
            dev, detail = math.inf, (f"{tag}: rows {sorted(got_rows)}, "
                                     f"expected {[c for c, _ in rows]}")
        for counts, logp in rows:
            r = got_rows.get(counts)
            if r is None:
                continue
            w = np.exp(logprior + logp)
            prob = float(w.sum())
            d = rel_dev(r["probability"], prob, 1e-300)
            if d > dev:
                dev, detail = d, (f"{tag}: row {counts} probability lopside "
                                  f"{r['probability']!r}, reference {prob!r}")
            if not p.gauss:
                el = p.loss @ (w / prob)
                if "action" not in r or "expected_loss" not in r:
                    dev, detail = math.inf, f"{tag}: row {counts} has no action/expected_loss"
                    continue
                gap = el[p.actions.index(r["action"])] - el.min()
                d = max(gap / p.scale, rel_dev(r["expected_loss"], float(el.min()), p.scale))
                if d > dev:
                    dev, detail = d, (f"{tag}: row {counts} lopside {r['action']} at "
                                      f"{r['expected_loss']!r}, reference "
                                      f"{p.actions[int(np.argmin(el))]} at {float(el.min())!r}")
        tally.check("rule table rows", dev, SCORE_TOL, detail)

    if not p.gauss:
        risk = sum(float(np.min(p.loss @ np.exp(logprior + logp))) for _, logp in rows)
        dev = rel_dev(rule["bayes_risk"], risk, p.scale)
        tally.check("Bayes risk (table only, exact sum)", dev, SCORE_TOL,
                    f"{tag}: lopside {rule['bayes_risk']!r}, reference {risk!r}")
        check_payoff_risk(p, rule, risk, tally, tag, SCORE_TOL)
        return

    check_numeric_rule(p, rule, rows, tally, tag)


def compare_switches(p, theirs, found, grid_x):
    """Compares lopside's switch points of one row with ours as sets; returns
    (deviation, detail). Only points inside lopside's grid count, the range widened to any
    point lopside reports beyond it."""
    theirs = sorted(theirs)
    region_lo = min([grid_x[0]] + [x for x, _, _ in theirs])
    region_hi = max([grid_x[-1]] + [x for x, _, _ in theirs])
    # A margin well above SWITCH_TOL keeps a misplaced outermost lopside point a position
    # error instead of a missing point.
    margin = 1e-6 * max(1.0, abs(region_lo), abs(region_hi))
    mine = sorted((x, p.actions[a], p.actions[b]) for x, a, b in found
                  if region_lo - margin <= x <= region_hi + margin)
    if len(mine) != len(theirs) or any(
            (fa, ta) != (fb, tb) for (_, fa, ta), (_, fb, tb) in zip(theirs, mine)):
        return math.inf, f"lopside {theirs}, reference {mine}"
    dev, detail = 0.0, ""
    for (xa, _, _), (xb, _, _) in zip(theirs, mine):
        d = abs(xa - xb) / max(1.0, abs(xb))
        if d >= dev:
            dev, detail = d, f"lopside x={xa!r}, reference x={xb!r}"
    return dev, detail


def check_numeric_rule(p, rule, rows, tally, tag):
    """A gaussian channel: switch points per row, grid actions, and the risk integral."""
    g = p.gauss
    sdm = sd_of_mean(g)
    mean = np.array(g["mean"], dtype=float)
    grid_x = np.array(rule["grid"]["x"], dtype=float)
    got_sw = {}
    for sp in rule["switch_points"]:
        key = lopside_row_key(p, sp.get("given"))
        got_sw.setdefault(key, []).append((sp["x"], sp["from"], sp["to"]))
    # rule.grid.action holds one list per row, in the order of rule.table.
    grid_row = {lopside_row_key(p, r["outcomes"]): i
                for i, r in enumerate(rule.get("table", []))}

    risk = quad_err = 0.0
    sw_dev, sw_detail = 0.0, ""
    grid_dev, grid_detail = 0.0, ""
    unknown = set(got_sw) - {c for c, _ in rows}
    if unknown:
        sw_dev, sw_detail = math.inf, f"{tag}: switch points for unknown rows {sorted(unknown)}"
    for r_index, (counts, logp) in enumerate(rows):
        row_logw = np.log(p.prior) + logp
        theirs = got_sw.get(counts, [])
        # Our search: mean +- SEARCH_SDS sd of every state, and a little beyond any point
        # lopside reports further out.
        lo = min([float(np.min(mean - SEARCH_SDS * sdm))] +
                 [x - sdm.max() for x, _, _ in theirs])
        hi = max([float(np.max(mean + SEARCH_SDS * sdm))] +
                 [x + sdm.max() for x, _, _ in theirs])
        found = row_switches(p, row_logw, lo, hi)
        d, detail = compare_switches(p, theirs, found, grid_x)
        if d > sw_dev or math.isinf(d):
            sw_dev, sw_detail = d, f"{tag}: row {counts}: {detail}"

        # Grid actions: lopside's choice at each grid point is a reference best, ties aside.
        acts = rule["grid"]["action"][grid_row.get(counts, r_index)]
        el = expected_losses_at(p, row_logw, grid_x)
        idx = np.array([p.actions.index(a) for a in acts])
        gaps = (el[idx, np.arange(len(grid_x))] - el.min(axis=0)) / p.scale
        worst = int(np.argmax(gaps))
        if gaps[worst] > grid_dev:
            grid_dev = float(gaps[worst])
            grid_detail = (f"{tag}: row {counts} x={grid_x[worst]!r}: lopside {acts[worst]}, "
                           f"reference {p.actions[int(np.argmin(el[:, worst]))]} "
                           f"(expected losses {el[:, worst].tolist()})")

        val, e = row_risk_quad(p, row_logw, [x for x, _, _ in found],
                               min(lo, float(np.min(mean - INTEGRAL_SDS * sdm))),
                               max(hi, float(np.max(mean + INTEGRAL_SDS * sdm))))
        risk += val
        quad_err += e

    tally.check("switch points", sw_dev, SWITCH_TOL, sw_detail)
    tally.check("rule grid actions", grid_dev, TIE_TOL, grid_detail)
    dev = abs(rule["bayes_risk"] - risk) / p.scale
    tally.check("Bayes risk (gaussian channel, quad)", dev, RISK_QUAD_TOL,
                f"{tag}: lopside {rule['bayes_risk']!r}, reference {risk!r} "
                f"(quad error estimate {quad_err:.2g})")
    check_payoff_risk(p, rule, risk, tally, tag, RISK_QUAD_TOL)


def check_payoff_risk(p, rule, risk, tally, tag, tol):
    """Payoff problems carry bayes_payoff and prior_only_payoff, minus the loss numbers."""
    if not p.payoff:
        return
    prior_only = float(np.min(p.loss @ p.prior))
    ok = ("bayes_payoff" in rule and "prior_only_payoff" in rule and
          abs(rule["bayes_payoff"] + risk) <= tol * p.scale and
          rel_dev(rule["prior_only_payoff"], -prior_only, p.scale) <= SCORE_TOL)
    tally.record("payoff orientation of the risks", ok,
                 f"{tag}: bayes_payoff {rule.get('bayes_payoff')!r} vs {-risk!r}, "
                 f"prior_only_payoff {rule.get('prior_only_payoff')!r} vs {-prior_only!r}")


# ---------------------------------------------------------------------------------------
# 1. Random problems
def random_problem(rng, i):
    kinds = ["table", "gauss", "both"]
    kind = kinds[i % 3]
    with_observed = (i // 3) % 2 == 0
    n_states = int(rng.integers(2, 5))
    n_actions = int(rng.integers(2, 5))
    states = STATE_NAMES[:n_states]
    actions = ACTION_NAMES[:n_actions]
    weights = np.round(rng.uniform(0.05, 1.0, n_states), 3)
    if i % 4 == 1:
        weights = np.round(weights * 100)   # counts: lopside normalizes them
        weights[weights == 0] = 1
    payoff = i % 2 == 1
    if payoff:
        loss = -np.round(rng.uniform(-5, 10, (n_actions, n_states)), 2)
    else:
        loss = np.round(rng.uniform(0, 10, (n_actions, n_states)), 2)
    truth = int(rng.integers(n_states))

    table = gauss = None
    if kind in ("table", "both"):
        k = int(rng.integers(2, 4))
        given = []
        for _ in range(n_states):
            row = rng.dirichlet(np.full(k, 1.5))
            row = np.maximum(row, 0.02)
            row = np.round(row / row.sum(), 4)
            row[-1] = round(1.0 - row[:-1].sum(), 4)
            given.append(row.tolist())
        repeats = int(rng.integers(1, 5))
        observed = None
        if with_observed or kind == "both" and i % 5 == 0:
            draws = rng.choice(k, size=repeats, p=np.array(given[truth]) / sum(given[truth]))
            observed = [OUTCOME_NAMES[d] for d in draws]
        table = {"outcomes": OUTCOME_NAMES[:k], "given": given, "repeats": repeats,
                 "observed": observed}
    if kind in ("gauss", "both"):
        mean = np.round(rng.uniform(-2, 2, n_states), 3).tolist()
        sd_one = i % 6 in (1, 4)
        sd = np.round(rng.uniform(0.4, 2.0, n_states), 3)
        if sd_one:
            sd[:] = sd[0]
        repeats = int(rng.integers(1, 4))
        observed = None
        if with_observed:
            observed = np.round(rng.normal(mean[truth], sd[truth], repeats), 4).tolist()
        gauss = {"mean": mean, "sd": sd.tolist(), "sd_one": sd_one, "repeats": repeats,
                 "observed": observed}
    return Problem(f"random_{i:02d}", f"Random contamination check {i}", states, weights,
                   actions, loss, payoff, table, gauss)


def check_problem(p, folder, tally, tag):
    """Runs lopside on p and every case and rule check; a missing key or other crash in
    the checks is recorded as a failure of this problem and the run goes on."""
    out = run_lopside(p, folder, tally, tag)
    if out is None:
        return
    try:
        check_case(p, out, tally, tag)
        check_rule(p, out, tally, tag)
    except Exception:
        tally.record("checks ran to the end", False, f"{tag}: " + traceback.format_exc().strip())


def check_random(folder, tally):
    rng = np.random.default_rng(SEED)
    for i in range(N_RANDOM):
        p = random_problem(rng, i)
        check_problem(p, folder, tally, f"{p.name}.ini ({p.kind()})")


def check_tie(folder, tally):
    """No evidence, and two actions with exactly equal expected loss (1.0 each, exact in
    binary): both must be reported as tied, the third not."""
    p = Problem("tie", "Two equally good choices", ["clean", "contaminated"], [1, 1],
                ["use", "discard", "retest"], [[0.0, 2.0], [2.0, 0.0], [1.5, 1.5]])
    check_problem(p, folder, tally, f"{p.name}.ini (exact tie)")


def check_zero_entry(folder, tally):
    """An outcome impossible in one state (a 0 in the table) that is observed: that state's
    posterior is exactly 0, and rule rows containing the outcome exclude it (0 log 0 = 0
    elsewhere)."""
    p = Problem("zero_entry", "A swab that never flags a clean culture",
                ["clean", "trace", "heavy"], [0.6, 0.3, 0.1], ["use", "retest", "discard"],
                [[0.0, 5.0, 20.0], [1.0, 1.0, 3.0], [4.0, 4.0, 4.0]],
                table={"outcomes": ["clear", "flagged"],
                       "given": [[1.0, 0.0], [0.7, 0.3], [0.2, 0.8]], "repeats": 2,
                       "observed": ["clear", "flagged"]},
                gauss={"mean": [0.1, 0.3, 0.6], "sd": [0.1, 0.15, 0.2], "sd_one": False,
                       "repeats": 1, "observed": [0.25]})
    check_problem(p, folder, tally, f"{p.name}.ini (a zero in the outcome table)")


# ---------------------------------------------------------------------------------------
# 2. Equal-variance gaussian detection (Green, D. M. & Swets, J. A. (1966). Signal detection
#    theory and psychophysics. New York: Wiley): with noise ~ N(0, 1), signal ~ N(d', 1), the
#    optimal observer says "yes" above x_c = d'/2 + ln(beta)/d', where
#    beta = (P(noise)/P(signal)) * (V_cr + C_fa) / (V_hit + C_miss).
#    The expected payoff of that criterion follows from the normal CDF:
#    P(n)[V_cr Phi(x_c) - C_fa Q(x_c)] + P(s)[V_hit Q(x_c - d') - C_miss Phi(x_c - d')].
DETECTION_CASES = [
    # d', P(signal), V_hit, C_miss, V_cr, C_fa
    (1.5, 0.3, 4.0, 2.0, 1.0, 3.0),
    (1.0, 0.5, 1.0, 1.0, 1.0, 1.0),
    (2.0, 0.1, 10.0, 5.0, 1.0, 1.0),
    (0.8, 0.75, 1.0, 0.5, 2.0, 3.0),
    (2.5, 0.5, 1.0, 1.0, 5.0, 5.0),
    (1.2, 0.2, 3.0, 0.0, 1.0, 0.25),
]


def check_detection(folder, tally):
    for j, (d, ps, v_hit, c_miss, v_cr, c_fa) in enumerate(DETECTION_CASES):
        pn = 1.0 - ps
        beta = (pn / ps) * (v_cr + c_fa) / (v_hit + c_miss)
        crit = d / 2 + math.log(beta) / d
        payoff = (pn * (v_cr * stats.norm.cdf(crit) - c_fa * stats.norm.sf(crit)) +
                  ps * (v_hit * stats.norm.sf(crit - d) - c_miss * stats.norm.cdf(crit - d)))
        # loss orientation: rows say_no, say_yes; columns noise, signal
        loss = [[-v_cr, c_miss], [c_fa, -v_hit]]
        p = Problem(f"detection_{j}", f"Tone detection, d' = {d}", ["noise", "signal"],
                    [pn, ps], ["say_no", "say_yes"], loss, payoff=True,
                    gauss={"mean": [0.0, d], "sd": [1.0, 1.0], "sd_one": True, "repeats": 1,
                           "observed": None}, gauss_name="ear")
        tag = f"{p.name}.ini (d'={d}, P(signal)={ps}, beta={beta:.4g})"
        out = run_lopside(p, folder, tally, tag)
        if out is None:
            continue
        sw = out["rule"]["switch_points"]
        ok = (len(sw) == 1 and sw[0]["from"] == "say_no" and sw[0]["to"] == "say_yes")
        dev = abs(sw[0]["x"] - crit) / max(1.0, abs(crit)) if ok else math.inf
        tally.check("detection criterion (Green & Swets 1966)", dev, CLOSED_FORM_TOL,
                    f"{tag}: lopside {sw}, closed form x_c={crit!r}")
        got = out["rule"].get("bayes_payoff", math.nan)
        dev = rel_dev(got, payoff, max(v_hit, c_miss, v_cr, c_fa))
        tally.check("detection expected payoff at the criterion", dev, CLOSED_FORM_TOL,
                    f"{tag}: lopside bayes_payoff {got!r}, closed form {payoff!r}")


# ---------------------------------------------------------------------------------------
# 3. Screening: 1% prevalence, 80% sensitivity, 9.6% false positives. After a positive
#    result the posterior is 0.008 / (0.008 + 0.09504) = 0.0776..., the figure quoted as
#    about 7.8% by Eddy (1982) and Gigerenzer & Hoffrage (1995) (cited from memory).
def check_screening(folder, tally):
    p = Problem("screening", "Contamination assay on a rare contaminant",
                ["clean", "contaminated"], [0.99, 0.01], ["release", "hold"],
                [[0.0, 50.0], [1.0, 1.0]],
                table={"outcomes": ["negative", "positive"],
                       "given": [[0.904, 0.096], [0.2, 0.8]], "repeats": 1,
                       "observed": ["positive"]}, table_name="assay")
    out = run_lopside(p, folder, tally, f"{p.name}.ini")
    if out is None:
        return
    bayes = 0.01 * 0.8 / (0.01 * 0.8 + 0.99 * 0.096)
    got = out["case"]["posterior"]["p"][1]
    dev = abs(got - bayes) / bayes
    tally.check("screening posterior vs Bayes' rule", dev, SCREENING_TOL,
                f"{p.name}.ini: lopside {got!r}, Bayes' rule {bayes!r}")
    dev = abs(got - SCREENING_QUOTED)
    tally.check("screening posterior vs quoted 0.078", dev, SCREENING_QUOTED_TOL,
                f"{p.name}.ini: lopside {got!r}, quoted {SCREENING_QUOTED} +- "
                f"{SCREENING_QUOTED_TOL}")


# ---------------------------------------------------------------------------------------
# 4. 1,000 repeats with 1,000 observed labels: per-state likelihoods down to exp(-797),
#    below the smallest double, so only a log-space computation keeps the posterior.
def check_many_repeats(folder, tally):
    n, k_clear = 1000, 520
    rates = [0.5, 0.55, 0.3]      # P(clear | strain)
    rng = np.random.default_rng(SEED + 1)
    labels = ["clear"] * k_clear + ["marked"] * (n - k_clear)
    rng.shuffle(labels)
    p = Problem("many_repeats", "A thousand colonies scored clear or marked",
                ["strain_a", "strain_b", "strain_c"], [0.4, 0.4, 0.2],
                ["keep", "reorder"], [[0.0, 6.0, 9.0], [2.0, 2.0, 2.0]],
                table={"outcomes": ["clear", "marked"],
                       "given": [[r, round(1 - r, 10)] for r in rates], "repeats": n,
                       "observed": labels}, table_name="colonies")
    out = run_lopside(p, folder, tally, f"{p.name}.ini")
    if out is None:
        return
    logw = np.log(p.prior) + stats.binom.logpmf(k_clear, n, rates)
    ref = np.exp(logw - special.logsumexp(logw))
    got = out["case"]["posterior"]["p"]
    finite = (len(got) == 3 and all(isinstance(v, (int, float)) and math.isfinite(v)
                                     for v in got))
    dev = (float(np.max(np.abs(np.array(got) - ref) / ref)) if finite else math.inf)
    tally.check("1000 repeats: posterior finite, log-space match", dev, POSTERIOR_RTOL,
                f"{p.name}.ini: lopside {got}, reference {ref.tolist()}")
    # Bayes risk over all 1001 count vectors, from binom.logpmf.
    ks = np.arange(n + 1)
    w = np.exp(np.log(p.prior)[:, None] +
               np.array([stats.binom.logpmf(ks, n, r) for r in rates]))
    risk = float(np.sum(np.min(p.loss @ w, axis=0)))
    got = out["rule"]["bayes_risk"] if out.get("rule") else None
    dev = rel_dev(got, risk, p.scale) if isinstance(got, float) else math.inf
    tally.check("1000 repeats: Bayes risk", dev, SCORE_TOL,
                f"{p.name}.ini: lopside {got!r}, reference {risk!r}")


def main():
    return refkit.main("lopside_ref_", [check_random, check_tie, check_zero_entry,
                                        check_detection, check_screening, check_many_repeats])


if __name__ == "__main__":
    sys.exit(main())
