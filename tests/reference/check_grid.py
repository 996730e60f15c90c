#!/usr/bin/python3
"""Outside references for lopside's continuous (grid) engine.

Each check writes a problem file to a temporary folder, runs lopside on it and compares
its JSON with a reference computed here with scipy/numpy from the problem's own numbers,
never with an earlier lopside output. The source of every reference is named beside its
check.

The contract (design.md "Numerical rules"): a grid problem means the continuous model:
the state X in [from, to] exactly, the prior the family's density restricted to
[from, to] and renormalized, the evidence and the loss exactly as stated (band edges
where the file puts them), estimates real numbers unless an estimate grid is given.
Every number lopside reports must agree with that model to the problem's accuracy
(default 1e-6) times a scale:
- scores (expected losses, risks, EVPI, regrets): the score scale (choices: the largest
  |loss|; tolerance: max(|inside|, |outside|); points: the largest |value|; other curves:
  |prior-only risk|);
- probabilities and rates: absolute;
- positions (posterior summaries, estimates): the state range to - from; switch points:
  the measurement span (the rule grid's range).
The tolerances below are exactly these plus the reference's own error (closed forms and
quad at ~1e-12). Where lopside itself reports accuracy.reached above the accuracy asked,
the number is checked within 3 × reached × scale instead and a note is printed at the end
(function contract_acc).

Some checks are about the internal discretization lopside still exposes in its JSON
(problem.states.grid, problem.prior, case.posterior_grid, case.curve, rule.grid): the
grid of the JSON is the finest one the accuracy loop solved on (a refinement of the file's
grid); cell i is [s_i - h/2, s_i + h/2] clipped to [from, to] (the end cells are halves);
prior cell masses are CDF differences over those cells, renormalized; the posterior grid
is those masses times the likelihood at the points. These are recomputed here on the
JSON's grid and compared to rounding (1e-12).

Groups: 1 normal-normal closed forms (squared loss, rule, predictive); 2 beta-binomial and
gamma-Poisson posteriors, predictive counts, Bayes risk; 3 linlin quantile; 4 LINEX;
5 two cues under a flat prior; 6 tolerance loss (mode limit, bimodal mixture); 7 absolute,
quadquad, points, relative squared; 8 every prior family's cell masses and the
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
import contmodel as cm  # noqa: E402  (the continuous model by quadrature, no grid)

# Sums of a few thousand double terms, and GSL against scipy for the same special
# function, agree to ~1e-13 of the result; 1e-9 relative is the "exact up to rounding"
# tolerance of sums both sides form over the same grid (a wrong term, cell or sd moves
# them by far more).
EXACT_RTOL = 1e-9
# The measurement grid leaves at most 1e-6 of the predictive mass outside (format.md).
COVERAGE_GAP = 1e-6
# Prior cell masses from CDF differences: both sides use double-precision CDFs and their
# complements; rounding leaves ~1e-16 per mass, so 1e-12 absolute is exact agreement.
PRIOR_ATOL = 1e-12
# format.md: prior mass outside the grid above 0.1% is reported as a warning.
OUTSIDE_WARN = 1e-3
# The accuracy a problem asks when it does not say ([problem] accuracy, design.md).
ACCURACY = 1e-6
# Problems where lopside reports that it did not reach the accuracy asked.
NOTES = []


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
            d = refkit.run_lopside(self.folder, name, ini_text(sections), timeout=300)
        except refkit.LopsideError as e:
            self.tally.record(group, False, str(e))
            return None
        d["_name"] = name
        return d


def contract_acc(d):
    """The accuracy d's numbers are held to: the one asked; where lopside reports it did
    not reach it (accuracy.reached > asked), 3 × what it reached, with a note."""
    acc = d.get("accuracy") or {}
    asked = acc.get("asked", ACCURACY)
    reached = acc.get("reached")
    if reached is not None and reached > asked:
        note = (f"{d.get('_name')}: accuracy.reached {reached:.3g} > asked {asked:.3g} "
                f"(worst: {(acc.get('worst') or {}).get('quantity')}); checked within 3 × reached")
        if note not in NOTES:
            NOTES.append(note)
        return 3 * reached
    return asked


class Tol:
    """The contract's tolerances for one run: pos (× the state range), score (× the score
    scale), prob (absolute), meas (× the measurement span); ref: the reference's error."""

    def __init__(self, d, span, score, meas=None, ref=1e-12):
        self.acc = contract_acc(d)
        self.pos = self.acc * span + ref * span
        self.score = self.acc * score + ref * score
        self.prob = self.acc + ref
        self.meas = self.acc * (meas if meas is not None else span)


def print_notes(runner, tally):
    """Prints the notes gathered by contract_acc (last in the list of checks)."""
    for n in NOTES:
        print(f"note: {n}")


# ---------------------------------------------------------------------------------------
# Grids and prior cells (the JSON's grid, clipped cells)
def grid(frm, to, n):
    h = (to - frm) / (n - 1)
    return frm + h * np.arange(n), h


def cell_edges(s):
    """Edges of the cells of the grid s: midpoints between points, the ends at s[0] and
    s[-1] (the end cells are halves and the cells tile [from, to] exactly)."""
    return np.concatenate(([s[0]], (s[:-1] + s[1:]) / 2, [s[-1]]))


def cell_masses(dist, s):
    """Prior mass of every clipped cell from CDF differences (upper tail from the survival
    function, to keep precision), and the mass outside [s[0], s[-1]]."""
    e = cell_edges(s)
    lo, hi = e[:-1], e[1:]
    med = dist.median()
    m = np.where(lo >= med, dist.sf(lo) - dist.sf(hi), dist.cdf(hi) - dist.cdf(lo))
    outside = float(np.squeeze(dist.cdf(s[0]) + dist.sf(s[-1])))
    return m, outside


def grid_posterior(logprior_mass, loglik):
    lw = logprior_mass + loglik
    return np.exp(lw - special.logsumexp(lw))


def check_json_grid(tally, G, d, frm, to, n):
    """problem.states.grid: from .. to with the file's step halved k times (the accuracy
    loop refines; k from -1 to 20), every point where that step puts it."""
    s = np.array(d["problem"]["states"]["grid"])
    k = math.log2((len(s) - 1) / (n - 1)) if len(s) > 1 else math.nan
    ok = k == round(k) and -1 <= k <= 20
    tally.record(G, ok, f"{d['_name']}: state grid of {len(s)} points is not the file's "
                        f"{n} points refined by halving")
    if ok:
        want, _ = grid(frm, to, len(s))
        tally.close(G, f"{d['_name']}: grid points (max deviation)", np.max(np.abs(s - want)), 0,
                    1e-12 * max(abs(frm), abs(to)))
        tally.close(G, f"{d['_name']}: problem.step", d["problem"].get("step"), want[1] - want[0],
                    1e-12 * (to - frm))
    return s


def rel_tol(value, rtol=EXACT_RTOL, scale=1.0):
    return rtol * max(abs(value), scale)


# ---------------------------------------------------------------------------------------
# 1. Normal prior, gaussian noise, n repeats: the conjugate normal model (Gelman et al.,
#    Bayesian Data Analysis, ch. 2): posterior precision 1/τ² + n/σ², mean weighted by
#    precisions; predictive x̄ ~ N(μ, τ² + σ²/n); squared loss: Bayes estimate = posterior
#    mean, its expected loss = posterior variance, the same for every measurement. The
#    grid reaches 10.7 τ either side of μ: the restriction to it changes every number here
#    by < 1e-24 of its scale. Score scale: the prior-only risk, the prior variance.
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


def check_normal(runner, tally):
    G = "1 normal prior, gaussian noise, squared loss (Gelman et al. ch. 2)"
    d = runner.run("normal_squared", normal_sections([("curve", "squared")]), G)
    if d is None:
        return
    c = NORMAL
    m, v = normal_model(c)
    sd = math.sqrt(v)
    post = stats.norm(m, sd)
    tau2 = c["tau"] ** 2
    t = Tol(d, c["to"] - c["frm"], tau2)
    check_json_grid(tally, G, d, c["frm"], c["to"], c["n"])
    p = d["case"]["posterior"]
    tally.close(G, "posterior mean", p["mean"], m, t.pos)
    tally.close(G, "posterior sd", p["sd"], sd, t.pos)
    for key, q in (("median", 0.5), ("q05", 0.05), ("q95", 0.95)):
        tally.close(G, f"posterior {key}", p[key], post.ppf(q), t.pos)
    tally.close(G, "posterior mode (symmetric: the mean)", p["mode"], m, t.pos)
    e = d["case"]["bayes_estimate"]
    tally.close(G, "Bayes estimate = posterior mean", e, m, t.pos)
    # E[(e - s)²] = v + (e - m)²: the continuous expected loss of lopside's own estimate.
    tally.close(G, "expected loss = v", d["case"]["expected_loss"], v, t.score)
    tally.close(G, "expected loss = v + (e - m)² at lopside's estimate", d["case"]["expected_loss"],
                v + (e - m) ** 2, t.score)
    r = d["rule"]
    xs = np.array(r["grid"]["x"])
    est = np.array(r["grid"]["estimate"][0])
    el = np.array(r["grid"]["expected_loss"])
    # The rule table: at every measurement x the estimate is the mean of the conjugate
    # posterior N(m(x), v) restricted to [from, to], its expected loss that restricted
    # posterior's variance (scipy truncnorm: the table's outermost x put the range's ends
    # ~6 sd from m(x)).
    mx = np.array([normal_model(c, x)[0] for x in xs])
    cut = [stats.truncnorm((c["frm"] - mk) / sd, (c["to"] - mk) / sd, loc=mk, scale=sd) for mk in mx]
    tally.close(G, "rule: estimate = restricted posterior mean at every point (max deviation)",
                max(abs(e - q.mean()) for e, q in zip(est, cut)), 0, t.pos)
    tally.close(G, "rule: expected loss = restricted posterior variance at every point (max deviation)",
                max(abs(l - q.var()) for l, q in zip(el, cut)), 0, t.score)
    # Predictive density times the spacing Δ (Gelman ch. 2): probabilities, absolute.
    n = len(c["obs"])
    sd_l = c["sigma"] / math.sqrt(n)
    pred = stats.norm(c["mu"], math.sqrt(tau2 + sd_l ** 2))
    dx = xs[1] - xs[0]
    prob = np.array(r["grid"]["probability"])
    tally.close(G, "rule: probability = predictive density × Δ (max deviation)",
                np.max(np.abs(prob - pred.pdf(xs) * dx)), 0, t.prob)
    tally.close(G, "rule: coverage (1 - 1e-6 of the predictive mass, format.md)",
                min(r["coverage"], 1.0), 1.0, COVERAGE_GAP)
    # Bayes risk: v at every x (shift-invariant), so v; prior alone: the prior mean, risk τ².
    tally.close(G, "rule: Bayes risk = v", r["bayes_risk"], v, t.score)
    tally.close(G, "prior-only risk = prior variance τ²", r["prior_only_risk"], tau2, t.score)


# ---------------------------------------------------------------------------------------
# 2. Conjugate count models (Gelman et al., Bayesian Data Analysis, ch. 2):
#    Beta(α, β) prior, binomial counts k_j of T trials: posterior Beta(α + Σk, β + nT - Σk),
#    predictive of the sum beta-binomial(nT, α, β);
#    Gamma(a, scale θ) prior, Poisson counts in a window w: posterior
#    Gamma(a + Σk, scale 1/(1/θ + n·w)), predictive of the sum negative binomial
#    (a, 1/(1 + θ·n·w)); the posterior variance averaged over it is a·θ²/(1 + θ·n·w).
#    The continuous model restricts each prior to [from, to]: the formulas below carry the
#    restriction exactly (regularized incomplete beta and gamma functions), so they hold
#    for every count, including those whose posterior the grid's top cuts.
BETA = dict(alpha=2.0, beta=3.0, trials=20, obs=[12, 15, 9], h=0.0005)
# The gamma prior leaves 4.5e-11 beyond the grid's top (59.99). The file asks for counts
# 0..360; lopside extends the range to every count with predictive mass above 1e-12.
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


def gamma_cut_moment(a, th, lo, hi, r):
    """E[s^r] of Gamma(a, scale θ) restricted to [lo, hi]: θ^r Γ(a+r)/Γ(a) times
    (P(a+r, hi/θ) - P(a+r, lo/θ)) / (P(a, hi/θ) - P(a, lo/θ)), P the regularized lower
    incomplete gamma function (the gamma integral, own derivation)."""
    P = lambda b, x: special.gammainc(b, x)
    z = P(a, hi / th) - P(a, lo / th)
    return math.exp(r * math.log(th) + special.gammaln(a + r) - special.gammaln(a)) * \
        (P(a + r, hi / th) - P(a + r, lo / th)) / z


def check_conjugate_counts(runner, tally):
    G = "2 beta-binomial and gamma-Poisson posteriors (Gelman et al. ch. 2)"
    # Beta-binomial, absolute loss (the Bayes estimate is checked in group 7). The
    # posterior Beta(38, 27) puts < 1e-100 outside [0.00025, 0.99975].
    d = runner.run("beta_binomial", beta_sections([("curve", "absolute")]), G)
    if d is not None:
        c = BETA
        a0, b0 = c["h"] / 2, 1 - c["h"] / 2
        prior = stats.beta(c["alpha"], c["beta"])
        zp = prior.cdf(b0) - prior.cdf(a0)
        pmed = optimize.brentq(lambda x: (prior.cdf(x) - prior.cdf(a0)) / zp - 0.5, a0, b0, xtol=1e-14)
        # Score scale: the prior-only risk E|s - median| under the restricted prior (quad).
        score = integrate.quad(lambda s: abs(s - pmed) * prior.pdf(s) / zp, a0, b0, points=[pmed],
                               epsabs=1e-14, epsrel=1e-12)[0]
        t = Tol(d, b0 - a0, score)
        post = beta_posterior()
        p = d["case"]["posterior"]
        tally.close(G, "beta: posterior mean", p["mean"], post.mean(), t.pos)
        tally.close(G, "beta: posterior sd", p["sd"], post.std(), t.pos)
        for key, q in (("median", 0.5), ("q05", 0.05), ("q95", 0.95)):
            tally.close(G, f"beta: posterior {key}", p[key], post.ppf(q), t.pos)
        tally.close(G, "beta: prior-only risk E|s - prior median| (quad)",
                    d["rule"]["prior_only_risk"], score, t.score)
        # The rule runs over the summed count 0..nT; P(k) is the beta-binomial of the
        # restricted prior: ∫ prior·binom(k | nT, s) ds / Z over [from, to] (quad).
        r = d["rule"]
        nt = c["trials"] * len(c["obs"])
        ks = np.array(r["grid"]["x"])
        tally.record(G, list(ks) == list(range(nt + 1)),
                     f"beta: rule counts {ks[:3]}..{ks[-3:]}, expected 0..{nt}")
        prob = np.array(r["grid"]["probability"])
        want = np.array([integrate.quad(lambda s: prior.pdf(s) * stats.binom.pmf(k, nt, s) / zp,
                                        a0, b0, epsabs=1e-15, epsrel=1e-12, limit=200)[0]
                         for k in range(nt + 1)])
        if len(prob) == len(want):
            tally.close(G, "beta: rule probability of every count vs the beta-binomial (max deviation)",
                        np.max(np.abs(prob - want)), 0, t.prob)
            # Without the restriction: scipy's beta-binomial, off by the 4e-7 the cut leaves.
            tally.close(G, "beta: rule probability vs scipy betabinom (unrestricted prior)",
                        np.max(np.abs(prob - stats.betabinom(nt, c["alpha"], c["beta"]).pmf(ks))), 0,
                        t.prob + (1 - zp))

    # Gamma-Poisson, squared loss.
    d = runner.run("gamma_poisson", gamma_sections([("curve", "squared")]), G)
    if d is None:
        return
    c = GAMMA
    a0, b0 = c["h"] / 2, c["to"]
    nw = len(c["obs"]) * c["window"]
    # Score scale: the prior-only risk, the variance of the restricted prior.
    pm1 = gamma_cut_moment(c["shape"], c["scale"], a0, b0, 1)
    score = gamma_cut_moment(c["shape"], c["scale"], a0, b0, 2) - pm1 ** 2
    t = Tol(d, b0 - a0, score)

    def post_mv(k):
        a_k, th_k = gamma_posterior(k)
        m1 = gamma_cut_moment(a_k, th_k, a0, b0, 1)
        return m1, gamma_cut_moment(a_k, th_k, a0, b0, 2) - m1 ** 2

    ksum = sum(c["obs"])
    a_, th_ = gamma_posterior(ksum)
    post = stats.gamma(a_, scale=th_)     # its mass outside [0.01, 59.99] is < 1e-30
    p = d["case"]["posterior"]
    m, v = post_mv(ksum)
    tally.close(G, "gamma: posterior mean", p["mean"], m, t.pos)
    tally.close(G, "gamma: posterior sd", p["sd"], math.sqrt(v), t.pos)
    for key, q in (("median", 0.5), ("q05", 0.05), ("q95", 0.95)):
        tally.close(G, f"gamma: posterior {key}", p[key], post.ppf(q), t.pos)
    tally.close(G, "gamma: prior-only risk = variance of the restricted prior",
                d["rule"]["prior_only_risk"], score, t.score)
    # Rule over the summed count K: P(K) = NB(K)·(P(a+K, b/θ') - P(a+K, a/θ'))/Z with
    # θ' = 1/(1/θ + nw) and Z the prior's mass on [from, to] (the gamma integral, own
    # derivation); the estimate at K is the restricted posterior's mean, its expected loss
    # the restricted posterior's variance.
    r = d["rule"]
    ks = np.array(r["grid"]["x"])
    prob = np.array(r["grid"]["probability"])
    est = np.array(r["grid"]["estimate"][0])
    el = np.array(r["grid"]["expected_loss"])
    nb = stats.nbinom(c["shape"], 1 / (1 + c["scale"] * nw))
    zp = special.gammainc(c["shape"], b0 / c["scale"]) - special.gammainc(c["shape"], a0 / c["scale"])

    def pk(k):
        a_k, th_k = gamma_posterior(k)
        return nb.pmf(k) * (special.gammainc(a_k, b0 / th_k) - special.gammainc(a_k, a0 / th_k)) / zp
    allk = np.arange(0, 2000)
    pall = np.array([pk(k) for k in allk])
    needed = allk[pall > 1e-12]
    tally.record(G, list(ks) == list(range(int(ks[-1]) + 1)) and ks[-1] >= c["k_max"]
                 and set(needed) <= set(ks),
                 f"gamma: rule counts {ks[0]}..{ks[-1]}: expected 0..{c['k_max']} (grid_from, grid_to) "
                 f"extended to every count with predictive mass above 1e-12 (0..{needed[-1]})")
    want = pall[ks.astype(int)]
    tally.close(G, "gamma: rule probability of every count vs the restricted negative binomial "
                   "(max deviation)", np.max(np.abs(prob - want)), 0, t.prob)
    mv = [post_mv(int(k)) for k in ks]
    tally.close(G, "gamma: rule estimate = restricted posterior mean at every count (max deviation)",
                max(abs(e - mk) for e, (mk, _) in zip(est, mv)), 0, t.pos)
    tally.close(G, "gamma: rule expected loss = restricted posterior variance (max deviation)",
                max(abs(l - vk) for l, (_, vk) in zip(el, mv)), 0, t.score)
    ref_risk = sum(pall[k] * post_mv(int(k))[1] for k in allk if pall[k] > 1e-300)
    tally.close(G, "gamma: Bayes risk = Σ_K P(K)·Var(s | K), all counts", r["bayes_risk"], ref_risk,
                t.score)
    # The closed form a·θ²/(1 + θ·n·w) of the unrestricted prior: the 4.5e-11 it puts
    # beyond the grid moves the risk by far less than the tolerance.
    closed = c["shape"] * c["scale"] ** 2 / (1 + c["scale"] * nw)
    tally.close(G, "gamma: Bayes risk = aθ²/(1 + θnw)", r["bayes_risk"], closed, t.score)


# ---------------------------------------------------------------------------------------
# 3. linlin loss: the Bayes estimate is the posterior quantile under/(under + over)
#    (Raiffa & Schlaifer 1961; Berger 1985, sec. 2.4). Its expected loss under N(m, sd):
#    over·E(e - s)+ + under·E(s - e)+ with E(e - s)+ = (e - m)Φ(z) + sd·φ(z), z = (e - m)/sd;
#    the minimum (under + over)·sd·φ(Φ⁻¹(q)) (newsvendor form). Score scale: the same
#    minimum under the prior N(μ, τ²) (the prior-only risk).
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
    post = stats.norm(m, sd)
    for under, over in ((1.0, 3.0), (4.0, 1.0), (0.02, 0.05)):
        d = runner.run(f"linlin_{under}_{over}",
                       normal_sections([("curve", "linlin"), ("under", under), ("over", over)]), G)
        if d is None:
            continue
        q = under / (under + over)
        score = (under + over) * c["tau"] * stats.norm.pdf(stats.norm.ppf(q))
        t = Tol(d, c["to"] - c["frm"], score)
        e = d["case"]["bayes_estimate"]
        tally.close(G, f"under {under}, over {over}: estimate = quantile {q:.4g}", e, post.ppf(q), t.pos)
        tally.close(G, f"under {under}, over {over}: expected loss at lopside's estimate",
                    d["case"]["expected_loss"], linlin_reference(e, m, sd, under, over), t.score)
        best = (under + over) * sd * stats.norm.pdf(stats.norm.ppf(q))
        tally.close(G, f"under {under}, over {over}: minimum (under+over)·sd·φ(Φ⁻¹(q))",
                    d["case"]["expected_loss"], best, t.score)
        tally.close(G, f"under {under}, over {over}: prior-only risk (under+over)·τ·φ(Φ⁻¹(q))",
                    d["rule"]["prior_only_risk"], score, t.score)


# ---------------------------------------------------------------------------------------
# 4. LINEX loss scale·(exp(a·e) - a·e - 1) under a normal posterior: the Bayes estimate is
#    m - a·v/2 (Zellner 1986) and its expected loss scale·a²·v/2. For any estimate e,
#    E = scale·(exp(a(e - m) + a²v/2) - a(e - m) - 1) (the normal MGF). Score scale: the
#    prior-only risk scale·a²·τ²/2.
def check_linex(runner, tally):
    G = "4 LINEX: estimate = mean - a·variance/2 (Zellner 1986)"
    c = NORMAL
    m, v = normal_model(c)
    for a, scale in ((0.02, 1.5), (-0.05, 1.0)):
        d = runner.run(f"linex_{a}", normal_sections([("curve", "linex"), ("a", a),
                                                     ("scale", scale)]), G)
        if d is None:
            continue
        score = scale * a * a * c["tau"] ** 2 / 2
        t = Tol(d, c["to"] - c["frm"], score)
        e = d["case"]["bayes_estimate"]
        tally.close(G, f"a = {a}: estimate = m - a·v/2", e, m - a * v / 2, t.pos)
        want = scale * (math.exp(a * (e - m) + a * a * v / 2) - a * (e - m) - 1)
        tally.close(G, f"a = {a}: expected loss at lopside's estimate (normal MGF)",
                    d["case"]["expected_loss"], want, t.score)
        tally.close(G, f"a = {a}: minimum scale·a²·v/2", d["case"]["expected_loss"],
                    scale * a * a * v / 2, t.score)
        tally.close(G, f"a = {a}: prior-only risk scale·a²·τ²/2", d["rule"]["prior_only_risk"],
                    score, t.score)


# ---------------------------------------------------------------------------------------
# 5. Two gaussian cues, flat prior: the posterior is normal with the inverse-variance
#    weighted mean and sd (1/σ1² + 1/σ2²)^(-1/2) (cue combination, e.g. Ernst & Banks
#    2002). A flat prior puts equal mass on every inner cell, so node sums of the gaussian
#    posterior are exact up to exp(-2π²·sd²/h²) (Poisson summation; here sd/h > 50, so
#    below 1e-300) and rounding: 1e-11 of the grid's scale for the mean and sd. Quantiles
#    are read within cells: the contract's accuracy × the state range.
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
    # Score scale: the prior-only risk, the variance of the flat prior (to - from)²/12.
    t = Tol(d, to - frm, (to - frm) ** 2 / 12)
    p = d["case"]["posterior"]
    tally.close(G, "posterior mean (inverse-variance weights)", p["mean"], m, 1e-11 * to)
    tally.close(G, "posterior sd (1/σ1² + 1/σ2²)^(-1/2)", p["sd"], sd, 1e-11 * to)
    for key, q in (("median", 0.5), ("q05", 0.05), ("q95", 0.95)):
        tally.close(G, f"posterior {key}", p[key], post.ppf(q), t.pos)
    tally.close(G, "Bayes estimate", d["case"]["bayes_estimate"], m, 1e-11 * to)
    tally.record(G, d["rule"]["computed"] is False,
                 "rule computed for two numeric channels (README: not tabulated)")


# ---------------------------------------------------------------------------------------
# 6. Tolerance loss (0 inside |e| ≤ w, 1 outside): the Bayes estimate is the center of the
#    window of width 2w with most posterior mass; as w shrinks it tends to the posterior
#    mode. For the gamma posterior of group 2 (shape a', scale θ', mode c = (a'-1)θ') the
#    center solves f(e - w) = f(e + w): (a'-1)·log((e+w)/(e-w)) = 2w/θ', so
#    e_w = w·coth(w/c) (own derivation), e_w - c ≈ w²/(3c). The posterior lies > 30 sd
#    inside [0.01, 59.99], so the restriction does not move it. Score scale 1 (outside).
#    An estimate passes within the position tolerance, or when its expected loss is within
#    the score tolerance of the best (a flat top leaves the center loosely defined).
#    A bimodal posterior (mixture prior of two normals) on an estimate grid of its own:
#    the conjugate mixture posterior in closed form, every estimate's expected payoff from
#    normal CDFs.
def check_tolerance(runner, tally):
    G = "6 tolerance loss: window center, mode limit, bimodal mixture"
    c = GAMMA
    h = c["h"]
    ksum = sum(c["obs"])
    a_, th_ = gamma_posterior(ksum)
    post = stats.gamma(a_, scale=th_)
    mode = (a_ - 1) * th_
    dists = []
    for k in (150, 80, 40, 20, 10):
        w = (k + 0.5) * h
        d = runner.run(f"tolerance_{k}", gamma_sections([("curve", "tolerance"), ("half_width", w),
                                                         ("outside", 1)]), G)
        if d is None:
            return
        t = Tol(d, c["to"] - h / 2, 1.0)
        e = d["case"]["bayes_estimate"]
        ew = w / math.tanh(w / mode)
        lose = lambda x: 1 - (post.cdf(x + w) - post.cdf(x - w))
        tally.record(G, abs(e - ew) <= t.pos or lose(e) - lose(ew) <= t.score,
                     f"w = {w:.4g}: estimate {e!r} vs w·coth(w/mode) = {ew!r} (±{t.pos:.3g}); "
                     f"expected loss there {lose(e)!r}, at the center {lose(ew)!r}")
        tally.close(G, f"w = {w:.4g}: expected loss 1 - P(window) at the center",
                    d["case"]["expected_loss"], lose(ew), t.score)
        dists.append((w, abs(e - mode), ew - mode, t.pos))
    for (w1, d1, _, _), (w2, d2, _, tp2) in zip(dists, dists[1:]):
        if d2 > 10 * tp2:   # both distances well above the tolerance: they must shrink with w
            tally.record(G, d2 < d1, f"|e - mode| grew from {d1} (w = {w1}) to {d2} (w = {w2})")
    w, dist, gap, tp = dists[-1]
    tally.close(G, f"w = {w:.4g}: |e - mode| ≤ (e_w - mode) + tolerance (the limit)", dist, 0, gap + tp)

    # Bimodal: mixture of N(-10, 3²) and N(10, 3²), gaussian noise sd 6, observed 1.5; a
    # payoff of 10 inside |e| ≤ 2.5625 on an estimate grid of its own (-20..20, 161 points).
    # Conjugate per part (Gelman et al. 2013, sec. 2.5, from memory): variance
    # 1/(1/9 + 1/36) = 7.2, means 7.2·(±10/9 + 1.5/36) = ±8 + 0.3, weights ∝ N(1.5; ±10, √45);
    # the cut at ±40 lies > 11 sd beyond either part.
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
    t = Tol(d, 80.0, 10.0)
    est = np.linspace(-20, 20, 161)
    vpart = 1 / (1 / 9 + 1 / 36)
    means = np.array([vpart * (-10 / 9 + 1.5 / 36), vpart * (10 / 9 + 1.5 / 36)])
    wts = stats.norm.pdf(1.5, [-10, 10], math.sqrt(45))
    wts = wts / wts.sum()
    sdp = math.sqrt(vpart)
    inside = lambda e: sum(wj * (stats.norm.cdf((e + 2.5625 - mj) / sdp) - stats.norm.cdf((e - 2.5625 - mj) / sdp))
                           for wj, mj in zip(wts, means))
    cont = np.array([-10 * inside(e) for e in est])       # losses: minus the payoff
    tally.close(G, "bimodal: estimate grid", np.max(np.abs(np.array(d["case"]["curve"]["estimate"]) - est)),
                0, 1e-12 * 20)
    got = np.array(d["case"]["curve"]["expected_loss"])
    tally.close(G, "bimodal: expected loss of every estimate (mixture posterior, max deviation)",
                np.max(np.abs(got - cont)), 0, t.score)
    # The curve is read from the posterior as a continuous density (src/model/density.c), whose
    # convergence the unit tests check against closed forms; the comparison above with the
    # mixture's continuous expected loss is the check of the whole.
    e = d["case"]["bayes_estimate"]
    tally.close(G, "bimodal: Bayes estimate has the least continuous expected loss on the grid",
                -10 * inside(e), cont.min(), t.score)
    tally.record(G, 5 < e < 11, f"bimodal: estimate {e} not near the heavier mode 8.3")
    tally.close(G, "bimodal: expected payoff (continuous best on the grid)", d["case"]["expected_payoff"],
                -cont.min(), t.score)


# ---------------------------------------------------------------------------------------
# 7. Other curves. absolute: the posterior median (Berger 1985, sec. 2.4), on the beta
#    posterior of group 2. quadquad under a normal posterior N(m, sd²), z = (e - m)/sd:
#    E[(e - s)²; s < e] = sd²((z² + 1)Φ(z) + zφ(z)) and E[(s - e)²; s > e] =
#    sd²((z² + 1)Φ(-z) - zφ(z)), derivative 2sd(over(zΦ(z) + φ(z)) - under(φ(z) - zΦ(-z)))
#    (own derivation from the normal partial moments); the estimate is its root (brentq).
#    points: the payoff's expectation under the normal posterior by quad (knots as break
#    points), maximized over the estimate grid. relative squared: minimizing
#    E((e - s)/s)² gives e = E[1/s]/E[1/s²]; for a gamma posterior (shape a', scale θ')
#    E[1/s] = 1/(θ'(a'-1)), E[1/s²] = 1/(θ'²(a'-1)(a'-2)), so e = θ'(a' - 2) with minimum
#    1 - E[1/s]²/E[1/s²] = 1/(a' - 1) (own derivation). Each curve's fast path is also
#    compared with brute force over lopside's own posterior grid (rounding only).
def quadquad_el(e, m, sd, under, over):
    z = (e - m) / sd
    F, f = stats.norm.cdf(z), stats.norm.pdf(z)
    return sd * sd * (over * ((z * z + 1) * F + z * f) + under * ((z * z + 1) * (1 - F) - z * f))


def quadquad_best(m, sd, under, over):
    g = lambda e: (over * (((e - m) / sd) * stats.norm.cdf((e - m) / sd) + stats.norm.pdf((e - m) / sd))
                   - under * (stats.norm.pdf((e - m) / sd) - ((e - m) / sd) * stats.norm.sf((e - m) / sd)))
    e = optimize.brentq(g, m - 10 * sd, m + 10 * sd, xtol=1e-13 * sd)
    return e, quadquad_el(e, m, sd, under, over)


def check_other_curves(runner, tally):
    G = "7 absolute, quadquad, points and relative squared"
    # absolute on the beta posterior
    d = runner.run("absolute_beta", beta_sections([("curve", "absolute")]), G)
    if d is not None:
        c = BETA
        post = beta_posterior()
        t = Tol(d, 1 - c["h"], 1.0)
        tally.close(G, "absolute: estimate = posterior median", d["case"]["bayes_estimate"],
                    post.median(), t.pos)
    # quadquad on the normal posterior
    c = NORMAL
    m, v = normal_model(c)
    sd = math.sqrt(v)
    for under, over in ((1.0, 4.0), (3.0, 0.5)):
        d = runner.run(f"quadquad_{under}_{over}",
                       normal_sections([("curve", "quadquad"), ("under", under), ("over", over)]), G)
        if d is None:
            continue
        score = quadquad_best(c["mu"], c["tau"], under, over)[1]
        t = Tol(d, c["to"] - c["frm"], score)
        want_e, want_l = quadquad_best(m, sd, under, over)
        e = d["case"]["bayes_estimate"]
        tally.close(G, f"quadquad {under}/{over}: estimate (root of the derivative)", e, want_e, t.pos)
        tally.close(G, f"quadquad {under}/{over}: expected loss at lopside's estimate",
                    d["case"]["expected_loss"], quadquad_el(e, m, sd, under, over), t.score)
        tally.close(G, f"quadquad {under}/{over}: minimum expected loss", d["case"]["expected_loss"],
                    want_l, t.score)
        tally.close(G, f"quadquad {under}/{over}: prior-only risk", d["rule"]["prior_only_risk"],
                    score, t.score)
        s = np.array(d["problem"]["states"]["grid"])
        p = np.array(d["case"]["posterior_grid"])
        curve = np.array(d["case"]["curve"]["expected_loss"])
        xs = np.array(d["case"]["curve"]["estimate"])
        pick = np.arange(0, len(xs), max(1, len(xs) // 400))
        direct = np.array([float(np.sum(p * np.where(x < s, under, over) * (x - s) ** 2)) for x in xs[pick]])
        tally.close(G, f"quadquad {under}/{over}: curve = brute force over the posterior grid "
                       "(max relative deviation)", np.max(np.abs(curve[pick] - direct) / direct), 0, 1e-9)
        # Far from the optimum the curve's values reach 1e6 times the score scale: each is
        # held to the accuracy relative to the larger of the scale and its own size.
        want_c = quadquad_el(xs[pick], m, sd, under, over)
        rel = np.abs(curve[pick] - want_c) / np.maximum(t.score / ACCURACY, np.abs(want_c))
        tally.close(G, f"quadquad {under}/{over}: curve vs the continuous expected loss "
                       "(max deviation relative to max(scale, value))", np.max(rel), 0, ACCURACY)
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
        t = Tol(d, 80.0, 20.0)
        # Conjugate posterior N(2.56, 12.8) (Gelman ch. 2); the cut at ±40 is > 10 sd away.
        pm, psd = 2.56, math.sqrt(12.8)
        est = np.linspace(-30, 30, 241)

        def pay(e):
            return integrate.quad(lambda u: np.interp(e - u, err, val) * stats.norm.pdf(u, pm, psd),
                                  pm - 14 * psd, pm + 14 * psd, points=[e - k for k in err],
                                  epsabs=1e-13, epsrel=1e-12, limit=400)[0]
        cont = np.array([pay(e) for e in est])
        got = np.array(d["case"]["curve"]["expected_loss"])
        tally.close(G, "points: expected loss of every estimate vs quad (max deviation)",
                    np.max(np.abs(got + cont)), 0, t.score)
        e = d["case"]["bayes_estimate"]
        tally.close(G, "points: Bayes estimate has the best continuous payoff on the grid",
                    pay(e), cont.max(), t.score)
        tally.close(G, "points: expected payoff (continuous best)", d["case"]["expected_payoff"],
                    cont.max(), t.score)
        tally.record(G, e < pm, f"points: estimate {e} should aim short of the posterior mean {pm}, "
                                "away from the penalty beyond the target")
    # relative squared on the gamma posterior
    d = runner.run("relative_squared", gamma_sections([("curve", "squared"), ("relative", "yes")]), G)
    if d is not None:
        c = GAMMA
        a0, b0 = c["h"] / 2, c["to"]
        e1 = gamma_cut_moment(c["shape"], c["scale"], a0, b0, -1)
        e2 = gamma_cut_moment(c["shape"], c["scale"], a0, b0, -2)
        score = 1 - e1 * e1 / e2      # the prior-only risk (restricted prior)
        t = Tol(d, b0 - a0, score)
        ksum = sum(c["obs"])
        a_, th_ = gamma_posterior(ksum)
        EA, EB = 1 / (th_ * (a_ - 1)), 1 / (th_ ** 2 * (a_ - 1) * (a_ - 2))
        e = d["case"]["bayes_estimate"]
        tally.close(G, "relative squared: estimate θ'(a' - 2) = E[1/s]/E[1/s²]", e, th_ * (a_ - 2), t.pos)
        tally.close(G, "relative squared: expected loss E[1/s²]e² - 2E[1/s]e + 1 at lopside's estimate",
                    d["case"]["expected_loss"], EB * e * e - 2 * EA * e + 1, t.score)
        tally.close(G, "relative squared: minimum 1/(a' - 1)", d["case"]["expected_loss"],
                    1 / (a_ - 1), t.score)
        tally.close(G, "relative squared: prior-only risk 1 - E[1/s]²/E[1/s²] (restricted prior)",
                    d["rule"]["prior_only_risk"], score, t.score)


# ---------------------------------------------------------------------------------------
# 8. Prior families: problem.prior holds the masses of the clipped cells of the JSON's
#    grid (cell i = [s_i - h/2, s_i + h/2] clipped to [from, to]) from CDF differences,
#    renormalized over the grid (format.md, prior.h); problem.prior_outside_grid is the
#    prior's mass outside [from, to]; a warning when that exceeds 0.1%. References:
#    scipy.stats CDFs; the table family's CDF in closed form (a linear density integrates
#    to a quadratic on each piece); a mixture's CDF is the weighted sum of its parts'.
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
    """The uniform prior without low/high: the density 1/(to - from) on the grid's range."""



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
        # A beta prior on the whole unit interval (from = 0, to = 1) is valid: nothing outside.
        ("beta_unit", [("family", "beta"), ("alpha", 2), ("beta", 5)], [], stats.beta(2, 5),
         [(0, 1, 201)]),
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
            s = check_json_grid(tally, G, d, frm, to, n)
            if isinstance(dist, FlatDist):
                mass, outside = np.diff(cell_edges(s)) / (to - frm), 0.0
            else:
                mass, outside = cell_masses(dist, s)
                mass = mass / mass.sum()
            tally.record(G, outside < 5e-4 or outside > 2e-3,
                         f"test set-up: {tag} leaves {outside} outside, too near 0.1%")
            got = np.array(d["problem"]["prior"])
            tally.close(G, f"{tag}: clipped cell masses (max deviation)", np.max(np.abs(got - mass)), 0,
                        PRIOR_ATOL)
            tally.close(G, f"{tag}: prior_outside_grid = P(X < from) + P(X > to)",
                        d["problem"].get("prior_outside_grid"), outside, PRIOR_ATOL)
            warned = any("prior" in w for w in d["warnings"])
            tally.record(G, warned == (outside > OUTSIDE_WARN),
                         f"{tag}: {outside:.3g} outside, warning {'given' if warned else 'missing'}: "
                         f"{d['warnings']}")


# ---------------------------------------------------------------------------------------
# 9. Choices over grid states: bands (`cuts`, band edges exactly at the cuts) and lines
#    (`at`, linear between, flat outside). References: the continuous model of
#    contmodel.py (quad over the prior restricted to [from, to] times the likelihood;
#    switch points by brentq on the difference of two posterior expected losses). Besides
#    two facts of the discretization the JSON shows, on its own grid: the posterior grid
#    (clipped prior cells times the likelihood, to rounding), and the expected loss of a
#    banded action as the posterior grid's sum with every cell that straddles a cut split
#    by its prior-mass share, which differs from the reported (extrapolated) number by no
#    more than lopside's error estimate, so within the contract's tolerance.
TIMING = dict(frm=100.0, to=1100.0, n=501, mu=600.0, tau=120.0, sigma=80.0, obs=650.0)


def timing_sections(actions, loss, rules=(), c=TIMING, observed=True):
    ev = [("noise", "gaussian"), ("sd", c["sigma"])] + ([("observed", c["obs"])] if observed else [])
    return [("problem", [("title", "Short or long interval"), ("unit", "ms"), ("score_unit", "points")]),
            ("states", [("from", c["frm"]), ("to", c["to"]), ("points", c["n"])]),
            ("prior", [("family", "normal"), ("mean", c["mu"]), ("sd", c["tau"])]),
            ("evidence.clock", ev),
            ("actions", [("labels", ", ".join(actions))]),
            ("loss", loss)] + list(rules)


def band_shares(dist, s, cuts, rows):
    """Loss of every action on every clipped cell of s with the cells that straddle a cut
    split by prior-mass share (rows: one value per band)."""
    e = cell_edges(s)
    cdf = lambda x: dist.cdf(x)
    L = np.zeros((len(rows), len(s)))
    for i in range(len(s)):
        lo, hi = e[i], e[i + 1]
        inner = [c for c in cuts if lo < c < hi]
        pts = [lo] + inner + [hi]
        tot = cdf(hi) - cdf(lo)
        for a, r in enumerate(rows):
            if not inner or tot <= 0:
                L[a, i] = r[int(np.searchsorted(cuts, s[i], side="right"))]
                continue
            L[a, i] = sum((cdf(q) - cdf(p)) / tot * r[int(np.searchsorted(cuts, 0.5 * (p + q), side="right"))]
                          for p, q in zip(pts[:-1], pts[1:]))
    return L


def check_choices(runner, tally):
    G = "9 choices over grid states: bands, lines, switch points"
    c = TIMING
    prior = stats.norm(c["mu"], c["tau"])
    acts = ["short", "unsure", "long"]
    cuts = [500, 600, 701]                 # 600 is a grid point: the band edge lies in its cell
    rows = [[0, 0, 4, 8], [1.5, 1.5, 1.5, 1.5], [8, 4, 0, 0]]
    at = [400, 600, 800]
    lrows = [[0, 2, 9], [2, 2, 2], [9, 2.5, 0]]
    for kind, loss_entries in (
            ("cuts", [("cuts", cuts)] + [(a, r) for a, r in zip(acts, rows)]),
            ("at", [("at", at)] + [(a, r) for a, r in zip(acts, lrows)])):
        sections = timing_sections(acts, loss_entries)
        d = runner.run(f"choices_{kind}", sections, G)
        if d is None:
            continue
        model = cm.Model(ini_text(sections))
        t = Tol(d, c["to"] - c["frm"], model.loss.scale)
        s = np.array(d["problem"]["states"]["grid"])
        mass, _ = cell_masses(prior, s)
        post = grid_posterior(np.log(mass / mass.sum()), stats.norm.logpdf(c["obs"], s, c["sigma"]))
        pg = np.array(d["case"]["posterior_grid"])
        # Same grid, same formula: prior masses to 1e-12, likelihood terms to rounding.
        tally.close(G, f"{kind}: posterior grid vs scipy on the JSON's grid (max deviation)",
                    np.max(np.abs(pg - post)), 0, 1e-12)
        el = model.choice_losses(model.case_dens())
        got = {a["action"]: a["expected_loss"] for a in d["case"]["actions"]}
        for a, e in zip(acts, el):
            tally.close(G, f"{kind}: expected loss of {a} (continuous model)", got.get(a), e, t.score)
        if kind == "cuts":
            L = band_shares(prior, s, cuts, rows)
            for a, e in zip(acts, L @ pg):
                tally.close(G, f"cuts: expected loss of {a} = posterior grid with band shares",
                            got.get(a), e, t.score)
        tally.record(G, d["case"]["bayes_action"] == acts[int(np.argmin(el))],
                     f"{kind}: Bayes action {d['case']['bayes_action']}, expected {acts[int(np.argmin(el))]}")
    # Two actions: switch points, within accuracy × the measurement span.
    two = [
        ("cuts", [("cuts", 600), ("short", [0, 5]), ("long", [3, 0])]),
        ("at", [("at", [400, 800]), ("short", [0, 6]), ("long", [6, 1])]),
        ("three cuts", [("cuts", [450, 600, 750]), ("short", [0, 2, 6, 2]), ("long", [5, 3, 0, 4])]),
    ]
    for kind, loss_entries in two:
        sections = timing_sections(["short", "long"], loss_entries)
        d = runner.run(f"switch_{kind.replace(' ', '_')}", sections, G)
        if d is None:
            continue
        model = cm.Model(ini_text(sections))
        br, want, _ = model.bayes_risk()
        xs = d["rule"]["grid"]["x"]
        t = Tol(d, c["to"] - c["frm"], model.loss.scale, meas=xs[-1] - xs[0])
        got = [p["x"] for p in d["rule"]["switch_points"]]
        ok = len(got) == len(want) and all(abs(a - b) <= t.meas for a, b in zip(got, want))
        tally.record(G, ok, f"{kind}: switch points {got}, continuous {want} (brentq, ±{t.meas:.3g})")
        tally.close(G, f"{kind}: Bayes risk (continuous model)", d["rule"]["bayes_risk"], br, t.score)


# ---------------------------------------------------------------------------------------
# 10. Rule comparisons. A rule's risk is ∫ over the measurement of the predictive density
#     times the loss of its decision. References: choices, the continuous model of
#     contmodel.py (threshold rules: quad over the two regions split at the threshold;
#     believed rules: the regions of the Bayes rule of the believed model, judged under the
#     true one); estimates, closed forms of the normal model. Tolerances: accuracy × the
#     score scale. Regret ≥ 0 holds exactly (design.md: no impossible numbers).
def check_rules(runner, tally):
    G = "10 rule comparisons: threshold risk, regret, believed rules"
    c = TIMING
    rows = [[0, 5], [3, 0]]
    rules = [("rule.early", [("kind", "threshold"), ("at", 560)]),
             ("rule.late", [("kind", "threshold"), ("at", 640)]),
             ("rule.never", [("kind", "threshold"), ("at", 5000)]),
             ("rule.same", [("kind", "believed"), ("prior.sd", c["tau"])]),
             ("rule.vague", [("kind", "believed"), ("prior.sd", 300)]),
             ("rule.sharp", [("kind", "believed"), ("evidence.clock.sd", 40)])]
    sections = timing_sections(["short", "long"], [("cuts", 600), ("short", rows[0]), ("long", rows[1])],
                               rules)
    d = runner.run("rules_choice", sections, G)
    if d is not None:
        text = ini_text(sections)
        model = cm.Model(text)
        ch = model.channel()
        lmax = model.loss.scale
        t = Tol(d, c["to"] - c["frm"], lmax)
        r = d["rule"]
        br = model.bayes_risk()[0]
        rules_out = {x["name"]: x for x in d["rules"]}
        for name, th in (("early", 560.0), ("late", 640.0), ("never", 5000.0)):
            tally.close(G, f"threshold at {th}: risk (continuous model)",
                        rules_out.get(name, {}).get("risk"), model.threshold_risk(ch, 1, th), t.score)
        # "never" always takes the first action: 5·P(s >= 600) under the prior restricted to
        # [100, 1100], symmetric about 600: 5/2 (closed form).
        tally.close(G, "threshold beyond every measurement: risk = 5·P(s >= 600) = 2.5",
                    rules_out.get("never", {}).get("risk"), 2.5, t.score)
        for name, path, value in (("vague", "prior.sd", "300"), ("sharp", "evidence.clock.sd", "40")):
            b = cm.Model(text, [(path, value)])
            regions, sw, _ = b.bayes_choice_rule(b.channel(ch.name), 1)
            tally.record(G, len(sw) == 1, f"believed {name}: {len(sw)} switch points in the believed model")
            want = model.region_risk(ch, 1, regions)
            tally.close(G, f"believed {name}: risk under the true model at its switch point",
                        rules_out.get(name, {}).get("risk"), want, t.score)
        tally.close(G, "Bayes risk (continuous model)", r["bayes_risk"], br, t.score)
        # Deciding on the prior alone: min(5·P(s >= 600), 3·P(s < 600)) = min(2.5, 1.5).
        tally.close(G, "prior-only risk = min over actions of the prior expected loss = 1.5",
                    r["prior_only_risk"], 1.5, t.score)
        for x in d["rules"]:
            tally.record(G, x.get("regret") is not None and x["regret"] >= 0,
                         f"{x['name']}: regret {x.get('regret')} < 0")
            tally.close(G, f"{x['name']}: regret = risk - Bayes risk", x.get("regret"),
                        (x.get("risk") or math.nan) - r["bayes_risk"], t.score)
        tally.close(G, "believed with the true prior: regret 0", rules_out.get("same", {}).get("regret"),
                    0, t.score)
        tally.close(G, "believed with the true prior: risk = Bayes risk",
                    rules_out.get("same", {}).get("risk"), r["bayes_risk"], t.score)

    # Estimates: the normal model of group 1 with squared loss. For any rule deciding e(x),
    # E[(e - s)² | x] = v + (e - m(x))² (posterior mean m(x), variance v), so: the
    # posterior mean, median and mode (all m(x) for a normal posterior) have risk v; the
    # maximum-likelihood estimate x (the state maximizing N(x; s, σ/√n), inside the range
    # for all but < 1e-20 of the predictive) has risk E[(x - s)²] = σ²/n; a believed model
    # with prior sd τ' (or noise sd σ') estimates m'(x) = μ + w'(x - μ),
    # w' = τ'²/(τ'² + σ'²/n), and since m is the posterior mean,
    # E[(m' - s)²] = v + (w' - w)²(τ² + σ²/n) (own derivation). The restriction to
    # [60, 1340] moves each by < 1e-12 of the score scale τ².
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
    t = Tol(d, c["to"] - c["frm"], c["tau"] ** 2)
    r = d["rule"]
    rules_out = {x["name"]: x for x in d["rules"]}
    risk = lambda name: rules_out.get(name, {}).get("risk")
    vpred = c["tau"] ** 2 + c["sigma"] ** 2 / n
    w = c["tau"] ** 2 / vpred
    tally.close(G, "estimates: Bayes risk v", r["bayes_risk"], v, t.score)
    for name in ("mean", "median", "mode", "same"):
        tally.close(G, f"estimates: {name} risk v (normal posterior: mean = median = mode)",
                    risk(name), v, t.score)
    tally.close(G, "estimates: max_likelihood risk σ²/n", risk("ml"), c["sigma"] ** 2 / n, t.score)
    for name, tau_b, sigma_b in (("vague", 2 * c["tau"], c["sigma"]), ("sharp", c["tau"], c["sigma"] / 2)):
        wb = tau_b ** 2 / (tau_b ** 2 + sigma_b ** 2 / n)
        tally.close(G, f"estimates: believed {name} risk v + (w' - w)²(τ² + σ²/n)", risk(name),
                    v + (w - wb) ** 2 * vpred, t.score)
    for x in d["rules"]:
        tally.record(G, x.get("regret") is not None and x["regret"] >= 0,
                     f"{x['name']}: regret {x.get('regret')} < 0")
        tally.close(G, f"estimates: {x['name']}: regret = risk - Bayes risk", x.get("regret"),
                    (x.get("risk") or math.nan) - r["bayes_risk"], t.score)
    tally.close(G, "estimates: believed with the true values: regret 0",
                rules_out.get("same", {}).get("regret"), 0, t.score)


# ---------------------------------------------------------------------------------------
# 11. Responses r(s) and noise families: the posterior recomputed with scipy on the JSON's
#     grid from the known r(s) (clipped prior cell masses from scipy CDFs, likelihoods from
#     scipy.stats logpdf/logpmf, normalized with logsumexp): same grid, same formula, so
#     every cell agrees to rounding, 1e-12 absolute. The posterior mean against the
#     continuous model (contmodel.py, quad), within accuracy × the state range. Count
#     channels: the rule's probabilities are exact sums Σ prior·pmf over the grid, to
#     1e-12, and the counts hold every count with predictive mass above 1e-12.
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
        s = np.array(d["problem"]["states"]["grid"])
        if pdist is None:
            mass = np.diff(cell_edges(s)) / (to - frm)
        else:
            mass, _ = cell_masses(pdist, s)
            mass = mass / mass.sum()
        post = grid_posterior(np.log(mass), loglik(s))
        pg = np.array(d["case"]["posterior_grid"])
        tally.close(G, f"{name}: posterior grid (max deviation)", np.max(np.abs(pg - post)), 0, 1e-12)
        model = cm.Model(ini_text(sections))
        t = Tol(d, to - frm, 1.0)
        tally.close(G, f"{name}: posterior mean (continuous model)", d["case"]["posterior"]["mean"],
                    model.case(mode=False)["posterior"]["mean"], t.pos)
        if pmf is not None:
            ks = np.array(d["rule"]["grid"]["x"])
            prob = np.array(d["rule"]["grid"]["probability"])
            want = np.array([float(mass @ pmf(k, s)) for k in ks])
            tally.close(G, f"{name}: rule probability of every count (max deviation)",
                        np.max(np.abs(prob - want)), 0, 1e-12)
            beyond = np.array([float(mass @ pmf(k, s)) for k in range(int(ks[-1]) + 1, int(ks[-1]) + 400)])
            tally.record(G, list(ks) == list(range(int(ks[-1]) + 1)) and
                         (len(beyond) == 0 or beyond.max() <= 1e-12),
                         f"{name}: counts 0..{ks[-1]} leave out a count of predictive mass "
                         f"{beyond.max() if len(beyond) else 0:.3g} > 1e-12")



# ---------------------------------------------------------------------------------------
# 12. Estimates without an estimate grid are real numbers (format.md). Normal prior N(0, 1)
#     on -8..8 (h = 0.001), one gaussian reading 0.7 of sd 1: the conjugate posterior is
#     N(0.35, 0.5) (Gelman et al. 2013, sec. 2.5, from memory). The Bayes estimate of
#     squared loss is its mean, of absolute loss its median, of linlin its quantile
#     under/(under + over) (Berger 1985, sec. 4.4.2, from memory): from scipy.stats.norm,
#     within accuracy × the state range. Expected losses: scipy's quad of the loss at that
#     estimate over the continuous posterior, within accuracy × the score scale (the
#     prior-only risk).
def check_continuous_estimates(runner, tally):
    G = "12 real estimates without an estimate grid: mean, median, quantile (scipy)"
    frm, to = -8.0, 8.0
    post = stats.norm(0.35, math.sqrt(0.5))
    # Score scales, the prior-only risks under N(0, 1) (cut at ±8 sd: < 1e-13 off): the
    # variance 1, E|s| = √(2/π), and (1 + 3)·φ(Φ⁻¹(1/4)) (group 3's newsvendor form).
    curves = [("squared", [("curve", "squared")], post.mean(), lambda e, u: (e - u) ** 2, 1.0),
              ("absolute", [("curve", "absolute")], post.median(), lambda e, u: abs(e - u),
               math.sqrt(2 / math.pi)),
              ("linlin", [("curve", "linlin"), ("under", 1), ("over", 3)], post.ppf(0.25),
               lambda e, u: 3 * (e - u) if e > u else (u - e), 4 * stats.norm.pdf(stats.norm.ppf(0.25)))]
    for name, loss, want, f, score in curves:
        sections = [("problem", [("title", f"Real estimate, {name} loss")]),
                    ("states", [("from", frm), ("to", to), ("points", 16001)]),
                    ("prior", [("family", "normal"), ("mean", 0), ("sd", 1)]),
                    ("evidence", [("noise", "gaussian"), ("sd", 1), ("observed", 0.7)]),
                    ("actions", [("estimate", "yes")]),
                    ("loss", loss)]
        d = runner.run(f"continuous_{name}", sections, G)
        if d is None:
            continue
        t = Tol(d, to - frm, score)
        e = d["case"]["bayes_estimate"]
        tally.close(G, f"{name}: Bayes estimate vs scipy", e, want, t.pos)
        m, sd = post.mean(), post.std()
        ref, _ = integrate.quad(lambda u: f(e, u) * post.pdf(u), m - 12 * sd, m + 12 * sd,
                                points=[e], epsabs=0, epsrel=1e-12, limit=200)
        tally.close(G, f"{name}: expected loss vs quad", d["case"]["expected_loss"], ref, t.score)
        tally.close(G, f"{name}: prior-only risk", d["rule"]["prior_only_risk"], score, t.score)


def main():
    checks = [check_normal, check_conjugate_counts, check_linlin, check_linex, check_two_cues,
              check_tolerance, check_other_curves, check_prior_families, check_choices,
              check_rules, check_responses, check_continuous_estimates, print_notes]
    return refkit.main("lopside_grid_", checks, context=Runner)


if __name__ == "__main__":
    sys.exit(main())
