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

for f in failures:
    print("FAIL", f)
print("ok" if not failures else f"{len(failures)} failures")
sys.exit(1 if failures else 0)
