#!/usr/bin/python3
"""Independent scipy/numpy reference for lopside's [value], [sweep.NAME] and [design.NAME].

Every number checked here is recomputed from the problem file's own parameters with scipy,
numpy or a closed form named beside it, never from an earlier lopside output:

1. rule.threshold sweeps of equal-variance detection problems (random d', sd, repeats,
   prior and payoffs): per threshold t the false-alarm rate F = norm.sf(t, mu_n, sd) and
   hit rate H = norm.sf(t, mu_s, sd) (the ROC), the expected payoff, and Macmillan &
   Creelman's (Detection Theory: A User's Guide) c = -(z(H) + z(F))/2, beta as the ratio
   of normal densities at z(H) and z(F), d' = z(H) - z(F); the Bayes threshold is Green &
   Swets' (1966) criterion d'/2 + ln(beta)/d' (in sd units), and the thresholds within
   1%, 5%, 10% end where scipy's expected payoff meets the level. Also Macmillan &
   Creelman's worked numbers: H = 0.84, F = 0.16 give d' of about 1.99.
2. Designs of the same problems: the false-alarm payoff that puts the switch point at x
   (Green & Swets solved for C_fa in closed form), and the one that makes the rate of
   saying yes R (scipy.optimize.brentq on P(n) Q(x) + P(s) Q(x - d')).
3. [value] of detection problems: EVSI of n more repeats is the difference of Green &
   Swets' Bayes payoffs with d' sqrt(k) for k repeats; EVPI against the payoff of
   knowing the state. Normal prior, gaussian noise, squared loss: EVSI = V(1) - V(1 + n)
   with V(k) = (1/tau^2 + k/sigma^2)^-1 (Raiffa & Schlaifer 1961).
4. Random finite problems: 0 <= EVSI <= EVPI, EVSI never falls as n grows (equal sds),
   and the net value and best purchase follow from the EVSI and the cost.
5. Choice rates on the generic path: poisson counts over two numeric states, where the
   rule's grid is the whole numbers and P(a | s) is an exact sum of scipy's pmf; and grid
   states with a gaussian prior, where P(long) is the sum over the grid's states of normal
   tails beyond the switch point (and close to the continuous predictive tail). The grid
   sweep gives the same numbers on one thread as on two.
6. What a sweep's measurement is called: with 3 repeats of unequal-variance evidence, the
   text, CSV and workbook name the mean of the readings, and every point's switch points
   are listed (text at 6 digits, CSV in full) where the two roots of the log-likelihood
   ratio's quadratic put them.

Run from the repository root:
    LOPSIDE=build/lopside /usr/bin/python3 tests/reference/check_studies.py
Prints one line per check group and ends with `N passed, M failed`; exits 1 on any failure.
"""

import csv
import functools
import math
import os
import re
import subprocess
import sys

import numpy as np
import openpyxl
from scipy import integrate, optimize, stats

sys.dont_write_bytecode = True  # no __pycache__ beside the scripts
import refkit  # noqa: E402  (the shared harness, beside this file)

SEED = 20240612

# Tolerances, each with its reason.
# Normal CDF values computed by GSL and by scipy agree to ~1e-15 relative; sums of a few
# of them times payoffs of size <= 20: 1e-12 of the payoff scale.
CDF_TOL = 1e-12
# z-scores from inverse CDFs lose digits in the tails (rates down to ~1e-4): 1e-8.
Z_TOL = 1e-8
# Roots: lopside's Brent stops at 1e-12 (relative) of the bracket or threshold; the root
# of a smooth function is then good to ~1e-10. 1e-8 leaves a margin, still far below any
# grid spacing.
ROOT_TOL = 1e-8
# Value of information on the exact path: differences of exact Bayes risks, 1e-10 of the
# payoff scale (each risk is a sum of normal CDF terms at switch points found to 1e-12).
VALUE_TOL = 1e-10
# Squared loss on a state grid of spacing h: Sheppard's h^2/12 on the prior variance and
# the rounding of estimates to the grid (another h^2/12) change the risks by under 2e-5
# of their size with the grids used below; 2e-4 relative leaves a margin.
GRID_VALUE_TOL = 2e-4
# Counts: the rule's whole numbers leave out at most 1e-6 of the predictive probability.
COUNT_TOL = 2e-6


def run(folder, name, text, threads=None):
    """Runs lopside on TEXT (with OMP_NUM_THREADS = threads if given) and returns the JSON;
    raises refkit.LopsideError on failure."""
    env = {"OMP_NUM_THREADS": str(threads)} if threads else None
    return refkit.run_lopside(folder, name, text, env=env)


def detection_text(ps, mu, sd, repeats, payoff, extra):
    """Two labelled states (noise N(0, sd), signal N(mu, sd)), `repeats` measurements."""
    vc, cm, cf, vh = payoff
    return (f"[problem]\ntitle = detection\nscore_unit = points\n[states]\nlabels = noise, signal\n"
            f"[prior]\nweights = {1 - ps!r}, {ps!r}\n"
            f"[evidence.ear]\nnoise = gaussian\nmean = 0, {mu!r}\nsd = {sd!r}\n"
            f"repeats = {repeats}\n"
            f"[actions]\nlabels = say_no, say_yes\n"
            f"[payoff]\nsay_no = {vc!r}, {-cm!r}\nsay_yes = {-cf!r}, {vh!r}\n{extra}")


def threshold_payoff(ps, mu, sd, payoff, t):
    """Expected payoff of saying yes at or above t (Green & Swets 1966)."""
    vc, cm, cf, vh = payoff
    return ((1 - ps) * (vc * stats.norm.cdf(t, 0, sd) - cf * stats.norm.sf(t, 0, sd))
            + ps * (vh * stats.norm.sf(t, mu, sd) - cm * stats.norm.cdf(t, mu, sd)))


def criterion(ps, mu, sd, payoff):
    """Green & Swets' optimal criterion in measurement units: sd (d'/2 + ln(beta)/d')."""
    vc, cm, cf, vh = payoff
    d = mu / sd
    beta = ((1 - ps) / ps) * (vc + cf) / (vh + cm)
    return sd * (d / 2 + math.log(beta) / d)


def random_detection(rng):
    ps = float(rng.uniform(0.2, 0.8))
    sd = float(rng.uniform(0.5, 2.0))
    mu = float(sd * rng.uniform(0.7, 2.5))
    repeats = int(rng.integers(1, 4))
    payoff = tuple(float(v) for v in rng.uniform(0.5, 5.0, size=4))
    return ps, mu, sd, repeats, payoff


def check_thresholds(folder, tally, rng):
    for k in range(8):
        ps, mu, sd, repeats, payoff = random_detection(rng)
        sdn = sd / math.sqrt(repeats)
        lo, hi = -2 * sdn, mu + 2 * sdn
        out = run(folder, f"roc{k}", detection_text(
            ps, mu, sd, repeats, payoff,
            f"[sweep.roc]\nx = rule.threshold\nx_from = {lo!r}\nx_to = {hi!r}\nx_points = 11\n"))
        sw = out["sweeps"][0]
        d = mu / sdn
        tally.close_rel("threshold sweeps: d'", sw["d_prime"], d, CDF_TOL, f"roc{k}")
        for pt in sw["points"]:
            t = pt["x"]
            F, H = stats.norm.sf(t, 0, sdn), stats.norm.sf(t, mu, sdn)
            tally.close_rel("threshold sweeps: ROC (hit, false alarm)", pt["hit_rate"], H, CDF_TOL,
                            f"roc{k} t={t}")
            tally.close_rel("threshold sweeps: ROC (hit, false alarm)", pt["false_alarm_rate"], F,
                            CDF_TOL, f"roc{k} t={t}")
            tally.close_rel("threshold sweeps: rates per action and state",
                            pt["rates"]["say_no"]["signal"], 1 - H, CDF_TOL, f"roc{k} t={t}")
            tally.close_rel("threshold sweeps: expected payoff", pt["expected_payoff"],
                            threshold_payoff(ps, mu, sdn, payoff, t), CDF_TOL, f"roc{k} t={t}")
            zH, zF = stats.norm.ppf(H), stats.norm.ppf(F)
            tally.close_rel("threshold sweeps: c = -(z(H) + z(F))/2", pt["c"], -(zH + zF) / 2,
                            Z_TOL, f"roc{k} t={t}")
            tally.close_rel("threshold sweeps: beta = phi(z(H))/phi(z(F))", pt["beta"],
                            stats.norm.pdf(zH) / stats.norm.pdf(zF), Z_TOL, f"roc{k} t={t}")
            tally.close_rel("threshold sweeps: d' = z(H) - z(F)", zH - zF, sw["d_prime"], Z_TOL,
                            f"roc{k} t={t}")
        x = criterion(ps, mu, sdn, payoff)
        tally.close_rel("threshold sweeps: Bayes threshold (Green & Swets)",
                        sw["bayes_threshold"], x, ROOT_TOL, f"roc{k}")
        best = threshold_payoff(ps, mu, sdn, payoff, x)
        tally.close_rel("threshold sweeps: Bayes threshold's payoff",
                        sw["bayes_threshold_expected_payoff"], best, CDF_TOL, f"roc{k}")
        for r in sw["flatness"]["ranges"]:
            level = best - r["within"] * abs(best)
            for end in ("from", "to"):
                if r[end] is None:
                    # Endless: the payoff never falls below the level on that side; the
                    # limit there is always taking one action.
                    limit = (1 - ps) * payoff[0] - ps * payoff[1] if end == "to" else \
                        -(1 - ps) * payoff[2] + ps * payoff[3]
                    tally.record("threshold sweeps: flatness ranges", limit >= level - 1e-12,
                                 f"roc{k} {end} endless but the limit {limit} < {level}")
                    continue
                tally.close_rel("threshold sweeps: flatness ranges",
                                threshold_payoff(ps, mu, sdn, payoff, r[end]), level, ROOT_TOL,
                                f"roc{k} within {r['within']} {end}")


def check_macmillan_creelman(folder, tally):
    # H = 0.84, F = 0.16: z(H) = 0.994, z(F) = -0.994, d' = 1.99 (Macmillan & Creelman,
    # from memory; the book's table rounds z to two decimals). A signal mean of
    # z(0.84) - z(0.16) and a threshold at z(0.84) produce exactly those rates.
    mu = stats.norm.ppf(0.84) - stats.norm.ppf(0.16)
    t = stats.norm.ppf(0.84)
    out = run(folder, "mc", detection_text(
        0.5, float(mu), 1.0, 1, (1, 1, 1, 1),
        f"[sweep.roc]\nx = rule.threshold\nx_from = {float(t)!r}\nx_to = 3\nx_points = 2\n"))
    sw = out["sweeps"][0]
    pt = sw["points"][0]
    tally.close_rel("Macmillan & Creelman: H = 0.84, F = 0.16", pt["hit_rate"], 0.84, 1e-12, "H")
    tally.close_rel("Macmillan & Creelman: H = 0.84, F = 0.16", pt["false_alarm_rate"], 0.16, 1e-12,
                    "F")
    tally.record("Macmillan & Creelman: d' about 1.99", round(sw["d_prime"], 2) == 1.99,
                 f"d' = {sw['d_prime']}")
    # Unbiased there: c = 0, beta = 1.
    tally.close_rel("Macmillan & Creelman: H = 0.84, F = 0.16", pt["c"], 0.0, 1e-9, "c")
    tally.close_rel("Macmillan & Creelman: H = 0.84, F = 0.16", pt["beta"], 1.0, 1e-9, "beta")


def check_designs(folder, tally, rng):
    for k in range(6):
        ps, mu, sd, repeats, payoff = random_detection(rng)
        sdn = sd / math.sqrt(repeats)
        vc, cm, cf, vh = payoff
        d = mu / sdn
        # A target switch point from a false-alarm cost inside the bracket [0.2, 30].
        cf_true = float(rng.uniform(0.5, 20))
        x = criterion(ps, mu, sdn, (vc, cm, cf_true, vh))
        # A target rate of saying yes from another cost inside the bracket.
        xr = criterion(ps, mu, sdn, (vc, cm, float(rng.uniform(0.5, 20)), vh))
        rate = (1 - ps) * stats.norm.sf(xr, 0, sdn) + ps * stats.norm.sf(xr, mu, sdn)
        out = run(folder, f"design{k}", detection_text(
            ps, mu, sd, repeats, payoff,
            f"[design.switch]\nvary = payoff.say_yes[1]\nfrom = -30\nto = -0.2\n"
            f"goal = switch_point\nequals = {x!r}\n"
            f"[design.rate]\nvary = payoff.say_yes[1]\nfrom = -30\nto = -0.2\n"
            f"goal = choice_rate.say_yes\nequals = {rate!r}\n"))
        # Green & Swets solved for C_fa: beta = exp((x/sd - d'/2) d'),
        # C_fa = beta (P(s)/P(n)) (V_hit + C_miss) - V_cr.
        beta = math.exp((x / sdn - d / 2) * d)
        want = beta * (ps / (1 - ps)) * (vh + cm) - vc
        got = out["designs"][0]
        tally.record("designs: switch point reached", got["reached"] is True, f"design{k}")
        tally.close_rel("designs: switch point (Green & Swets for C_fa)", -got["value"], want,
                        ROOT_TOL, f"design{k}")

        def yes_rate(c):
            xc = criterion(ps, mu, sdn, (vc, cm, c, vh))
            return (1 - ps) * stats.norm.sf(xc, 0, sdn) + ps * stats.norm.sf(xc, mu, sdn) - rate
        want = optimize.brentq(yes_rate, 0.2, 30, xtol=1e-14, rtol=1e-14)
        got = out["designs"][1]
        tally.record("designs: choice rate reached", got["reached"] is True, f"design{k}")
        tally.close_rel("designs: choice rate (brentq)", -got["value"], want, ROOT_TOL,
                        f"design{k}")


def gs_payoff(ps, d, payoff):
    """Bayes payoff of equal-variance detection with sensitivity d (sd units)."""
    x = criterion(ps, d, 1.0, payoff)
    return threshold_payoff(ps, d, 1.0, payoff, x)


def check_value_detection(folder, tally, rng):
    for k in range(6):
        ps, mu, sd, repeats, payoff = random_detection(rng)
        cost = float(rng.uniform(0, 0.2))
        out = run(folder, f"value{k}", detection_text(
            ps, mu, sd, repeats, payoff, f"[value]\nup_to = 4\ncost = {cost!r}\n"))
        v = out["value"]
        d1 = mu / sd
        given = gs_payoff(ps, d1 * math.sqrt(repeats), payoff)
        vc, cm, cf, vh = payoff
        perfect = (1 - ps) * vc + ps * vh
        tally.close_rel("value: EVPI of detection", v["evpi"], perfect - given, VALUE_TOL,
                        f"value{k}")
        best = None
        for e in v["extra"]:
            more = gs_payoff(ps, d1 * math.sqrt(repeats + e["n"]), payoff)
            tally.close_rel("value: EVSI of detection (Green & Swets with d' sqrt(k))", e["evsi"],
                            more - given, VALUE_TOL, f"value{k} n={e['n']}")
            tally.close_rel("value: net = EVSI - n cost", e["net"], e["evsi"] - e["n"] * cost,
                            1e-12, f"value{k} n={e['n']}")
            if e["net"] > 0 and (best is None or e["net"] > best[1]):
                best = (e["n"], e["net"])
        tally.record("value: best purchase", (v["best"] is None) == (best is None) and
                     (best is None or v["best"]["n"] == best[0]), f"value{k}: {v['best']} {best}")


def check_value_normal(folder, tally):
    for k, (tau, sigma) in enumerate([(10.0, 5.0), (4.0, 8.0), (20.0, 3.0)]):
        # Grid step a hundredth of the smaller sd: rounding estimates to the grid adds
        # h^2/12 to a risk V(1) >= min(tau, sigma)^2/2, under 2e-5 of it.
        h = min(tau, sigma) / 100
        text = (f"[problem]\ntitle = normal\n[states]\nfrom = {-6 * tau!r}\nto = {6 * tau!r}\n"
                f"step = {h!r}\n[prior]\nfamily = normal\nmean = 0\nsd = {tau!r}\n"
                f"[evidence.eye]\nnoise = gaussian\nsd = {sigma!r}\n"
                f"[actions]\nestimate = yes\n[loss]\ncurve = squared\n[value]\nup_to = 3\n")
        out = run(folder, f"normal{k}", text)
        v = out["value"]

        def var(n):
            return 1 / (1 / tau ** 2 + n / sigma ** 2)
        tally.close_rel("value: EVPI, squared loss (posterior variance)", v["evpi"], var(1),
                        GRID_VALUE_TOL, f"normal{k}")
        for e in v["extra"]:
            tally.close_rel("value: EVSI, normal prior and noise (Raiffa & Schlaifer)", e["evsi"],
                            var(1) - var(1 + e["n"]), GRID_VALUE_TOL, f"normal{k} n={e['n']}")
            # The textbook form tau^2 - (1/tau^2 + m/sigma^2)^-1 for m = 1 + n measurements
            # against none: the design's own evidence plus the n more.
            tally.close_rel("value: tau^2 - (1/tau^2 + m/sigma^2)^-1 (evidence + EVSI)",
                            out["rule"]["value_of_evidence"] + e["evsi"],
                            tau ** 2 - var(1 + e["n"]), GRID_VALUE_TOL, f"normal{k} m={1 + e['n']}")
        # Nothing observed: one more measurement for the case is worth tau^2 - var(1).
        tally.close_rel("value: tau^2 - (1/tau^2 + m/sigma^2)^-1 (case, nothing observed)",
                        v["case_next"][0]["value"], tau ** 2 - var(1), GRID_VALUE_TOL, f"normal{k}")


def check_value_properties(folder, tally, rng):
    names = ["a", "b", "c"]
    for k in range(12):
        S, A = int(rng.integers(2, 4)), int(rng.integers(2, 4))
        means = rng.uniform(0, 3, size=S)
        lines = ["[problem]", "title = random", "[states]", "labels = " + ", ".join(names[:S]),
                 "[prior]", "weights = " + ", ".join(f"{w:.6f}" for w in rng.uniform(0.1, 1, S)),
                 "[evidence.meter]", "noise = gaussian", "mean = " +
                 ", ".join(f"{m:.5f}" for m in means), f"sd = {rng.uniform(0.5, 1.5):.5f}",
                 f"observed = {rng.uniform(0, 3):.4f}"]
        if rng.uniform() < 0.5:
            lines += ["[evidence.swab]", "outcomes = clear, flagged"]
            for s in range(S):
                f = rng.uniform(0.05, 0.95)
                lines.append(f"given.{names[s]} = {1 - f:.6f}, {f:.6f}")
        lines += ["[actions]", "labels = " + ", ".join("xyz"[:A]), "[loss]"]
        for a in range(A):
            lines.append(f"{'xyz'[a]} = " + ", ".join(f"{x:.4f}" for x in rng.uniform(0, 10, S)))
        cost = float(rng.uniform(0, 0.3))
        lines += ["[value]", "up_to = 3", f"cost = {cost!r}"]
        out = run(folder, f"prop{k}", "\n".join(lines) + "\n")
        v = out["value"]
        tol = 1e-11
        tally.record("value: 0 <= EVPI", v["evpi"] >= -tol, f"prop{k}: {v['evpi']}")
        by = {}
        for e in v["extra"]:
            by.setdefault(e["channel"], []).append(e["evsi"])
            tally.record("value: 0 <= EVSI <= EVPI", -tol <= e["evsi"] <= v["evpi"] + tol,
                         f"prop{k}: {e}")
        for ch, vals in by.items():
            tally.record("value: EVSI never falls with more repeats",
                         all(b >= a - tol for a, b in zip(vals, vals[1:])), f"prop{k} {ch}: {vals}")
        for n in v["case_next"]:
            tally.record("value: 0 <= case value <= case EVPI",
                         -tol <= n["value"] <= out["case"]["evpi"] + tol, f"prop{k}: {n}")


def check_count_rates(folder, tally):
    # Two numeric states with poisson counts (means 3 and 7 in a window of 1): the rule's
    # grid is the whole numbers, so P(a | s) is a sum of pmf values (scipy.stats.poisson).
    text = ("[problem]\ntitle = counts\n[states]\nvalues = 3, 7\n[prior]\nweights = 0.6, 0.4\n"
            "[evidence.counter]\nnoise = poisson\n[actions]\nlabels = low, high\n"
            "[loss]\nlow = 0, 4\nhigh = 1, 0\n"
            "[sweep.prior]\nx = prior.weights[1]\nx_from = 0.3\nx_to = 0.8\nx_points = 6\n")
    out = run(folder, "counts", text)
    for pt in out["sweeps"][0]["points"]:
        w = np.array([pt["x"], 0.4])
        w /= w.sum()
        ks = np.arange(0, 60)
        like = np.array([stats.poisson.pmf(ks, 3), stats.poisson.pmf(ks, 7)])
        loss = np.array([[0, 4], [1, 0]])
        el = loss @ (w[:, None] * like)           # expected loss of each action per count
        high = el[1] < el[0]
        for s, name in enumerate(["3", "7"]):
            want = float(like[s][high].sum())
            tally.close_rel("generic path rates: poisson counts (exact sums)",
                            pt["rates"]["high"][name], want, COUNT_TOL, f"x={pt['x']} state {name}")


def check_grid_rates(folder, tally):
    # Grid states N(800, 120^2) on [300, 1300], gaussian clock sd 80, `long` pays above 800.
    # The continuous model (design.md): the prior is the normal restricted to [300, 1300],
    # the posterior given x the conjugate normal (Gelman et al. 2013, sec. 2.5, from
    # memory) restricted likewise. The rule chooses long above its switch point x*, where
    # (1 - L1)·P(s < 800 | x) = 2·P(s > 800 | x) with L1 = payoff.long[1] (brentq), so
    # P(long) = ∫ prior(s) Q((x* - s)/80) ds over [300, 1300] (scipy quad, error < 1e-12).
    # Contract: the switch point within accuracy × the measurement span, the rate within
    # accuracy (absolute). Besides, close to the unrestricted predictive tail
    # Q((x* - 800)/sqrt(120^2 + 80^2)): the 4.2-sd cut moves it by under 1e-5.
    text = ("[problem]\ntitle = bands\n[states]\nfrom = 300\nto = 1300\npoints = 1001\n"
            "[prior]\nfamily = normal\nmean = 800\nsd = 120\n"
            "[evidence.clock]\nnoise = gaussian\nsd = 80\ngrid_points = 501\n"
            "[actions]\nlabels = short, long\n[payoff]\ncuts = 800\nshort = 1, -1\nlong = -2, 1\n"
            "[sweep.penalty]\nx = payoff.long[1]\nx_from = -5\nx_to = 0\nx_points = 6\n")
    out = run(folder, "grid", text, threads=2)
    # Sweep points run in parallel; every number must be the same on one thread as on two.
    one = run(folder, "grid1", text, threads=1)
    tally.record("sweeps: the same numbers on 1 thread as on several",
                 one["sweeps"] == out["sweeps"], "grid sweep differs between thread counts")
    mu, tau, sig, lo, hi, cut = 800.0, 120.0, 80.0, 300.0, 1300.0, 800.0
    z = stats.norm.cdf(hi, mu, tau) - stats.norm.cdf(lo, mu, tau)
    v = 1 / (1 / tau ** 2 + 1 / sig ** 2)

    def below(x):
        m, r = v * (mu / tau ** 2 + x / sig ** 2), math.sqrt(v)
        f = lambda t: stats.norm.cdf((t - m) / r)
        return (f(cut) - f(lo)) / (f(hi) - f(lo))

    acc = out.get("accuracy") or {}
    asked = acc.get("asked", 1e-6)
    span = (acc.get("scales") or {}).get("measurement_span")
    sd = math.hypot(tau, sig)
    for pt in out["sweeps"][0]["points"]:
        l1 = pt["x"]
        xs = optimize.brentq(lambda x: (1 - l1) * below(x) - 2 * (1 - below(x)), 0, 1600,
                             xtol=1e-12)
        want = integrate.quad(lambda s: stats.norm.pdf(s, mu, tau) / z * stats.norm.sf(xs, s, sig),
                              lo, hi, epsabs=1e-14, epsrel=1e-12, limit=200)[0]
        x = pt["switch_points"][0]["x"]
        tally.close("generic path rates: grid states, switch point (continuous model)",
                    f"x={l1}: switch point", x, xs, asked * (span or hi - lo))
        tally.close("generic path rates: grid states (continuous rate, quad)",
                    f"x={l1}: P(long)", pt["rates"]["long"], want, asked + 1e-12)
        tally.close_rel("generic path rates: grid states (continuous predictive tail)",
                        pt["rates"]["long"], stats.norm.sf(x, 800, sd), 1e-5, f"x={pt['x']}")


def unequal_roots(ps, mu, s0, s1, payoff):
    """The two measurements where saying yes starts and stops paying, noise N(0, s0) and
    signal N(mu, s1): ps (vh + cm) phi(x; mu, s1) = (1 - ps) (vc + cf) phi(x; 0, s0), a
    quadratic in x once logs are taken (unequal-variance detection)."""
    vc, cm, cf, vh = payoff
    lhs = math.log(ps * (vh + cm) / s1)
    rhs = math.log((1 - ps) * (vc + cf) / s0)
    a = 1 / (2 * s0 ** 2) - 1 / (2 * s1 ** 2)
    b = mu / s1 ** 2
    c = -mu ** 2 / (2 * s1 ** 2) + lhs - rhs
    return sorted(float(r.real) for r in np.roots([a, b, c]))


def check_sweep_labels(folder, tally):
    """What the writers call a sweep's measurement and its switch points. The rule of 3
    repeats decides on their mean, so text, CSV and workbook must say so, not name the
    channel alone; a point's switch points are listed in full (once written `-2.2 +1`),
    each where the closed form of unequal-variance detection puts it."""
    ps, mu, sds, repeats = 0.3, 1.5, (1.0, 2.0), 3
    text = ("[problem]\ntitle = labels\nscore_unit = points\n[states]\nlabels = noise, signal\n"
            f"[prior]\nweights = {1 - ps!r}, {ps!r}\n[evidence.ear]\nnoise = gaussian\n"
            f"mean = 0, {mu!r}\nsd = {sds[0]!r}, {sds[1]!r}\nrepeats = {repeats}\n"
            "[actions]\nlabels = say_no, say_yes\n[payoff]\nsay_no = 1, -2\nsay_yes = -3, 4\n"
            "[sweep.pen]\nx = payoff.say_yes[1]\nx_from = -10\nx_to = -1\nx_points = 4\n"
            "[sweep.crit]\nx = rule.threshold\nx_from = -0.5\nx_to = 2.5\nx_points = 4\n")
    ini = os.path.join(folder, "labels.ini")
    with open(ini, "w", encoding="utf-8") as f:
        f.write(text)
    res = subprocess.run([refkit.LOPSIDE, "run", ini, "--csv", os.path.join(folder, "labels"),
                          "--workbook", os.path.join(folder, "labels.xlsx")],
                         capture_output=True, text=True)
    group = "sweep labels: the measurement named as the rule reads it"
    if not tally.record(group, res.returncode == 0, res.stderr.strip()):
        return
    measure = "the mean of the 3 readings of ear"
    s0, s1 = (sd / math.sqrt(repeats) for sd in sds)
    want = {x: unequal_roots(ps, mu, s0, s1, (1.0, 2.0, -x, 4.0)) for x in (-10, -7, -4, -1)}
    out = res.stdout
    tally.record(group, f"Sweep crit: thresholds on {measure} from" in out, "text threshold sweep")
    tally.record(group, f"switch points: where the Bayes action changes along {measure}" in out,
                 "text path sweep")
    # Text: each point's row lists both switch points (6 significant digits).
    group = "sweep labels: every switch point listed, at the closed form's place"
    for x, roots in want.items():
        rows = [ln for ln in out.splitlines()
                if ln.strip().startswith(f"{x} ") and ("say_no" in ln or "say_yes" in ln)]
        if not tally.record(group, len(rows) == 1, f"text row of x = {x}: {rows}"):
            continue
        cells = re.split(r"\s{2,}", rows[0].strip())
        got = [float(v) for v in cells[4].split(", ")]
        tally.record(group, len(got) == 2 and all(abs(g - r) <= 5e-6 * max(1, abs(r))
                                                  for g, r in zip(got, roots)),
                     f"text x = {x}: {cells[4]!r}, closed form {roots}")
    # CSV: the switch points at full precision; index.csv says what they lie on.
    folder_csv = os.path.join(folder, "labels")
    with open(os.path.join(folder_csv, "sweep_pen_switch_points.csv"), newline="") as f:
        rows = list(csv.DictReader(f))
    for x, roots in want.items():
        got = sorted(float(r["switch_point"]) for r in rows if float(r["x"]) == x)
        for g, r in zip(got, roots):
            tally.close_rel(group, g, r, ROOT_TOL, f"CSV x = {x}")
        tally.record(group, len(got) == 2, f"CSV x = {x}: {got}")
    with open(os.path.join(folder_csv, "index.csv"), newline="") as f:
        holds = {r["file"]: r["holds"] for r in csv.DictReader(f)}
    group = "sweep labels: the measurement named as the rule reads it"
    tally.record(group, f"the values of {measure} where" in holds["sweep_pen_switch_points.csv"],
                 "index.csv, sweep_pen_switch_points.csv")
    tally.record(group, f"every threshold x on {measure}" in holds["sweep_crit.csv"],
                 "index.csv, sweep_crit.csv")
    # Workbook: the threshold sheet's title and the path sweep's switch-point columns.
    wb = openpyxl.load_workbook(os.path.join(folder, "labels.xlsx"))
    tally.record(group, f"every threshold on {measure} from" in wb["crit"]["A1"].value,
                 f"workbook title {wb['crit']['A1'].value!r}")
    heads = [c.value for r in wb["pen"].iter_rows() for c in r
             if isinstance(c.value, str) and c.value.startswith("switch point ")]
    tally.record(group, heads[:2] == [f"switch point 1 ({measure})",
                                      f"switch point 2 ({measure})"], f"workbook heads {heads}")


def main():
    rng = np.random.default_rng(SEED)   # one stream, drawn from in this order
    checks = [functools.partial(check_thresholds, rng=rng), check_macmillan_creelman,
              functools.partial(check_designs, rng=rng),
              functools.partial(check_value_detection, rng=rng), check_value_normal,
              functools.partial(check_value_properties, rng=rng), check_count_rates,
              check_grid_rates, check_sweep_labels]
    return refkit.main("lopside_studies_", checks, tally=refkit.Tally(max_details=5))


if __name__ == "__main__":
    sys.exit(main())
