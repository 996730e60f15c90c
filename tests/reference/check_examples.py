"""Checks the examples' JSON (written by tests/run_examples.sh into the folder given
as the first argument) against computations made here with scipy, independent of
lopside's code."""
import json
import math
import sys

from scipy.stats import norm

folder = sys.argv[1]
failures = []


def close(what, got, want, tol):
    if not abs(got - want) <= tol * max(1.0, abs(want)):
        failures.append(f"{what}: got {got!r}, expected {want!r} (tolerance {tol})")


def load(name):
    with open(f"{folder}/{name}.json", encoding="utf-8") as f:
        return json.load(f)


# Tone detection: equal-variance gaussian, d' = 1.5, P(signal) = 0.3, payoffs
# hit 4, miss -2, correct rejection 1, false alarm -3. Green & Swets (1966):
# criterion = d'/2 + ln(beta)/d', beta = (P(n)/P(s)) (V_cr + C_fa)/(V_hit + C_miss).
for name in ("tone_detection", "demo"):
    tone = load(name)
    d, ps = 1.5, 0.3
    beta = ((1 - ps) / ps) * (1 + 3) / (4 + 2)
    x = d / 2 + math.log(beta) / d
    close(f"{name} switch point", tone["rule"]["switch_points"][0]["x"], x, 1e-9)
    payoff = (1 - ps) * (1 * norm.cdf(x) - 3 * norm.sf(x)) + ps * (4 * norm.sf(x - d) - 2 * norm.cdf(x - d))
    close(f"{name} Bayes payoff", tone["rule"]["bayes_payoff"], payoff, 1e-12)
    # The case: observed 0.9, posterior by Bayes' rule with scipy's normal density.
    ws = ps * norm.pdf(0.9, 1.5, 1)
    wn = (1 - ps) * norm.pdf(0.9, 0, 1)
    close(f"{name} posterior", tone["case"]["posterior"]["p"][1], ws / (ws + wn), 1e-12)
    assert tone["case"]["bayes_action"] in ("say_no", "say_yes")

# Contamination check: prior 97:3; two swabs read clear and flagged; turbidity 0.21
# with N(0.10, 0.08) clean and N(0.35, 0.12) contaminated.
c = load("contamination_check")
w_clean = 0.97 * 0.95 * 0.05 * norm.pdf(0.21, 0.10, 0.08)
w_cont = 0.03 * 0.10 * 0.90 * norm.pdf(0.21, 0.35, 0.12)
q = w_cont / (w_clean + w_cont)
close("contamination posterior", c["case"]["posterior"]["p"][1], q, 1e-12)
close("contamination expected loss of keep", c["case"]["actions"][1]["expected_loss"], 60 * q, 1e-12)
close("contamination EVPI", c["case"]["evpi"], min(4, 60 * q) - 4 * q, 1e-12)

# Interval timing: uniform prior on 500..1000 ms over a 2 ms grid (cells of 2 ms, so
# the edge states 500 and 1000 get half a cell), scalar noise sd = 0.15 s, observed 780.
# linlin with under 0.01, over 0.03: the Bayes estimate is the posterior quantile
# 0.01 / (0.01 + 0.03) = 0.25 (Raiffa & Schlaifer 1961; Berger 1985, sec. 2.4).
import numpy as np
from scipy.stats import uniform

it = load("interval_timing")
s = np.arange(400, 1201, 2.0)
prior = uniform.cdf(s + 1, 500, 500) - uniform.cdf(s - 1, 500, 500)
post = prior * norm.pdf(780, s, 0.15 * s)
post /= post.sum()
close("timing posterior mean", it["case"]["posterior"]["mean"], float(post @ s), 1e-9)
# On the grid the posterior is a set of point masses, whose linlin minimizer is the grid
# point where the CDF first reaches 0.25; reading each mass as spread over its cell
# moves the quantile by less than one cell (2 ms). Check both.
cdf = np.cumsum(post)
i = int(np.searchsorted(cdf, 0.25))
close("timing Bayes estimate (grid quantile)", it["case"]["bayes_estimate"], s[i], 1e-9)
q = s[i] - 1 + 2 * (0.25 - (cdf[i] - post[i])) / post[i]
if abs(it["case"]["bayes_estimate"] - q) > 2:
    failures.append(f"timing Bayes estimate {it['case']['bayes_estimate']} is more than a cell from {q}")
# Expected loss of that estimate, by the direct sum over the grid.
e = it["case"]["bayes_estimate"]
direct = float(post @ np.where(e < s, 0.01 * (s - e), 0.03 * (e - s)))
close("timing expected loss", it["case"]["expected_loss"], direct, 1e-9)

# Pointing: normal prior N(0, 8^2) on -40..40 (5 sd: the cut tails change the posterior
# by < 1e-6), gaussian vision sd 4, observed 3.2. Conjugate normal posterior
# (Gelman et al., BDA ch. 2): variance 1/(1/64 + 1/16) = 12.8, mean 12.8 * 3.2/16 = 2.56.
pt = load("pointing_task")
# Cell masses in place of the density shift the mean by O(h^2) relative (h = 0.1 mm).
close("pointing posterior mean", pt["case"]["posterior"]["mean"], 2.56, 1e-4)
# sd on a grid of spacing h carries the cell variance h^2/12 only in the continuous
# reading; the grid's discrete sd differs from sqrt(12.8) by O(h^2) = 1e-2 relative at most.
close("pointing posterior sd", pt["case"]["posterior"]["sd"], math.sqrt(12.8), 1e-3)
# Bayes aim: brute force over the estimate grid of the payoff curve under the grid
# posterior recomputed here.
x = np.arange(-400, 401) / 10.0
pp = (norm.cdf(x + 0.05, 0, 8) - norm.cdf(x - 0.05, 0, 8)) * norm.pdf(3.2, x, 4)
pp /= pp.sum()
knots_e = [-5.001, -5, 5, 5.001, 12, 12.001]
knots_v = [0, 10, 10, -20, -20, 0]
payoff = np.array([pp @ np.interp(a - x, knots_e, knots_v) for a in x])
best = x[int(np.argmax(payoff))]
close("pointing Bayes aim", pt["case"]["bayes_estimate"], best, 1e-9)
close("pointing expected payoff", pt["case"]["expected_payoff"], float(payoff.max()), 1e-9)

for f in failures:
    print("FAIL", f)
print("ok" if not failures else f"{len(failures)} failures")
sys.exit(1 if failures else 0)
