"""Checks the examples' JSON (written by tests/run_examples.sh into the folder given
as the first argument) against computations made here with scipy, independent of
lopside's code.

Prints one line per example and ends with `N passed, M failed`; exits 1 on any failure."""
import json
import math
import sys

import numpy as np
from scipy.stats import norm, uniform

sys.dont_write_bytecode = True  # no __pycache__ beside the scripts
import refkit  # noqa: E402  (the shared harness, beside this file)


def load(folder, name):
    with open(f"{folder}/{name}.json", encoding="utf-8") as f:
        return json.load(f)


# Tone detection: equal-variance gaussian, d' = 1.5, P(signal) = 0.3, payoffs
# hit 4, miss -2, correct rejection 1, false alarm -3. Green & Swets (1966):
# criterion = d'/2 + ln(beta)/d', beta = (P(n)/P(s)) (V_cr + C_fa)/(V_hit + C_miss).
def check_tone_detection(folder, tally):
    for name in ("tone_detection", "demo"):
        tone = load(folder, name)
        d, ps = 1.5, 0.3
        beta = ((1 - ps) / ps) * (1 + 3) / (4 + 2)
        x = d / 2 + math.log(beta) / d
        tally.close_rel(name, tone["rule"]["switch_points"][0]["x"], x, 1e-9, "switch point")
        payoff = ((1 - ps) * (1 * norm.cdf(x) - 3 * norm.sf(x))
                  + ps * (4 * norm.sf(x - d) - 2 * norm.cdf(x - d)))
        tally.close_rel(name, tone["rule"]["bayes_payoff"], payoff, 1e-12, "Bayes payoff")
        # The case: observed 0.9, posterior by Bayes' rule with scipy's normal density.
        ws = ps * norm.pdf(0.9, 1.5, 1)
        wn = (1 - ps) * norm.pdf(0.9, 0, 1)
        tally.close_rel(name, tone["case"]["posterior"]["p"][1], ws / (ws + wn), 1e-12,
                        "posterior")
        action = tone["case"]["bayes_action"]
        tally.record(name, action in ("say_no", "say_yes"), f"Bayes action {action!r}")


# Contamination check: prior 97:3; two swabs read clear and flagged; turbidity 0.21
# with N(0.10, 0.08) clean and N(0.35, 0.12) contaminated.
def check_contamination(folder, tally):
    group = "contamination_check"
    c = load(folder, group)
    w_clean = 0.97 * 0.95 * 0.05 * norm.pdf(0.21, 0.10, 0.08)
    w_cont = 0.03 * 0.10 * 0.90 * norm.pdf(0.21, 0.35, 0.12)
    q = w_cont / (w_clean + w_cont)
    tally.close_rel(group, c["case"]["posterior"]["p"][1], q, 1e-12, "posterior")
    tally.close_rel(group, c["case"]["actions"][1]["expected_loss"], 60 * q, 1e-12,
                    "expected loss of keep")
    tally.close_rel(group, c["case"]["evpi"], min(4, 60 * q) - 4 * q, 1e-12, "EVPI")


# Interval timing: uniform prior on 500..1000 ms over a 2 ms grid (cells of 2 ms, so
# the edge states 500 and 1000 get half a cell), scalar noise sd = 0.15 s, observed 780.
# linlin with under 0.01, over 0.03: the Bayes estimate is the posterior quantile
# 0.01 / (0.01 + 0.03) = 0.25 (Raiffa & Schlaifer 1961; Berger 1985, sec. 2.4).
def check_interval_timing(folder, tally):
    group = "interval_timing"
    it = load(folder, group)
    s = np.arange(400, 1201, 2.0)
    prior = uniform.cdf(s + 1, 500, 500) - uniform.cdf(s - 1, 500, 500)
    post = prior * norm.pdf(780, s, 0.15 * s)
    post /= post.sum()
    tally.close_rel(group, it["case"]["posterior"]["mean"], float(post @ s), 1e-9,
                    "posterior mean")
    # The grid's continuous reading spreads each mass evenly over its cell [s - 1, s + 1]
    # (the cells holding mass here lie inside 400..1200), so the CDF is linear in a cell
    # and the linlin minimizer, the quantile 0.25, is interpolated in the cell it falls in.
    cdf = np.cumsum(post)
    i = int(np.searchsorted(cdf, 0.25))
    q = s[i] - 1 + 2 * (0.25 - (cdf[i] - post[i])) / post[i]
    tally.close_rel(group, it["case"]["bayes_estimate"], q, 1e-9,
                    "Bayes estimate (quantile of the cells)")
    # Its expected loss over the cells: a cell [a, b] wholly below e costs 0.03·(e - mid),
    # wholly above 0.01·(mid - e), and the cell holding e, per unit mass,
    # (0.03·(e - a)² + 0.01·(b - e)²) / (2·(b - a)).
    e = it["case"]["bayes_estimate"]
    a, b = s - 1, s + 1
    inside = (0.03 * np.clip(e - a, 0, None) ** 2 + 0.01 * np.clip(b - e, 0, None) ** 2) / 4
    per = np.where(b <= e, 0.03 * (e - s), np.where(a >= e, 0.01 * (s - e), inside))
    tally.close_rel(group, it["case"]["expected_loss"], float(post @ per), 1e-9,
                    "expected loss")


# Pointing: normal prior N(0, 8^2) on -40..40 (5 sd: the cut tails change the posterior
# by < 1e-6), gaussian vision sd 4, observed 3.2. Conjugate normal posterior
# (Gelman et al., BDA ch. 2): variance 1/(1/64 + 1/16) = 12.8, mean 12.8 * 3.2/16 = 2.56.
def check_pointing(folder, tally):
    group = "pointing_task"
    pt = load(folder, group)
    # Cell masses in place of the density shift the mean by O(h^2) relative (h = 0.1 mm).
    tally.close_rel(group, pt["case"]["posterior"]["mean"], 2.56, 1e-4, "posterior mean")
    # sd on a grid of spacing h carries the cell variance h^2/12 only in the continuous
    # reading; the grid's discrete sd differs from sqrt(12.8) by O(h^2) = 1e-2 relative at most.
    tally.close_rel(group, pt["case"]["posterior"]["sd"], math.sqrt(12.8), 1e-3, "posterior sd")
    # Bayes aim: brute force over the estimate grid of the payoff curve under the grid
    # posterior recomputed here.
    x = np.arange(-400, 401) / 10.0
    pp = (norm.cdf(x + 0.05, 0, 8) - norm.cdf(x - 0.05, 0, 8)) * norm.pdf(3.2, x, 4)
    pp /= pp.sum()
    knots_e = [-5.001, -5, 5, 5.001, 12, 12.001]
    knots_v = [0, 10, 10, -20, -20, 0]
    payoff = np.array([pp @ np.interp(a - x, knots_e, knots_v) for a in x])
    best = x[int(np.argmax(payoff))]
    tally.close_rel(group, pt["case"]["bayes_estimate"], best, 1e-9, "Bayes aim")
    tally.close_rel(group, pt["case"]["expected_payoff"], float(payoff.max()), 1e-9,
                    "expected payoff")


def main():
    tally = refkit.Tally()
    refkit.run_checks([check_tone_detection, check_contamination, check_interval_timing,
                       check_pointing], sys.argv[1], tally)
    return refkit.finish(tally)


if __name__ == "__main__":
    sys.exit(main())
