#!/usr/bin/python3
"""Outside references for lopside's continuous (grid) engine.

Each check writes a problem file to a temporary folder, runs lopside on it and compares
its JSON with a reference computed here with scipy/numpy from the problem's own numbers,
never with an earlier lopside output. The source of every reference is named beside its
check; every tolerance is derived beside it from the grid spacing.

Grid facts the tolerances rest on (s_i = from + i·h, cell i = [s_i - h/2, s_i + h/2]):
- lopside gives node i the weight w_i = L(s_i)·∫_cell π (prior cell mass times the
  likelihood at the node). By Taylor expansion ∫_cell π = h·π(s_i)·(1 + h²/24·g(s_i)
  + O(h⁴)) with g = π''/π = (log π)'' + ((log π)')².
- A node sum Σ h·f(s_i) of a smooth f that vanishes at both ends of the grid equals ∫ f
  up to terms smaller than any power of h (Euler–Maclaurin; for a gaussian of sd σ the
  error is ~exp(-2π²σ²/h²) by Poisson summation). So a posterior moment E[φ] read from
  the nodes differs from the continuous one by (h²/24)·Cov_P(g, φ) to first order, at
  most (h²/24)·sd_P(g)·sd_P(φ) (Cauchy–Schwarz). `Bounds.moment` doubles this to cover
  the O(h⁴) rest.
- The posterior CDF lopside reads is the node masses summed to cell edges and linear
  inside a cell. At an edge the node sum misses -(h²/24)·P'(edge) (midpoint rule on a
  half line) plus (h²/24)·∫ P·(g - E g); linear interpolation adds at most (h²/8)·max|P'|.
  So |CDF error| ≤ h²·(max|P'|/6 + E_P|g|/12) to first order (doubled in `Bounds.cdf`),
  and a quantile q is off by at most that over P(q).
- Without an estimate grid in the file an estimate is any real number (format.md), so a
  Bayes estimate is the continuous minimizer of the grid's expected loss, off the
  continuous model's only by the grid errors above. The posterior mode is the vertex of
  the parabola through the log masses around the largest, off by the same order.
- Rules are summed over the measurement grid of spacing Δ (node weight = predictive
  density × Δ): exact up to spectrally small terms for smooth integrands, Δ²/8 × (slope
  jump) at a kink, Δ/2 × (jump) at a discontinuity; the grid leaves ≤ 1e-6 of the
  predictive outside (format.md).

Groups: 1 normal-normal closed forms (squared loss, rule, predictive); 2 beta-binomial and
gamma-Poisson posteriors, predictive counts, Bayes risk; 3 linlin quantile; 4 LINEX;
5 two cues under a flat prior; 6 tolerance loss (mode limit, bimodal brute force);
7 absolute, quadquad, points, relative squared; 8 every prior family's cell masses and the
outside-mass warning; 9 choices with cuts and at lines, switch points; 10 threshold,
believed and estimate rules (risk, regret); 11 every response and noise family; 12 real
estimates without an estimate grid (mean, median, quantile, expected losses by quad).

Run from the repository root: LOPSIDE=build/lopside /usr/bin/python3 tests/reference/check_grid.py
Prints one line per check group and ends with `N passed, M failed`; exits 1 on failure.
The problem files of a failing run are kept and their folder is printed.
"""

import math
import sys

import numpy as np
from scipy import integrate, optimize, special, stats

sys.dont_write_bytecode = True  # no __pycache__ beside the scripts
import refkit  # noqa: E402  (the shared harness; VERBOSE=1 prints every comparison)

# Sums of a few thousand double terms, and GSL against scipy for the same special
# function, agree to ~1e-13 of the result; 1e-9 relative is the "exact up to rounding"
# tolerance of sums both sides form over the same grid (a wrong term, cell or sd moves
# them by far more).
EXACT_RTOL = 1e-9
# The format's automatic measurement grid leaves at most 1e-6 of the predictive mass
# outside (format.md), so a risk summed over it may miss 1e-6 of the largest loss.
COVERAGE_GAP = 1e-6
# Prior cell masses from CDF differences: both sides use double-precision CDFs and their
# complements; rounding leaves ~1e-16 per mass, so 1e-12 absolute is exact agreement.
PRIOR_ATOL = 1e-12
# format.md: prior mass outside the grid above 0.1% is reported as a warning.
OUTSIDE_WARN = 1e-3


# ---------------------------------------------------------------------------------------
# Problem files and runs
def num(v):
    return repr(float(v)) if not isinstance(v, int) else str(v)


def value_text(v):
    if isinstance(v, (list, tuple, np.ndarray)):
        return ", ".join(num(x) if not isinstance(x, str) else x for x in v)
    if isinstance(v, str):
        return v
    return num(v)


def ini_text(sections):
    """sections: [(name, [(key, value), ...])]; long lists continue on indented lines."""
    lines = []
    for name, entries in sections:
        lines.append(f"[{name}]")
        for key, value in entries:
            lines += refkit.continued(key, value_text(value).split(", "))
        lines.append("")
    return "\n".join(lines)


class Runner:
    def __init__(self, folder, tally):
        self.folder = folder
        self.tally = tally

    def run(self, name, sections, group):
        """Writes NAME.ini, runs lopside, returns its JSON (None after a recorded failure)."""
        try:
            return refkit.run_lopside(self.folder, name, ini_text(sections), timeout=120)
        except refkit.LopsideError as e:
            self.tally.record(group, False, str(e))
            return None


# ---------------------------------------------------------------------------------------
# Grids, priors and first-order grid-error bounds
def grid(frm, to, n):
    h = (to - frm) / (n - 1)
    return frm + h * np.arange(n), h


def cell_masses(dist, s, h):
    """Prior mass of every cell [s - h/2, s + h/2] from CDF differences (upper tail from
    the survival function, to keep precision), and the mass beyond the outer edges."""
    lo, hi = s - h / 2, s + h / 2
    med = dist.median()
    m = np.where(lo >= med, dist.sf(lo) - dist.sf(hi), dist.cdf(hi) - dist.cdf(lo))
    outside = dist.cdf(lo[0]) + dist.sf(hi[-1])
    return m, outside


def grid_posterior(logprior_mass, loglik):
    lw = logprior_mass + loglik
    return np.exp(lw - special.logsumexp(lw))


class Bounds:
    """First-order grid-error bounds (module docstring) for a continuous posterior with
    density post_pdf on [lo, hi], prior log density logprior, on cells of width h."""

    def __init__(self, h, post_pdf, logprior, lo, hi, n=40001):
        x = np.linspace(lo, hi, n)
        P = post_pdf(x)
        P = P / np.trapz(P, x)
        lp = logprior(x)
        d1 = np.gradient(lp, x)
        g = np.gradient(d1, x) + d1 ** 2
        g = np.where(P > 1e-300, g, 0.0)
        E = lambda f: float(np.trapz(f * P, x))
        self.h, self.x, self.P = h, x, P
        self.mean = E(x)
        self.sd = math.sqrt(E((x - self.mean) ** 2))
        Eg = E(g)
        self.sd_g = math.sqrt(max(E((g - Eg) ** 2), 0.0))
        self.E_abs_g = E(np.abs(g))
        self.max_dP = float(np.max(np.abs(np.gradient(P, x))))
        self.E = E

    def moment(self, phi):
        """Bound on the error of E_P[phi] read from the grid nodes."""
        mphi = self.E(phi(self.x))
        sd_phi = math.sqrt(max(self.E((phi(self.x) - mphi) ** 2), 0.0))
        return 2 * self.h ** 2 / 24 * self.sd_g * sd_phi

    def cdf(self):
        """Bound on the error of the piecewise-linear grid CDF."""
        return 2 * self.h ** 2 * (self.max_dP / 6 + self.E_abs_g / 12)

    def quantile(self, q_value):
        """Bound on the error of a quantile at q_value (the CDF bound over the density)."""
        return self.cdf() / float(np.interp(q_value, self.x, self.P))


def rel_tol(value, rtol=EXACT_RTOL, scale=1.0):
    return rtol * max(abs(value), scale)


# ---------------------------------------------------------------------------------------
# 1. Normal prior, gaussian noise, n repeats: the conjugate normal model (Gelman et al.,
#    Bayesian Data Analysis, ch. 2): posterior precision 1/τ² + n/σ², mean weighted by
#    precisions; predictive x̄ ~ N(μ, τ² + σ²/n); squared loss: Bayes estimate = posterior
#    mean, its expected loss = posterior variance, the same for every measurement.
#    The estimates are the points of the estimate grid (format.md), so the Bayes estimate
#    is the grid point nearest the mean and its expected loss v + (e - m)².
NORMAL = dict(mu=700.0, tau=60.0, sigma=80.0, obs=[652.0, 731.0, 618.0, 689.0],
              frm=60.0, to=1340.0, n=2561)    # μ ± 10.7 τ, h = 0.5 ms


def normal_model(c=NORMAL, xbar=None):
    n = len(c["obs"])
    xbar = np.mean(c["obs"]) if xbar is None else xbar
    prec = 1 / c["tau"] ** 2 + n / c["sigma"] ** 2
    v = 1 / prec
    m = v * (c["mu"] / c["tau"] ** 2 + n * xbar / c["sigma"] ** 2)
    return m, v


def normal_sections(loss, c=NORMAL, rules=(), title="Interval reproduction, normal prior"):
    return [("problem", [("title", title), ("unit", "ms")]),
            ("states", [("from", c["frm"]), ("to", c["to"]), ("points", c["n"])]),
            ("prior", [("family", "normal"), ("mean", c["mu"]), ("sd", c["tau"])]),
            ("evidence.clock", [("noise", "gaussian"), ("sd", c["sigma"]),
                                ("repeats", len(c["obs"])), ("observed", c["obs"])]),
            ("actions", [("estimate", "yes")]),
            ("loss", loss)] + list(rules)


def normal_bounds(c=NORMAL):
    m, v = normal_model(c)
    s, h = grid(c["frm"], c["to"], c["n"])
    post = stats.norm(m, math.sqrt(v))
    return Bounds(h, post.pdf, stats.norm(c["mu"], c["tau"]).logpdf,
                  m - 12 * math.sqrt(v), m + 12 * math.sqrt(v)), post, h


def normal_tols(m, v, h, c=NORMAL):
    """Grid errors of the posterior mean and variance for a normal prior, in closed form:
    g = ((s-μ)² - τ²)/τ⁴, Cov_P(g, s) = 2v(m-μ)/τ⁴, Cov_P(g, (s-m)²) = 2v²/τ⁴ (normal
    posterior); each first-order term (h²/24)·Cov doubled, plus h⁴/τ³ (resp. h⁴/τ²) for the
    next order and 1e-12 relative for rounding."""
    tau = c["tau"]
    tm = 2 * h ** 2 / 24 * 2 * v * abs(m - c["mu"]) / tau ** 4 + h ** 4 / tau ** 3 + 1e-12 * abs(m)
    tv = 2 * h ** 2 / 24 * 2 * v ** 2 / tau ** 4 + h ** 4 / tau ** 2 + 1e-12 * v
    return tm, tv


def nearest_node(s, x):
    """Index of the grid point nearest x."""
    i = int(np.clip(np.round((x - s[0]) / (s[1] - s[0])), 0, len(s) - 1))
    return i


def grid_choice_error(what, e, target, s, tol):
    """None when the estimate e is target within tol (target is known to within tol); else
    what is wrong. Without an estimate grid in the file the estimate is any real number
    (format.md), so it is the continuous minimizer itself, not a grid point near it."""
    if abs(e - target) <= tol:
        return None
    return f"{what}: got {e!r}, expected {target!r} (±{tol:.3g})"


def check_grid_choice(tally, G, what, e, target, s, tol):
    why = grid_choice_error(what, e, target, s, tol)
    tally.record(G, why is None, why)


def check_normal(runner, tally):
    G = "1 normal prior, gaussian noise, squared loss (Gelman et al. ch. 2)"
    d = runner.run("normal_squared", normal_sections([("curve", "squared")]), G)
    if d is None:
        return
    c = NORMAL
    m, v = normal_model(c)
    b, post, h = normal_bounds()
    s, _ = grid(c["frm"], c["to"], c["n"])
    tally.close(G, "grid points (max deviation)",
                np.max(np.abs(np.array(d["problem"]["states"]["grid"]) - s)), 0, 1e-12 * c["to"])
    p = d["case"]["posterior"]
    tol_m, tol_v = normal_tols(m, v, h)
    # The generic bound (module docstring) must cover the closed-form one.
    tally.record(G, b.moment(lambda x: x) >= 0.99 * (tol_m - h ** 4 / c["tau"] ** 3 - 1e-12 * m),
                 "Bounds.moment below the closed-form first-order term")
    tally.close(G, "posterior mean", p["mean"], m, tol_m)
    # sd from the variance: δsd = δvar / (2 sd).
    tally.close(G, "posterior sd", p["sd"], math.sqrt(v), tol_v / (2 * math.sqrt(v)))
    for key, q in (("median", 0.5), ("q05", 0.05), ("q95", 0.95)):
        x = post.ppf(q)
        tally.close(G, f"posterior {key}", p[key], x, b.quantile(x))
    # The mode: the grid point with most mass, the node nearest the (symmetric) mode m.
    check_grid_choice(tally, G, "posterior mode", p["mode"], m, s, tol_m)
    e = d["case"]["bayes_estimate"]
    check_grid_choice(tally, G, "Bayes estimate = grid point nearest the posterior mean", e, m,
                      s, tol_m)
    # E[(e - s)²] = v + (e - m)²: errors tol_v and 2|e - m|·tol_m.
    tally.close(G, "expected loss = v + (e - m)²", d["case"]["expected_loss"], v + (e - m) ** 2,
                tol_v + 2 * abs(e - m) * tol_m + tol_m ** 2)
    r = d["rule"]
    xs = np.array(r["grid"]["x"])
    est = np.array(r["grid"]["estimate"][0])
    el = np.array(r["grid"]["expected_loss"])
    # The grid must hold every posterior whole: means m(x) at least 8 sd inside it.
    mx = np.array([normal_model(c, x)[0] for x in xs])
    tally.record(G, mx.min() - c["frm"] > 8 * math.sqrt(v) and c["to"] - mx.max() > 8 * math.sqrt(v),
                 f"test set-up: posterior means {mx.min()}..{mx.max()} too near the grid edge")
    worst_l, wrong = 0.0, []
    for k in range(len(xs)):
        tm, tv = normal_tols(mx[k], v, h)
        why = grid_choice_error(f"rule: estimate at x = {xs[k]}", est[k], mx[k], s, tm)
        if why:
            wrong.append(why)
        want = v + (est[k] - mx[k]) ** 2
        worst_l = max(worst_l, abs(el[k] - want) / (tv + 2 * abs(est[k] - mx[k]) * tm + tm ** 2))
    tally.record(G, not wrong, f"{len(wrong)} of {len(xs)} points: " + "; ".join(wrong[:3]))
    tally.close(G, "rule: expected loss v + (e - m(x))² at every point (deviation / tolerance)",
                worst_l, 0, 1.0)
    # Predictive density times the spacing Δ (Gelman ch. 2). Each node's weight is
    # Σ_i L(x|s_i)·∫_cell π, a midpoint rule in s with relative error (h²/24)·E[(πL)''/(πL)
    # - π''/π] over the posterior: at most (h²/24)·(1 + z²)/sd_L² with z ≤ 8 the likelihood
    # z-score of the grid's outermost points; h²·65/(24 sd_L²) < 3h²/sd_L².
    n = len(c["obs"])
    sd_l = c["sigma"] / math.sqrt(n)
    ptol = 3 * h ** 2 / sd_l ** 2
    pred = stats.norm(c["mu"], math.sqrt(c["tau"] ** 2 + sd_l ** 2))
    dx = xs[1] - xs[0]
    prob = np.array(r["grid"]["probability"])
    want = pred.pdf(xs) * dx
    tally.close(G, "rule: probability = predictive density × Δ (max relative deviation)",
                np.max(np.abs(prob - want) / want), 0, ptol)
    # Σ pred.pdf·Δ over the grid: the predictive mass it holds (midpoint rule of a
    # gaussian: spectrally exact) is at least 1 - 1e-6 (format.md).
    tally.close(G, "rule: coverage (1 - 1e-6 of the predictive mass, format.md)",
                min(r["coverage"], 1.0), 1.0, COVERAGE_GAP + ptol)
    # Bayes risk: the rule's own estimates judged by the closed form,
    # Σ pred.pdf(x)·Δ·(v + (e(x) - m(x))²); and v ≤ risk ≤ v + h²/4 (nearest point).
    ref = float(np.sum(want * (v + (est - mx) ** 2)))
    tally.close(G, "rule: Bayes risk = Σ predictive·Δ·(v + (e - m(x))²)", r["bayes_risk"], ref,
                ref * ptol + tol_v)
    tally.record(G, v * (1 - COVERAGE_GAP - ptol) - tol_v <= r["bayes_risk"] <= v + h ** 2 / 4 + tol_v,
                 f"rule: Bayes risk {r['bayes_risk']} outside [v, v + h²/4] = [{v}, {v + h * h / 4}]")
    # Deciding on the prior alone: the grid point nearest the prior mean (μ is a grid point
    # here), risk the prior variance; the discrete prior puts each cell's mass on its node,
    # which adds h²/12 (Sheppard's correction; exact up to spectrally small terms).
    tally.close(G, "prior-only risk = prior variance + h²/12", r["prior_only_risk"],
                c["tau"] ** 2 + h ** 2 / 12, 1e-3 * h ** 2 + rel_tol(c["tau"] ** 2, 1e-12))


# ---------------------------------------------------------------------------------------
# 2. Conjugate count models (Gelman et al., Bayesian Data Analysis, ch. 2):
#    Beta(α, β) prior, binomial counts k_j of T trials: posterior Beta(α + Σk, β + nT - Σk),
#    predictive of the sum beta-binomial(nT, α, β);
#    Gamma(a, scale θ) prior, Poisson counts in a window w: posterior
#    Gamma(a + Σk, scale 1/(1/θ + n·w)), predictive of the sum negative binomial
#    (a, 1/(1 + θ·n·w)); the posterior variance averaged over it is a·θ²/(1 + θ·n·w).
BETA = dict(alpha=2.0, beta=3.0, trials=20, obs=[12, 15, 9], h=0.0005)
# The gamma prior leaves 4.5e-11 beyond the grid's top (60). Counts are tabulated 0..360:
# the predictive leaves < 1e-7 beyond, and the posterior of K = 360 (mean 42.7, sd 2.2)
# ends 7 sd inside the grid, so no posterior of the rule is cut by the grid's edge.
GAMMA = dict(shape=3.0, scale=2.0, window=2.0, obs=[9, 14, 11, 7], h=0.02, to=59.99, k_max=360)


def beta_sections(loss, c=BETA):
    n = int(round(1 / c["h"]))
    return [("problem", [("title", "Detection probability at one contrast")]),
            ("states", [("from", c["h"] / 2), ("to", 1 - c["h"] / 2), ("points", n)]),
            ("prior", [("family", "beta"), ("alpha", c["alpha"]), ("beta", c["beta"])]),
            ("evidence.block", [("noise", "binomial"), ("trials", c["trials"]),
                                ("repeats", len(c["obs"])), ("observed", c["obs"])]),
            ("actions", [("estimate", "yes")]),
            ("loss", loss)]


def beta_posterior(c=BETA):
    k, nt = sum(c["obs"]), c["trials"] * len(c["obs"])
    return stats.beta(c["alpha"] + k, c["beta"] + nt - k)


def gamma_sections(loss, c=GAMMA, extra_actions=()):
    n = int(round((c["to"] - c["h"] / 2) / c["h"])) + 1
    return [("problem", [("title", "Lick rate after a cue"), ("unit", "licks/s")]),
            ("states", [("from", c["h"] / 2), ("to", c["to"]), ("points", n)]),
            ("prior", [("family", "gamma"), ("shape", c["shape"]), ("scale", c["scale"])]),
            ("evidence.port", [("noise", "poisson"), ("window", c["window"]),
                               ("repeats", len(c["obs"])), ("observed", c["obs"]),
                               ("grid_from", 0), ("grid_to", c["k_max"])]),
            ("actions", [("estimate", "yes")] + list(extra_actions)),
            ("loss", loss)]


def gamma_posterior(k_sum, c=GAMMA):
    """(shape, scale) of the posterior given the summed count."""
    return c["shape"] + k_sum, 1 / (1 / c["scale"] + len(c["obs"]) * c["window"])


def gamma_bounds(k_sum, h, c=GAMMA, n=40001):
    a, th = gamma_posterior(k_sum, c)
    post = stats.gamma(a, scale=th)
    prior = stats.gamma(c["shape"], scale=c["scale"])
    return Bounds(h, post.pdf, prior.logpdf, max(post.ppf(1e-12), h / 4), post.isf(1e-12), n), post


def midpoint_rel(h, logprior, loglik, lo, hi, n=8001):
    """Relative error bound of Σ_i L(s_i)·∫_cell π against ∫ π·L (the predictive weight of
    one measurement): per cell (h²/24)·(2(log π)'(log L)' + L''/L), averaged over the
    posterior; E|.| doubled."""
    x = np.linspace(lo, hi, n)
    lp, ll = logprior(x), loglik(x)
    w = np.exp(lp + ll - np.max(lp + ll))
    w /= np.trapz(w, x)
    dp, dl = np.gradient(lp, x), np.gradient(ll, x)
    term = 2 * dp * dl + np.gradient(dl, x) + dl ** 2
    return 2 * h ** 2 / 24 * float(np.trapz(np.abs(term) * w, x))


def check_conjugate_counts(runner, tally):
    G = "2 beta-binomial and gamma-Poisson posteriors (Gelman et al. ch. 2)"
    # Beta-binomial, absolute loss (the Bayes estimate is checked in group 7).
    d = runner.run("beta_binomial", beta_sections([("curve", "absolute")]), G)
    if d is not None:
        c = BETA
        post = beta_posterior()
        b = Bounds(c["h"], post.pdf, stats.beta(c["alpha"], c["beta"]).logpdf,
                   post.ppf(1e-12), post.isf(1e-12))
        p = d["case"]["posterior"]
        tally.close(G, "beta: posterior mean", p["mean"], post.mean(),
                    b.moment(lambda x: x) + 1e-12)
        tally.close(G, "beta: posterior sd", p["sd"], post.std(),
                    b.moment(lambda x: (x - post.mean()) ** 2) / (2 * post.std()) + 1e-12)
        for key, q in (("median", 0.5), ("q05", 0.05), ("q95", 0.95)):
            x = post.ppf(q)
            tally.close(G, f"beta: posterior {key}", p[key], x, b.quantile(x))
        # The rule runs over the summed count 0..nT; P(k) is beta-binomial. Each weight is
        # a midpoint rule in s (function midpoint_rel); the cells tile [0, 1] exactly.
        r = d["rule"]
        nt = c["trials"] * len(c["obs"])
        ks = np.array(r["grid"]["x"])
        tally.record(G, list(ks) == list(range(nt + 1)),
                     f"beta: rule counts {ks[:3]}..{ks[-3:]}, expected 0..{nt}")
        prob = np.array(r["grid"]["probability"])
        bad = []
        prior = stats.beta(c["alpha"], c["beta"])
        for k, pk in zip(ks, prob):
            want = stats.betabinom(nt, c["alpha"], c["beta"]).pmf(k)
            pb = stats.beta(c["alpha"] + k, c["beta"] + nt - k)
            tol = midpoint_rel(c["h"], prior.logpdf,
                               lambda s: stats.binom.logpmf(k, nt, s),
                               max(pb.ppf(1e-12), 1e-9), min(pb.isf(1e-12), 1 - 1e-9)) * want
            if not abs(pk - want) <= tol + 1e-15:
                bad.append(f"k={k}: {pk!r} vs {want!r} (tol {tol:.3g})")
        tally.record(G, not bad, "beta: rule probability vs beta-binomial: " + "; ".join(bad[:4]))

    # Gamma-Poisson, squared loss.
    d = runner.run("gamma_poisson", gamma_sections([("curve", "squared")]), G)
    if d is None:
        return
    c = GAMMA
    h = c["h"]
    s, _ = grid(h / 2, c["to"], int(round((c["to"] - h / 2) / h)) + 1)
    ksum = sum(c["obs"])
    b, post = gamma_bounds(ksum, h)
    p = d["case"]["posterior"]
    m, v = post.mean(), post.var()
    tm, tv = b.moment(lambda x: x) + 1e-12 * m, b.moment(lambda x: (x - m) ** 2) + 1e-12 * v
    tally.close(G, "gamma: posterior mean", p["mean"], m, tm)
    tally.close(G, "gamma: posterior sd", p["sd"], math.sqrt(v), tv / (2 * math.sqrt(v)))
    for key, q in (("median", 0.5), ("q05", 0.05), ("q95", 0.95)):
        x = post.ppf(q)
        tally.close(G, f"gamma: posterior {key}", p[key], x, b.quantile(x))
    # Rule over the summed count: P(K) negative binomial; the squared-loss estimate is the
    # grid point nearest the posterior mean of each count.
    r = d["rule"]
    ks = np.array(r["grid"]["x"])
    prob = np.array(r["grid"]["probability"])
    est = np.array(r["grid"]["estimate"][0])
    el = np.array(r["grid"]["expected_loss"])
    nw = len(c["obs"]) * c["window"]
    nb = stats.nbinom(c["shape"], 1 / (1 + c["scale"] * nw))
    tally.record(G, list(ks) == list(range(c["k_max"] + 1)),
                 f"gamma: rule counts {ks[0]}..{ks[-1]}, expected 0..{c['k_max']} (grid_from, grid_to)")
    prior = stats.gamma(c["shape"], scale=c["scale"])
    out = prior.sf(s[-1] + h / 2)     # renormalizing the prior scales every P(K) by 1/(1 - out)
    bad_p, bad_e, worst, ref_risk, risk_tol = [], [], 0.0, 0.0, 0.0
    for k, pk, e, l in zip(ks, prob, est, el):
        a_k, th_k = gamma_posterior(k)
        pg = stats.gamma(a_k, scale=th_k)
        want = nb.pmf(k)
        tol = midpoint_rel(h, prior.logpdf, lambda x: stats.poisson.logpmf(k, nw * x),
                           max(pg.ppf(1e-12), h / 4), pg.isf(1e-12)) * want + 2 * out * want
        if not abs(pk - want) <= tol + 1e-15:
            bad_p.append(f"K={k}: {pk!r} vs {want!r} (tol {tol:.3g})")
        bk, _ = gamma_bounds(k, h, n=8001)
        mk, vk = a_k * th_k, a_k * th_k ** 2
        tmk, tvk = bk.moment(lambda x: x) + 1e-12 * mk, bk.moment(lambda x: (x - mk) ** 2) + 1e-12 * vk
        why = grid_choice_error(f"gamma: rule estimate at K={k}", e, mk, s, tmk)
        if why:
            bad_e.append(why)
        lt = tvk + 2 * abs(e - mk) * tmk + tmk ** 2
        worst = max(worst, abs(l - (vk + (e - mk) ** 2)) / lt)
        ref_risk += want * (vk + (e - mk) ** 2)
        risk_tol += tol * (vk + (e - mk) ** 2) + want * lt
    # Counts beyond k_max: predictive mass nb.sf(k_max) at posterior variances up to about
    # (a + K)θ'² for K a few times k_max; 10 × the last variance bounds their share.
    a_k, th_k = gamma_posterior(c["k_max"])
    risk_tol += nb.sf(c["k_max"]) * 10 * a_k * th_k ** 2
    tally.record(G, not bad_p, "gamma: rule probability vs negative binomial: " + "; ".join(bad_p[:4]))
    tally.record(G, not bad_e, f"{len(bad_e)} counts: " + "; ".join(bad_e[:3]))
    tally.close(G, "gamma: rule expected loss v_K + (e - m_K)² (deviation / tolerance)", worst, 0, 1)
    tally.close(G, "gamma: Bayes risk = Σ_K P(K)·(v_K + (e_K - m_K)²)", r["bayes_risk"], ref_risk,
                risk_tol)
    # The closed form a·θ²/(1 + θ·n·w), plus between 0 and h²/4 for the grid point.
    closed = c["shape"] * c["scale"] ** 2 / (1 + c["scale"] * nw)
    tally.record(G, closed - risk_tol <= r["bayes_risk"] <= closed + h * h / 4 + risk_tol,
                 f"gamma: Bayes risk {r['bayes_risk']!r} outside [aθ²/(1+θnw), + h²/4] = [{closed!r}, +{h * h / 4}]")


# ---------------------------------------------------------------------------------------
# 3. linlin loss: the Bayes estimate is the posterior quantile under/(under + over)
#    (Raiffa & Schlaifer 1961; Berger 1985, sec. 2.4). On point masses the expected loss is
#    linear between grid points, so the best estimate is the grid point whose cell holds
#    the grid CDF's quantile: the point nearest norm.ppf(q) unless that lies within the
#    quantile bound of a cell edge. Its expected loss under N(m, sd):
#    over·E(e - s)+ + under·E(s - e)+ with E(e - s)+ = (e - m)Φ(z) + sd·φ(z), z = (e - m)/sd.
#    Grid error of that expectation: the kink of the loss sits on a grid point, whose cell
#    the point masses count at loss 0 instead of ∫_cell (slope·|s - e|)·P ≈
#    (under + over)/2·P(e)·h²/4; the midpoint terms of the smooth stretches beside it add
#    (h²/24)·(under + over)·P(e). Together below (under + over)·P(e)·h²/4, doubled:
#    (under + over)·P(e)·h²/2; plus the moment bound (module docstring) of the loss itself.
def linlin_reference(e, m, sd, under, over):
    z = (e - m) / sd
    below = (e - m) * stats.norm.cdf(z) + sd * stats.norm.pdf(z)
    above = (m - e) * stats.norm.sf(z) + sd * stats.norm.pdf(z)
    return over * below + under * above


def check_linlin(runner, tally):
    G = "3 linlin: Bayes estimate = posterior quantile (Raiffa & Schlaifer; Berger 2.4)"
    c = NORMAL
    m, v = normal_model(c)
    sd = math.sqrt(v)
    b, post, h = normal_bounds()
    s, _ = grid(c["frm"], c["to"], c["n"])
    for under, over in ((1.0, 3.0), (4.0, 1.0), (0.02, 0.05)):
        d = runner.run(f"linlin_{under}_{over}",
                       normal_sections([("curve", "linlin"), ("under", under), ("over", over)]), G)
        if d is None:
            continue
        q = under / (under + over)
        x = post.ppf(q)
        e = d["case"]["bayes_estimate"]
        check_grid_choice(tally, G, f"under {under}, over {over}: estimate vs quantile {q:.4g}",
                          e, x, s, b.quantile(x))
        want = linlin_reference(e, m, sd, under, over)
        tol = (under + over) * post.pdf(e) * h ** 2 / 2 + \
            b.moment(lambda t: over * np.maximum(e - t, 0) + under * np.maximum(t - e, 0))
        tally.close(G, f"under {under}, over {over}: expected loss", d["case"]["expected_loss"],
                    want, tol + 1e-12 * want)
        # At the exact quantile the minimum is (under + over)·sd·φ(Φ⁻¹(q)) (newsvendor
        # form); the grid point is at most h/2 away, where the loss is higher by at most
        # ½(under + over)·P·(h/2)².
        best = (under + over) * sd * stats.norm.pdf(stats.norm.ppf(q))
        tally.close(G, f"under {under}, over {over}: minimum (under+over)·sd·φ(Φ⁻¹(q))",
                    d["case"]["expected_loss"], best + (under + over) * post.pdf(x) * h ** 2 / 16,
                    tol + (under + over) * post.pdf(x) * h ** 2 / 16 + 1e-12 * best)


# ---------------------------------------------------------------------------------------
# 4. LINEX loss scale·(exp(a·e) - a·e - 1) under a normal posterior: the Bayes estimate is
#    m - a·v/2 (Zellner 1986) and its expected loss scale·a²·v/2. For any estimate e,
#    E = scale·(exp(a(e - m) + a²v/2) - a(e - m) - 1) (the normal MGF). The loss is
#    convex and near-quadratic at its minimum, so the best grid point is the nearest one.
#    Grid error of the minimizer: e* = -(1/a)·log E[exp(-a·s)], off by (1/|a|)·(moment
#    bound of exp(-a·s))/E[exp(-a·s)].
def check_linex(runner, tally):
    G = "4 LINEX: estimate = mean - a·variance/2 (Zellner 1986)"
    c = NORMAL
    m, v = normal_model(c)
    b, post, h = normal_bounds()
    s, _ = grid(c["frm"], c["to"], c["n"])
    for a, scale in ((0.02, 1.5), (-0.05, 1.0)):
        d = runner.run(f"linex_{a}", normal_sections([("curve", "linex"), ("a", a),
                                                     ("scale", scale)]), G)
        if d is None:
            continue
        target = m - a * v / 2
        mgf = math.exp(-a * m + a * a * v / 2)
        te = b.moment(lambda t: np.exp(-a * (t - m))) * math.exp(-a * m) / mgf / abs(a)
        e = d["case"]["bayes_estimate"]
        check_grid_choice(tally, G, f"a = {a}: estimate vs m - a·v/2", e, target, s, te)
        want = scale * (math.exp(a * (e - m) + a * a * v / 2) - a * (e - m) - 1)
        tol = scale * (b.moment(lambda t: np.exp(a * (e - t))) + abs(a) * normal_tols(m, v, h)[0])
        tally.close(G, f"a = {a}: expected loss (normal MGF)", d["case"]["expected_loss"], want,
                    tol + 1e-12 * want)
        # The minimum scale·a²·v/2, plus ½·scale·a²·(e - e*)² for the grid point.
        tally.close(G, f"a = {a}: minimum scale·a²·v/2", d["case"]["expected_loss"],
                    scale * a * a * v / 2, tol + scale * a * a * (h / 2 + te) ** 2 / 2 * 1.01)


# ---------------------------------------------------------------------------------------
# 5. Two gaussian cues, flat prior: the posterior is normal with the inverse-variance
#    weighted mean and sd (1/σ1² + 1/σ2²)^(-1/2) (cue combination, e.g. Ernst & Banks
#    2002). A flat prior makes g = 0, so node sums of the gaussian posterior are exact up
#    to exp(-2π²·sd²/h²) (Poisson summation; here sd/h > 50, so below 1e-300) and rounding:
#    1e-11 of the grid's scale. Quantiles still carry the CDF reading error.
def check_two_cues(runner, tally):
    G = "5 two gaussian cues, flat prior (Ernst & Banks 2002)"
    s1, obs1, s2, obs2 = 4.0, [3.2, 2.0], 6.0, [-1.5]
    frm, to, n = -60.0, 60.0, 2401
    sections = [("problem", [("title", "Pointing with sight and touch"), ("unit", "mm")]),
                ("states", [("from", frm), ("to", to), ("points", n)]),
                ("prior", [("family", "uniform")]),
                ("evidence.vision", [("noise", "gaussian"), ("sd", s1), ("repeats", 2),
                                     ("observed", obs1)]),
                ("evidence.touch", [("noise", "gaussian"), ("sd", s2), ("observed", obs2)]),
                ("actions", [("estimate", "yes")]),
                ("loss", [("curve", "squared")])]
    d = runner.run("two_cues", sections, G)
    if d is None:
        return
    w1, w2 = len(obs1) / s1 ** 2, len(obs2) / s2 ** 2
    m = (w1 * np.mean(obs1) + w2 * np.mean(obs2)) / (w1 + w2)
    sd = (w1 + w2) ** -0.5
    s, h = grid(frm, to, n)
    tally.record(G, min(m - frm, to - m) > 15 * sd and sd / h > 50, "test set-up: grid too narrow or coarse")
    post = stats.norm(m, sd)
    b = Bounds(h, post.pdf, lambda x: np.zeros_like(x), m - 12 * sd, m + 12 * sd)
    p = d["case"]["posterior"]
    tally.close(G, "posterior mean (inverse-variance weights)", p["mean"], m, 1e-11 * to)
    tally.close(G, "posterior sd (1/σ1² + 1/σ2²)^(-1/2)", p["sd"], sd, 1e-11 * to)
    for key, q in (("median", 0.5), ("q05", 0.05), ("q95", 0.95)):
        x = post.ppf(q)
        tally.close(G, f"posterior {key}", p[key], x, b.quantile(x) + 1e-11 * to)
    check_grid_choice(tally, G, "Bayes estimate", d["case"]["bayes_estimate"], m, s, 1e-11 * to)
    tally.record(G, d["rule"]["computed"] is False,
                 "rule computed for two numeric channels (README: not tabulated)")


# ---------------------------------------------------------------------------------------
# 6. Tolerance loss (0 inside |e| ≤ w, 1 outside): the Bayes estimate is the center of the
#    window of width 2w with most posterior mass; as w shrinks it tends to the posterior
#    mode. For the gamma posterior of group 2 (shape a', scale θ', mode c = (a'-1)θ') the
#    center solves f(e - w) = f(e + w): (a'-1)·log((e+w)/(e-w)) = 2w/θ', so
#    e_w = w·coth(w/c) (own derivation), e_w - c ≈ w²/(3c).
#    With w = (k + ½)·h the window holds exactly 2k + 1 grid points, and its point mass is
#    the grid CDF difference over [e - w, e + w]: off by at most 2·ε (ε: the CDF bound).
#    Near e_w the window mass M(e) = M* - ½κ(e - e_w)², κ = |P'(e_w + w) - P'(e_w - w)|,
#    so the chosen grid point satisfies ½κ(e - e_w)² ≤ ½κ(h/2)² + 4ε:
#    |e - e_w| ≤ sqrt((h/2)² + 8ε/κ).
#    A bimodal posterior (mixture prior of two normals) is checked point by point against a
#    brute force over the estimate grid (numpy) with the posterior of case.posterior_grid.
def check_tolerance(runner, tally):
    G = "6 tolerance loss: window center, mode limit, bimodal brute force"
    c = GAMMA
    h = c["h"]
    ksum = sum(c["obs"])
    b, post = gamma_bounds(ksum, h)
    a_, th_ = gamma_posterior(ksum)
    mode = (a_ - 1) * th_
    s, _ = grid(h / 2, c["to"], int(round((c["to"] - h / 2) / h)) + 1)
    dpdf = lambda x: (post.pdf(x + 1e-6) - post.pdf(x - 1e-6)) / 2e-6
    dists = []
    for k in (150, 80, 40, 20, 10):
        w = (k + 0.5) * h
        d = runner.run(f"tolerance_{k}", gamma_sections([("curve", "tolerance"), ("half_width", w),
                                                         ("outside", 1)]), G)
        if d is None:
            return
        e = d["case"]["bayes_estimate"]
        ew = w / math.tanh(w / mode)
        kappa = abs(dpdf(ew + w) - dpdf(ew - w))
        tol = math.sqrt((h / 2) ** 2 + 8 * b.cdf() / kappa)
        tally.close(G, f"w = {w:.4g}: estimate vs w·coth(w/mode) = {ew:.6g}", e, ew, tol)
        # Expected loss = 1 - P(|e - s| ≤ w) from scipy's gamma CDF, within 2ε.
        tally.close(G, f"w = {w:.4g}: expected loss 1 - P(window)", d["case"]["expected_loss"],
                    1 - (post.cdf(e + w) - post.cdf(e - w)), 2 * b.cdf() + 1e-12)
        dists.append((w, abs(e - mode), ew - mode + tol))
    for (w1, d1, _), (w2, d2, t2) in zip(dists, dists[1:]):
        if d2 > h:   # both distances well resolved by the grid: they must shrink with w
            tally.record(G, d2 < d1, f"|e - mode| grew from {d1} (w = {w1}) to {d2} (w = {w2})")
    w, dist, bound = dists[-1]
    tally.close(G, f"w = {w:.4g}: |e - mode| ≤ (e_w - mode) + tolerance (the limit)", dist, 0, bound)

    # Bimodal: mixture of N(-10, 3) and N(10, 3), gaussian noise sd 6, observed 1.5; a
    # payoff of 10 inside |e| ≤ 2.5625 on an estimate grid of its own (-20..20, 161 points).
    # The band counts the part of each cell it covers (each state's mass spread evenly
    # over its cell, the cells meeting halfway between states and ending at the grid's
    # ends): brute force over cells and estimates with numpy.
    sections = [("problem", [("title", "Pointing at one of two targets"), ("unit", "mm")]),
                ("states", [("from", -40), ("to", 40), ("points", 801)]),
                ("prior", [("family", "mixture"), ("parts", "left, right")]),
                ("prior.left", [("weight", 1), ("family", "normal"), ("mean", -10), ("sd", 3)]),
                ("prior.right", [("weight", 1), ("family", "normal"), ("mean", 10), ("sd", 3)]),
                ("evidence.vision", [("noise", "gaussian"), ("sd", 6), ("observed", 1.5)]),
                ("actions", [("estimate", "yes"), ("from", -20), ("to", 20), ("points", 161)]),
                ("payoff", [("curve", "tolerance"), ("half_width", 2.5625), ("inside", 10),
                            ("outside", 0)])]
    d = runner.run("tolerance_bimodal", sections, G)
    if d is None:
        return
    s = np.array(d["problem"]["states"]["grid"])
    pg = np.array(d["case"]["posterior_grid"])
    est = np.linspace(-20, 20, 161)
    edges = np.concatenate(([s[0]], (s[:-1] + s[1:]) / 2, [s[-1]]))
    lo, hi = edges[:-1][None, :], edges[1:][None, :]
    cover = np.clip(np.minimum(hi, est[:, None] + 2.5625) - np.maximum(lo, est[:, None] - 2.5625),
                    0, None) / (hi - lo)
    el = -(10 * cover) @ pg                          # losses: minus the payoff
    got = np.array(d["case"]["curve"]["expected_loss"])
    tally.close(G, "bimodal: estimate grid", np.max(np.abs(np.array(d["case"]["curve"]["estimate"]) - est)),
                0, 1e-12 * 20)
    # Sums of at most 801 products of probabilities with 10: rounding ~1e-15; 1e-12 of
    # the scale 10 leaves room for prefix-sum differences.
    tally.close(G, "bimodal: expected loss of every estimate (brute force)",
                np.max(np.abs(got - el)), 0, 1e-11)
    e = d["case"]["bayes_estimate"]
    j = int(np.argmin(np.abs(est - e)))
    tally.close(G, "bimodal: Bayes estimate has the least brute-force expected loss",
                el[j], el.min(), 1e-11)
    # The two modes: the estimate is near the heavier right one (posterior component means
    # ±8 + 0.3; weights ∝ N(1.5; ±10, √45)).
    tally.record(G, 5 < e < 11, f"bimodal: estimate {e} not near the heavier mode 8.3")
    tally.close(G, "bimodal: expected payoff", d["case"]["expected_payoff"], -el.min(), 1e-11)


# ---------------------------------------------------------------------------------------
# 7. Other curves. absolute: the posterior median (Berger 1985, sec. 2.4), checked on the
#    skewed beta posterior of group 2 like the quantile of group 3. quadquad: no closed form;
#    scipy.optimize.minimize_scalar on the discrete posterior of case.posterior_grid.
#    points: brute force over the estimate grid. relative squared: minimizing
#    Σ p·((e - s)/s)² gives Σ p·(e - s)/s² = 0, so e = Σ(p/s) / Σ(p/s²); for a gamma
#    posterior (shape a', scale θ') E[1/s] = 1/(θ'(a'-1)), E[1/s²] = 1/(θ'²(a'-1)(a'-2)),
#    so e = θ'(a' - 2) with minimum 1 - E[1/s]²/E[1/s²] = 1/(a' - 1) (own derivation).
def check_other_curves(runner, tally):
    G = "7 absolute, quadquad, points and relative squared"
    # absolute on the beta posterior
    d = runner.run("absolute_beta", beta_sections([("curve", "absolute")]), G)
    if d is not None:
        c = BETA
        post = beta_posterior()
        b = Bounds(c["h"], post.pdf, stats.beta(c["alpha"], c["beta"]).logpdf,
                   post.ppf(1e-12), post.isf(1e-12))
        s, _ = grid(c["h"] / 2, 1 - c["h"] / 2, int(round(1 / c["h"])))
        x = post.median()
        check_grid_choice(tally, G, "absolute: estimate = posterior median", d["case"]["bayes_estimate"],
                          x, s, b.quantile(x))
    # quadquad on the normal posterior
    c = NORMAL
    s, h = grid(c["frm"], c["to"], c["n"])
    for under, over in ((1.0, 4.0), (3.0, 0.5)):
        d = runner.run(f"quadquad_{under}_{over}",
                       normal_sections([("curve", "quadquad"), ("under", under), ("over", over)]), G)
        if d is None:
            continue
        p = np.array(d["case"]["posterior_grid"])
        f = lambda e: float(np.sum(p * np.where(e < s, under, over) * (e - s) ** 2))
        m, v = normal_model(c)
        res = optimize.minimize_scalar(f, bounds=(m - 5 * math.sqrt(v), m + 5 * math.sqrt(v)),
                                       method="bounded", options={"xatol": 1e-9})
        # Without an estimate grid the estimate is the minimizer itself; minimize_scalar
        # locates it only to ~sqrt(eps) of the curvature scale (sd), so 1e-7·sd.
        e = d["case"]["bayes_estimate"]
        tol = 1e-7 * math.sqrt(v)
        tally.record(G, abs(e - res.x) <= tol, f"quadquad {under}/{over}: estimate {e!r}, "
                                               f"expected {res.x!r} (±{tol:.3g})")
        tally.close(G, f"quadquad {under}/{over}: expected loss (numpy sum)",
                    d["case"]["expected_loss"], f(e), 1e-9 * f(e))
        curve = np.array(d["case"]["curve"]["expected_loss"])
        direct = np.array([f(x) for x in s])
        tally.close(G, f"quadquad {under}/{over}: curve (max relative deviation)",
                    np.max(np.abs(curve - direct) / direct), 0, 1e-9)
    # points on a pointing task, payoff, estimate grid of its own
    err = [-12, -5, -2, 0, 3, 6, 9]
    val = [0, 4, 9, 10, 6, -20, 0]
    sections = [("problem", [("title", "Pointing with a penalty beyond the target"), ("unit", "mm")]),
                ("states", [("from", -40), ("to", 40), ("points", 801)]),
                ("prior", [("family", "normal"), ("mean", 0), ("sd", 8)]),
                ("evidence.vision", [("noise", "gaussian"), ("sd", 4), ("observed", 3.2)]),
                ("actions", [("estimate", "yes"), ("from", -30), ("to", 30), ("points", 241)]),
                ("payoff", [("curve", "points"), ("error", err), ("value", val)])]
    d = runner.run("points_payoff", sections, G)
    if d is not None:
        s = np.array(d["problem"]["states"]["grid"])
        pg = np.array(d["case"]["posterior_grid"])
        est = np.linspace(-30, 30, 241)
        loss = -np.interp(est[:, None] - s[None, :], err, val)   # flat outside, as np.interp
        el = loss @ pg
        got = np.array(d["case"]["curve"]["expected_loss"])
        # Prefix sums of moments per piece: differences of sums up to |s|·p ≤ 40, rounding
        # ~1e-14 of the payoff scale 20; 1e-10 leaves room.
        tally.close(G, "points: expected loss of every estimate (brute force)",
                    np.max(np.abs(got - el)), 0, 1e-10)
        e = d["case"]["bayes_estimate"]
        j = int(np.argmin(np.abs(est - e)))
        tally.close(G, "points: Bayes estimate has the least brute-force expected loss",
                    el[j], el.min(), 1e-10)
        mean = float(np.sum(pg * s))
        tally.record(G, e < mean, f"points: estimate {e} should aim short of the posterior mean {mean}, "
                                  "away from the penalty beyond the target")
    # relative squared on the gamma posterior
    d = runner.run("relative_squared", gamma_sections([("curve", "squared"), ("relative", "yes")]), G)
    if d is not None:
        c = GAMMA
        h = c["h"]
        s, _ = grid(h / 2, c["to"], int(round((c["to"] - h / 2) / h)) + 1)
        pg = np.array(d["case"]["posterior_grid"])
        A, B = float(np.sum(pg / s)), float(np.sum(pg / s ** 2))
        e = d["case"]["bayes_estimate"]
        disc = A / B
        # The loss is a parabola in e with curvature B, so the best grid point is the one
        # nearest A/B (exact up to rounding here: the sums come from the same posterior).
        check_grid_choice(tally, G, "relative squared: estimate nearest Σ(p/s)/Σ(p/s²)", e, disc, s,
                          1e-9 * disc)
        tally.close(G, "relative squared: expected loss Σ p·((e - s)/s)²", d["case"]["expected_loss"],
                    float(np.sum(pg * ((e - s) / s) ** 2)), 1e-9)
        ksum = sum(c["obs"])
        a_, th_ = gamma_posterior(ksum)
        b, post = gamma_bounds(ksum, h)
        EA, EB = 1 / (th_ * (a_ - 1)), 1 / (th_ ** 2 * (a_ - 1) * (a_ - 2))
        tA, tB = b.moment(lambda x: 1 / x), b.moment(lambda x: 1 / x ** 2)
        closed = th_ * (a_ - 2)
        check_grid_choice(tally, G, "relative squared: estimate nearest θ'(a' - 2)", e, closed, s,
                          closed * (tA / EA + tB / EB))
        want = EB * e * e - 2 * EA * e + 1
        tally.close(G, "relative squared: expected loss E[1/s²]e² - 2E[1/s]e + 1 (gamma moments)",
                    d["case"]["expected_loss"], want, e * e * tB + 2 * e * tA + 1e-12)
        tally.close(G, "relative squared: minimum 1/(a' - 1) (+ B·(h/2)² at most)",
                    d["case"]["expected_loss"], 1 / (a_ - 1) + EB * h * h / 8,
                    EB * h * h / 8 + e * e * tB + 2 * e * tA + 1e-12)


# ---------------------------------------------------------------------------------------
# 8. Prior families: problem.prior holds the cell masses CDF(s + h/2) - CDF(s - h/2)
#    renormalized over the grid (format.md, prior.h), problem.prior_outside_grid the mass
#    beyond the outer cell edges; a warning when that exceeds 0.1%. References: scipy.stats
#    CDFs; the table family's CDF in closed form (a linear density integrates to a quadratic
#    on each piece); a mixture's CDF is the weighted sum of its parts'.
class TableDist:
    """Density linear between knots `at`, 0 outside, normalized (format.md `table`)."""

    def __init__(self, at, density):
        self.at, self.d = np.array(at, float), np.array(density, float)
        widths = np.diff(self.at)
        self.cum = np.concatenate([[0], np.cumsum(widths * (self.d[:-1] + self.d[1:]) / 2)])
        self.total = self.cum[-1]

    def cdf(self, x):
        x = np.atleast_1d(np.asarray(x, float))
        k = np.clip(np.searchsorted(self.at, x, side="right") - 1, 0, len(self.at) - 2)
        u = np.clip(x - self.at[k], 0, self.at[k + 1] - self.at[k])
        slope = (self.d[k + 1] - self.d[k]) / (self.at[k + 1] - self.at[k])
        area = self.cum[k] + self.d[k] * u + slope * u * u / 2
        area = np.where(x <= self.at[0], 0.0, np.where(x >= self.at[-1], self.total, area))
        return area / self.total

    def sf(self, x):
        return 1 - self.cdf(x)

    def median(self):
        return optimize.brentq(lambda x: self.cdf(x)[0] - 0.5, self.at[0], self.at[-1])


class MixtureDist:
    def __init__(self, parts):
        tot = sum(w for w, _ in parts)
        self.parts = [(w / tot, d) for w, d in parts]

    def cdf(self, x):
        return sum(w * d.cdf(x) for w, d in self.parts)

    def sf(self, x):
        return sum(w * d.sf(x) for w, d in self.parts)

    def median(self):
        return optimize.brentq(lambda x: float(self.cdf(x)) - 0.5, -1e6, 1e6)


class FlatDist:
    """The uniform prior without low/high: the outer cell edges, every point 1/n."""


def check_prior_families(runner, tally):
    G = "8 prior families: cell masses from CDF differences, outside-mass warning"
    table = TableDist([200, 400, 700, 900], [0, 2, 3, 0])
    mix = lambda: MixtureDist([(1, stats.norm(-10, 3)), (3, stats.t(4, loc=10, scale=2))])
    mix_sections = [("prior.near", [("weight", 1), ("family", "normal"), ("mean", -10), ("sd", 3)]),
                    ("prior.far", [("weight", 3), ("family", "student"), ("center", 10),
                                   ("scale", 2), ("df", 4)])]
    # (name, [prior] entries, extra sections, reference, [(from, to, points), ...]):
    # the first grid holds all but < 0.05% of the prior, the second cuts off > 0.2%.
    cases = [
        ("uniform", [("family", "uniform")], [], FlatDist(), [(0, 10, 101)]),
        ("uniform_low_high", [("family", "uniform"), ("low", 2.3), ("high", 7.9)], [],
         stats.uniform(2.3, 5.6), [(0, 10, 101), (4, 10, 121)]),
        ("normal", [("family", "normal"), ("mean", 3), ("sd", 1.5)], [], stats.norm(3, 1.5),
         [(-5, 11, 1601), (0, 6, 601)]),
        ("lognormal", [("family", "lognormal"), ("median", 500), ("log_sd", 0.3)], [],
         stats.lognorm(0.3, scale=500), [(100, 1500, 701), (100, 800, 351)]),
        ("gamma", [("family", "gamma"), ("shape", 3), ("scale", 2)], [],
         stats.gamma(3, scale=2), [(0.05, 39.95, 400), (0.05, 5.95, 60)]),
        ("beta", [("family", "beta"), ("alpha", 2), ("beta", 5)], [], stats.beta(2, 5),
         [(0.0025, 0.9975, 200), (0.1025, 0.8975, 160)]),
        ("student", [("family", "student"), ("center", 1), ("scale", 2), ("df", 3)], [],
         stats.t(3, loc=1, scale=2), [(-399, 401, 1601), (-9, 11, 201)]),
        ("exponential", [("family", "exponential"), ("mean", 4)], [], stats.expon(scale=4),
         [(0.05, 59.95, 600), (0.05, 9.95, 100)]),
        ("table", [("family", "table"), ("at", [200, 400, 700, 900]), ("density", [0, 2, 3, 0])],
         [], table, [(100, 1000, 181), (450, 1000, 111)]),
        ("mixture", [("family", "mixture"), ("parts", "near, far")], mix_sections, mix(),
         [(-200, 200, 1601), (-15, 15, 121)]),
    ]
    for name, entries, extra, dist, grids in cases:
        for gi, (frm, to, n) in enumerate(grids):
            tag = f"{name} on {frm}..{to}"
            sections = [("problem", [("title", f"Prior check: {name}")]),
                        ("states", [("from", frm), ("to", to), ("points", n)]),
                        ("prior", entries)] + extra + \
                       [("actions", [("estimate", "yes")]), ("loss", [("curve", "squared")])]
            d = runner.run(f"prior_{name}_{gi}", sections, G)
            if d is None:
                continue
            s, h = grid(frm, to, n)
            if isinstance(dist, FlatDist):
                mass, outside = np.full(n, 1.0 / n), 0.0
            else:
                mass, outside = cell_masses(dist, s, h)
                mass, outside = mass / mass.sum(), float(np.squeeze(outside))
            tally.record(G, outside < 5e-4 or outside > 2e-3,
                         f"test set-up: {tag} leaves {outside} outside, too near 0.1%")
            got = np.array(d["problem"]["prior"])
            tally.close(G, f"{tag}: cell masses (max deviation)", np.max(np.abs(got - mass)), 0,
                        PRIOR_ATOL)
            tally.close(G, f"{tag}: prior_outside_grid", d["problem"].get("prior_outside_grid"),
                        outside, PRIOR_ATOL)
            warned = any("prior" in w for w in d["warnings"])
            tally.record(G, warned == (outside > OUTSIDE_WARN),
                         f"{tag}: {outside:.3g} outside, warning {'given' if warned else 'missing'}: "
                         f"{d['warnings']}")


# ---------------------------------------------------------------------------------------
# 9. Choices over grid states: bands (`cuts`, a state on a cut in the band above) and lines
#    (`at`, linear between, flat outside: np.interp). Expected loss of every action = the
#    posterior (here recomputed with scipy on the same grid, and also lopside's own
#    case.posterior_grid) times the loss at each grid state. Switch points of two-action
#    problems: scipy.optimize.brentq on the difference of the two posterior expected losses
#    as a function of the measurement, with the scipy grid posterior.
TIMING = dict(frm=100.0, to=1100.0, n=501, mu=600.0, tau=120.0, sigma=80.0, obs=650.0)


def timing_sections(actions, loss, rules=(), c=TIMING, observed=True):
    ev = [("noise", "gaussian"), ("sd", c["sigma"])] + ([("observed", c["obs"])] if observed else [])
    return [("problem", [("title", "Short or long interval"), ("unit", "ms"), ("score_unit", "points")]),
            ("states", [("from", c["frm"]), ("to", c["to"]), ("points", c["n"])]),
            ("prior", [("family", "normal"), ("mean", c["mu"]), ("sd", c["tau"])]),
            ("evidence.clock", ev),
            ("actions", [("labels", ", ".join(actions))]),
            ("loss", loss)] + list(rules)


class TimingRef:
    """The scipy grid posterior of the timing problem, for any measurement x."""

    def __init__(self, c=TIMING, tau=None, sigma=None):
        self.c = c
        self.s, self.h = grid(c["frm"], c["to"], c["n"])
        mass, _ = cell_masses(stats.norm(c["mu"], tau or c["tau"]), self.s, self.h)
        self.prior = mass / mass.sum()
        self.logprior = np.log(self.prior)
        self.sigma = sigma or c["sigma"]

    def post(self, x):
        x = np.atleast_1d(x)
        lw = self.logprior[None, :] + stats.norm.logpdf(x[:, None], self.s[None, :], self.sigma)
        return np.exp(lw - special.logsumexp(lw, axis=1, keepdims=True))

    def pred(self, x):
        """Predictive density of x on the grid prior."""
        x = np.atleast_1d(x)
        return stats.norm.pdf(x[:, None], self.s[None, :], self.sigma) @ self.prior


def band_loss(s, cuts, rows):
    band = np.searchsorted(np.array(cuts, float), s, side="right")
    return np.array([np.array(r, float)[band] for r in rows])


def line_loss(s, at, rows):
    return np.array([np.interp(s, at, r) for r in rows])


def find_switches(ref, L, lo, hi, n=4001):
    """Measurements in [lo, hi] where the Bayes action changes (brentq on the difference of
    the two actions best on either side), found on a scan of n points."""
    xs = np.linspace(lo, hi, n)
    el = ref.post(xs) @ L.T
    best = np.argmin(el, axis=1)
    out = []
    for i in np.nonzero(best[1:] != best[:-1])[0]:
        a, b = best[i], best[i + 1]
        f = lambda x: float((ref.post(x) @ (L[a] - L[b]))[0])
        out.append(optimize.brentq(f, xs[i], xs[i + 1], xtol=1e-13, rtol=1e-15))
    return out


# lopside refines a switch to 1e-12 and brentq here to 1e-13; both evaluate the same
# grid function (prior masses agree to 1e-12, group 8), whose rounding (~1e-15 of the loss)
# over its slope (~0.05 per ms) moves the root by ~1e-13 ms. 1e-6 ms keeps clear of that and
# is far below the measurement grid's spacing (several ms) and the state grid's h/2 (1 ms),
# so a switch point read off a grid, or a state grid shifted by half a cell, fails.
SWITCH_TOL = 1e-6


def check_choices(runner, tally):
    G = "9 choices over grid states: bands, lines, switch points"
    ref = TimingRef()
    s = ref.s
    post = ref.post(TIMING["obs"])[0]
    acts = ["short", "unsure", "long"]
    cuts = [500, 600, 701]                 # 600 is a grid point: it belongs to the band above
    rows = [[0, 0, 4, 8], [1.5, 1.5, 1.5, 1.5], [8, 4, 0, 0]]
    at = [400, 600, 800]
    lrows = [[0, 2, 9], [2, 2, 2], [9, 2.5, 0]]
    for kind, loss_entries, L in (
            ("cuts", [("cuts", cuts)] + [(a, r) for a, r in zip(acts, rows)], band_loss(s, cuts, rows)),
            ("at", [("at", at)] + [(a, r) for a, r in zip(acts, lrows)], line_loss(s, at, lrows))):
        d = runner.run(f"choices_{kind}", timing_sections(acts, loss_entries), G)
        if d is None:
            continue
        pg = np.array(d["case"]["posterior_grid"])
        # Same grid, same formula: prior masses to 1e-12, likelihood terms to rounding.
        tally.close(G, f"{kind}: posterior grid vs scipy (max deviation)", np.max(np.abs(pg - post)),
                    0, 1e-12)
        el = L @ post
        got = {a["action"]: a["expected_loss"] for a in d["case"]["actions"]}
        for a, e in zip(acts, el):
            # Sums of 501 products of probabilities and losses ≤ 9: rounding ~1e-15.
            tally.close(G, f"{kind}: expected loss of {a} (scipy posterior)", got.get(a), e, 1e-11)
            tally.close(G, f"{kind}: expected loss of {a} (numpy · case.posterior_grid)", got.get(a),
                        float(L[acts.index(a)] @ pg), 1e-12)
        tally.record(G, d["case"]["bayes_action"] == acts[int(np.argmin(el))],
                     f"{kind}: Bayes action {d['case']['bayes_action']}, expected {acts[int(np.argmin(el))]}")
    # Two actions: switch points.
    two = [
        ("cuts", [("cuts", 600), ("short", [0, 5]), ("long", [3, 0])],
         band_loss(s, [600], [[0, 5], [3, 0]])),
        ("at", [("at", [400, 800]), ("short", [0, 6]), ("long", [6, 1])],
         line_loss(s, [400, 800], [[0, 6], [6, 1]])),
        ("three cuts", [("cuts", [450, 600, 750]), ("short", [0, 2, 6, 2]), ("long", [5, 3, 0, 4])],
         band_loss(s, [450, 600, 750], [[0, 2, 6, 2], [5, 3, 0, 4]])),
    ]
    for kind, loss_entries, L in two:
        d = runner.run(f"switch_{kind.replace(' ', '_')}", timing_sections(["short", "long"], loss_entries), G)
        if d is None:
            continue
        xs = d["rule"]["grid"]["x"]
        want = find_switches(ref, L, xs[0], xs[-1])
        got = [p["x"] for p in d["rule"]["switch_points"]]
        ok = len(got) == len(want) and all(abs(a - b) <= SWITCH_TOL for a, b in zip(got, want))
        tally.record(G, ok, f"{kind}: switch points {got}, expected {want} (brentq)")


# ---------------------------------------------------------------------------------------
# 10. Rule comparisons. A rule's risk is Σ over the measurement grid of the predictive
#     weight times the loss of its decision. References: scipy.integrate.quad over the
#     measurement of pred(x)·(expected loss of the decision at x), with the scipy grid
#     posterior. Tolerances from the measurement spacing Δ: the integrand of a threshold
#     rule jumps by J = pred(t)·|EL_long(t) - EL_short(t)| at its threshold, and a node
#     sum misplaces up to half a cell of it (Δ/2·J); on smooth stretches the node sum is
#     exact up to the one-sided Euler–Maclaurin terms at the jump, Δ²/12·max|f'|; the Bayes
#     rule's integrand only has kinks (slope jump K at a switch point): Δ²·K/8 each; the
#     grid leaves ≤ 1e-6 of the predictive outside (format.md) at losses ≤ the largest.
def check_rules(runner, tally):
    G = "10 rule comparisons: threshold risk, regret, believed rules"
    ref = TimingRef()
    s = ref.s
    rows = [[0, 5], [3, 0]]
    L = band_loss(s, [600], rows)
    lmax = 5.0
    rules = [("rule.early", [("kind", "threshold"), ("at", 560)]),
             ("rule.late", [("kind", "threshold"), ("at", 640)]),
             ("rule.never", [("kind", "threshold"), ("at", 5000)]),
             ("rule.same", [("kind", "believed"), ("prior.sd", TIMING["tau"])]),
             ("rule.vague", [("kind", "believed"), ("prior.sd", 300)]),
             ("rule.sharp", [("kind", "believed"), ("evidence.clock.sd", 40)])]
    d = runner.run("rules_choice", timing_sections(["short", "long"],
                                                   [("cuts", 600), ("short", rows[0]), ("long", rows[1])],
                                                   rules), G)
    if d is not None:
        r = d["rule"]
        xs = np.array(r["grid"]["x"])
        dx = xs[1] - xs[0]
        lo, hi = xs[0] - 30 * ref.sigma, xs[-1] + 30 * ref.sigma
        el_at = lambda x, a: float(ref.pred(x)[0] * (ref.post(x)[0] @ L[a]))
        fprime = lambda x, a: (el_at(x + 1e-3, a) - el_at(x - 1e-3, a)) / 2e-3   # d/dx, signed

        def threshold_risk(t):
            t = min(max(t, lo), hi)
            r0 = integrate.quad(lambda x: el_at(x, 0), lo, t, limit=200, epsabs=1e-12)[0]
            r1 = integrate.quad(lambda x: el_at(x, 1), t, hi, limit=200, epsabs=1e-12)[0]
            return r0 + r1

        def threshold_tol(t):
            if not xs[0] <= t <= xs[-1]:
                return COVERAGE_GAP * lmax + 1e-9
            jump = abs(el_at(t, 1) - el_at(t, 0))
            return dx / 2 * jump + dx ** 2 / 12 * 2 * max(abs(fprime(t, 0)), abs(fprime(t, 1))) + \
                COVERAGE_GAP * lmax + 1e-9

        rules_out = {x["name"]: x for x in d["rules"]}
        for name, t in (("early", 560.0), ("late", 640.0), ("never", 5000.0)):
            got = rules_out.get(name, {}).get("risk")
            tally.close(G, f"threshold at {t}: risk vs quad", got, threshold_risk(t), threshold_tol(t))
        # "never" always takes the first action: Σ prior·loss(short), but for the predictive
        # mass beyond the measurement grid (≤ 1e-6, format.md).
        tally.close(G, "threshold beyond the grid: risk = Σ prior·loss(short)",
                    rules_out.get("never", {}).get("risk"), float(ref.prior @ L[0]), COVERAGE_GAP * lmax)
        # Believed rules decide like thresholds at their own switch points (brentq on the
        # believed posterior); judged under the true problem like a threshold rule.
        for name, kw in (("vague", dict(tau=300)), ("sharp", dict(sigma=40))):
            sw = find_switches(TimingRef(**kw), L, xs[0], xs[-1])
            ok = len(sw) == 1
            tally.record(G, ok, f"believed {name}: {len(sw)} switch points in the believed model")
            if ok:
                tally.close(G, f"believed {name}: risk vs quad at its switch point {sw[0]:.6g}",
                            rules_out.get(name, {}).get("risk"), threshold_risk(sw[0]),
                            threshold_tol(sw[0]))
        # Bayes risk: the rule switches at the Bayes switch point; its integrand has a kink.
        sw = find_switches(ref, L, xs[0], xs[-1])
        kink = sum(abs(fprime(t, 0) - fprime(t, 1)) for t in sw)     # slope jump at each switch
        want = threshold_risk(sw[0]) if len(sw) == 1 else math.nan
        tally.close(G, "Bayes risk vs quad (switch at the Bayes point)", r["bayes_risk"], want,
                    dx ** 2 * kink / 8 * 2 + COVERAGE_GAP * lmax + 1e-9)
        tally.close(G, "prior-only risk = min over actions of Σ prior·loss", r["prior_only_risk"],
                    float(np.min(L @ ref.prior)), 1e-12 * lmax)
        # Regret: at every grid point the Bayes action has the least expected loss, so no
        # rule beats it there: regret ≥ -(rounding, 1e-12 of the loss scale).
        for x in d["rules"]:
            tally.record(G, x.get("regret") is not None and x["regret"] >= -1e-12 * lmax,
                         f"{x['name']}: regret {x.get('regret')} < 0")
        tally.close(G, "believed with the true prior: regret 0", rules_out.get("same", {}).get("regret"),
                    0, 1e-12 * lmax)
        tally.close(G, "believed with the true prior: risk = Bayes risk",
                    rules_out.get("same", {}).get("risk"), r["bayes_risk"], 1e-12 * lmax)

    # Estimates: the normal model of group 1 with squared loss. For any rule deciding e(x),
    # E[(e - s)² | x] = v + (e - m(x))², so its risk is Σ pred(x)·Δ·(v + (e(x) - m(x))²) with
    # the closed-form predictive. The Bayes estimate is the grid point nearest m(x), and a
    # rule free to leave the grid (the posterior mean) can beat it by up to h²/4 per point:
    # regret ≥ -h²/4 - (grid error). A believed model with prior sd τ' (or noise sd σ')
    # estimates near m'(x) = μ + w'(x - μ), w' = τ'²/(τ'² + σ'²/n); since m is the posterior
    # mean, E[(m' - s)²] = v + (w' - w)²(τ² + σ²/n) (own derivation). Its grid point
    # m' + r (|r| ≤ h/2) adds 2E[(m' - m)·r] + E[r²]: within ±h·E|m' - m| (+ h²/4), where
    # E|m' - m| = |w' - w|·sd_pred·sqrt(2/π). (The cross term does not average out: on the
    # measurement grid the rounding r follows x in a pattern of its own.)
    c = NORMAL
    n = len(c["obs"])
    erules = [("rule.mean", [("kind", "posterior_mean")]),
              ("rule.median", [("kind", "posterior_median")]),
              ("rule.mode", [("kind", "posterior_mode")]),
              ("rule.ml", [("kind", "max_likelihood")]),
              ("rule.same", [("kind", "believed"), ("prior.sd", c["tau"]), ("evidence.clock.sd", c["sigma"])]),
              ("rule.vague", [("kind", "believed"), ("prior.sd", 2 * c["tau"])]),   # μ ± 5.3 τ' on the grid
              ("rule.sharp", [("kind", "believed"), ("evidence.clock.sd", c["sigma"] / 2)])]
    d = runner.run("rules_estimate", normal_sections([("curve", "squared")], rules=erules), G)
    if d is None:
        return
    m0, v = normal_model(c)
    b, post, h = normal_bounds()
    s, _ = grid(c["frm"], c["to"], c["n"])
    r = d["rule"]
    xs = np.array(r["grid"]["x"])
    dx = xs[1] - xs[0]
    sd_l = c["sigma"] / math.sqrt(n)
    vpred = c["tau"] ** 2 + sd_l ** 2
    wts = stats.norm.pdf(xs, c["mu"], math.sqrt(vpred)) * dx
    ptol = 3 * h ** 2 / sd_l ** 2          # group 1: relative error of the weights
    mx = np.array([normal_model(c, x)[0] for x in xs])
    tmx = np.array([normal_tols(m, v, h)[0] for m in mx])
    tv = normal_tols(m0, v, h)[1]
    qb = b.quantile(m0)                    # the median's grid error (same at every x)

    def node_risk(target, tol):
        """[low, high] risk of deciding the grid point nearest target(x) (either
        neighbour when target is within tol of a cell edge)."""
        lo_r = hi_r = 0.0
        for k, x in enumerate(xs):
            t = target[k]
            cand = {nearest_node(s, t - tol[k]), nearest_node(s, t + tol[k])}
            losses = [v + (s[i] - mx[k]) ** 2 for i in cand]
            lo_r += wts[k] * min(losses)
            hi_r += wts[k] * max(losses)
        return lo_r, hi_r

    def within(what, got, lo_r, hi_r, extra=0.0):
        tol = ptol * hi_r + tv + extra
        ok = got is not None and lo_r - tol <= got <= hi_r + tol
        tally.record(G, ok, f"{what}: risk {got!r} outside [{lo_r!r}, {hi_r!r}] ± {tol:.3g}")

    rules_out = {x["name"]: x for x in d["rules"]}
    risk = lambda name: rules_out.get(name, {}).get("risk")
    within("Bayes rule (m(x), off by ≤ tol_m)", r["bayes_risk"], v * wts.sum(), v * wts.sum(),
           float(np.max(tmx)) ** 2)
    within("posterior_mean (the grid mean, off by ≤ tol_m)", risk("mean"), v * wts.sum(),
           v * wts.sum(), float(np.max(tmx)) ** 2)
    within("posterior_median (interpolated, off by ≤ the quantile bound)", risk("median"),
           v * wts.sum(), v * wts.sum(), (qb + float(np.max(tmx))) ** 2)
    within("posterior_mode (the vertex through the log masses, off by ≤ tol_m)", risk("mode"),
           v * wts.sum(), v * wts.sum(), float(np.max(tmx)) ** 2)
    # max_likelihood: the state maximizing N(x; s, σ/√n), the grid point nearest x.
    within("max_likelihood (grid point nearest x)", risk("ml"),
           *node_risk(np.clip(xs, s[0], s[-1]), np.full(len(xs), 1e-9 * c["to"])))
    for name, tau_b, sigma_b in (("vague", 2 * c["tau"], c["sigma"]), ("sharp", c["tau"], c["sigma"] / 2)):
        cb = dict(c, tau=tau_b, sigma=sigma_b)
        mb = np.array([normal_model(cb, x)[0] for x in xs])
        vb = normal_model(cb)[1]
        tb = np.array([normal_tols(m, vb, h, cb)[0] for m in mb])
        within(f"believed {name} (grid point nearest m'(x))", risk(name), *node_risk(mb, tb))
        w = c["tau"] ** 2 / vpred
        wb = tau_b ** 2 / (tau_b ** 2 + sigma_b ** 2 / n)
        closed = v + (w - wb) ** 2 * vpred
        cross = h * abs(w - wb) * math.sqrt(vpred) * math.sqrt(2 / math.pi)
        # The grid's 1e-6 predictive tail carries losses up to (w' - w)²·(6 sd)² more.
        within(f"believed {name}: v + (w' - w)²(τ² + σ²/n), ± h·E|m' - m|", risk(name),
               closed - cross, closed + cross + h * h / 4, COVERAGE_GAP * (w - wb) ** 2 * 36 * vpred)
    for x in d["rules"]:
        tally.record(G, x.get("regret") is not None and x["regret"] >= -(h * h / 4 + 2 * tv),
                     f"{x['name']}: regret {x.get('regret')} below -h²/4")
    tally.close(G, "believed with the true values: regret 0", rules_out.get("same", {}).get("regret"),
                0, 1e-12 * v)


# ---------------------------------------------------------------------------------------
# 11. Responses r(s) and noise families: the posterior recomputed with scipy on the same
#     grid from the known r(s) (prior cell masses from scipy CDFs, likelihoods from
#     scipy.stats logpdf/logpmf, normalized with logsumexp). Same grid, same formula: the
#     posterior agrees to rounding, so 1e-9 relative for the mean (of max(|mean|, sd)) and
#     1e-12 absolute for every cell. Count channels: the rule's probabilities are exact sums
#     Σ prior·pmf over the grid, to 1e-12.
def check_responses(runner, tally):
    G = "11 responses and noise families: posterior on the same grid"
    cases = []
    # linear + gaussian, 3 repeats: pointing with a gain and offset in the visual map.
    r = lambda s: 0.2 + 0.95 * s
    obs = [2.4, 3.9, 3.0]
    cases.append(("linear_gaussian", (-40, 40, 1601), [("family", "normal"), ("mean", 0), ("sd", 8)],
                  stats.norm(0, 8),
                  [("noise", "gaussian"), ("sd", 3), ("repeats", 3), ("observed", obs),
                   ("response", "linear"), ("offset", 0.2), ("slope", 0.95)],
                  lambda s, r=r, obs=obs: sum(stats.norm.logpdf(y, r(s), 3) for y in obs), None))
    # power + lognormal, 2 repeats: magnitude estimates of brightness.
    r = lambda s: 0.5 + 2 * s ** 0.33
    obs = [3.1, 3.6]
    cases.append(("power_lognormal", (0.05, 20, 1996), [("family", "exponential"), ("mean", 4)],
                  stats.expon(scale=4),
                  [("noise", "lognormal"), ("log_sd", 0.2), ("repeats", 2), ("observed", obs),
                   ("response", "power"), ("offset", 0.5), ("gain", 2), ("exponent", 0.33)],
                  lambda s, r=r, obs=obs: sum(stats.lognorm.logpdf(y, 0.2, scale=r(s)) for y in obs), None))
    # saturating (Naka–Rushton) + poisson, 3 repeats: spike counts against contrast.
    r = lambda s: 2 + 40 * s ** 2 / (s ** 2 + 0.2 ** 2)
    obs = [12, 15, 9]
    cases.append(("saturating_poisson", (0.0005, 0.9995, 1000), [("family", "beta"), ("alpha", 1.5), ("beta", 4)],
                  stats.beta(1.5, 4),
                  [("noise", "poisson"), ("window", 0.5), ("repeats", 3), ("observed", obs),
                   ("response", "saturating"), ("base", 2), ("top", 40), ("half", 0.2), ("exponent", 2)],
                  lambda s, r=r, obs=obs: sum(stats.poisson.logpmf(k, 0.5 * r(s)) for k in obs),
                  lambda K, s, r=r: stats.poisson.pmf(K, 3 * 0.5 * r(s))))
    # logistic + binomial: a psychometric function, 40 two-interval trials.
    r = lambda s: 0.5 + (0.98 - 0.5) / (1 + np.exp(-(s - 0.3) / 0.05))
    cases.append(("logistic_binomial", (0.0025, 0.9975, 200), [("family", "uniform")], None,
                  [("noise", "binomial"), ("trials", 40), ("observed", 31),
                   ("response", "logistic"), ("low", 0.5), ("high", 0.98), ("mid", 0.3), ("width", 0.05)],
                  lambda s, r=r: stats.binom.logpmf(31, 40, r(s)),
                  lambda K, s, r=r: stats.binom.pmf(K, 40, r(s))))
    # table + scalar noise with a floor: a nonlinear internal clock.
    at, val = [200, 600, 1000], [180, 640, 1150]
    r = lambda s: np.interp(s, at, val)
    cases.append(("table_scalar", (150, 1500, 1351), [("family", "lognormal"), ("median", 550), ("log_sd", 0.3)],
                  stats.lognorm(0.3, scale=550),
                  [("noise", "scalar"), ("weber", 0.12), ("sd_floor", 30), ("observed", 700),
                   ("response", "table"), ("at", at), ("value", val)],
                  lambda s, r=r: stats.norm.logpdf(700, r(s), np.maximum(0.12 * r(s), 30)), None))
    for name, (frm, to, n), prior_entries, pdist, ev, loglik, pmf in cases:
        sections = [("problem", [("title", f"Response check: {name}")]),
                    ("states", [("from", frm), ("to", to), ("points", n)]),
                    ("prior", prior_entries),
                    ("evidence.ch", ev),
                    ("actions", [("estimate", "yes")]),
                    ("loss", [("curve", "squared")])]
        d = runner.run(f"response_{name}", sections, G)
        if d is None:
            continue
        s, h = grid(frm, to, n)
        if pdist is None:
            mass = np.full(n, 1.0 / n)
        else:
            mass, _ = cell_masses(pdist, s, h)
            mass = mass / mass.sum()
        post = grid_posterior(np.log(mass), loglik(s))
        m = float(post @ s)
        sd = math.sqrt(float(post @ (s - m) ** 2))
        pg = np.array(d["case"]["posterior_grid"])
        tally.close(G, f"{name}: posterior mean", d["case"]["posterior"]["mean"], m,
                    EXACT_RTOL * max(abs(m), sd))
        tally.close(G, f"{name}: posterior grid (max deviation)", np.max(np.abs(pg - post)), 0, 1e-12)
        if pmf is not None:
            ks = np.array(d["rule"]["grid"]["x"])
            prob = np.array(d["rule"]["grid"]["probability"])
            want = np.array([float(mass @ pmf(k, s)) for k in ks])
            tally.close(G, f"{name}: rule probability of every count (max deviation)",
                        np.max(np.abs(prob - want)), 0, 1e-12)
            tally.close(G, f"{name}: rule counts hold all but 1e-6 (format.md)", want.sum(), 1,
                        COVERAGE_GAP)


# ---------------------------------------------------------------------------------------
# 12. Estimates without an estimate grid are real numbers (format.md). Normal prior N(0, 1)
#     on -8..8 (h = 0.001), one gaussian reading 0.7 of sd 1: the conjugate posterior is
#     N(0.35, 0.5) (Gelman et al. 2013, sec. 2.5, from memory). The Bayes estimate of
#     squared loss is its mean, of absolute loss its median, of linlin its quantile
#     under/(under + over) (Berger 1985, sec. 4.4.2, from memory): from scipy.stats.norm,
#     within 1e-6 of the state range. Expected losses: scipy's quad of the loss at that
#     estimate over the continuous posterior, within 1e-6 relative; the grid's errors are
#     O(h²) = 1e-6 of the posterior's variance at most (module docstring), a further factor
#     h²/12 / v ≈ 2e-7 smaller for these smooth integrands.
def check_continuous_estimates(runner, tally):
    G = "12 real estimates without an estimate grid: mean, median, quantile (scipy)"
    frm, to = -8.0, 8.0
    post = stats.norm(0.35, math.sqrt(0.5))
    curves = [("squared", [("curve", "squared")], post.mean(), lambda e, u: (e - u) ** 2),
              ("absolute", [("curve", "absolute")], post.median(), lambda e, u: abs(e - u)),
              ("linlin", [("curve", "linlin"), ("under", 1), ("over", 3)], post.ppf(0.25),
               lambda e, u: 3 * (e - u) if e > u else (u - e))]
    for name, loss, want, f in curves:
        sections = [("problem", [("title", f"Real estimate, {name} loss")]),
                    ("states", [("from", frm), ("to", to), ("points", 16001)]),
                    ("prior", [("family", "normal"), ("mean", 0), ("sd", 1)]),
                    ("evidence", [("noise", "gaussian"), ("sd", 1), ("observed", 0.7)]),
                    ("actions", [("estimate", "yes")]),
                    ("loss", loss)]
        d = runner.run(f"continuous_{name}", sections, G)
        if d is None:
            continue
        e = d["case"]["bayes_estimate"]
        tally.close(G, f"{name}: Bayes estimate vs scipy", e, want, 1e-6 * (to - frm))
        m, sd = post.mean(), post.std()
        ref, _ = integrate.quad(lambda u: f(e, u) * post.pdf(u), m - 12 * sd, m + 12 * sd,
                                points=[e], epsabs=0, epsrel=1e-12, limit=200)
        tally.close(G, f"{name}: expected loss vs quad", d["case"]["expected_loss"], ref,
                    1e-6 * ref)


def main():
    checks = [check_normal, check_conjugate_counts, check_linlin, check_linex, check_two_cues,
              check_tolerance, check_other_curves, check_prior_families, check_choices,
              check_rules, check_responses, check_continuous_estimates]
    return refkit.main("lopside_grid_", checks, context=Runner)


if __name__ == "__main__":
    sys.exit(main())
