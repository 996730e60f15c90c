"""The continuous model of a lopside problem file, computed without any grid.

check_continuous.py compares lopside with this module. It reads the same INI text lopside
reads (configparser), builds the model format.md describes with the grid taken literally as
an interval: the state lies in [from, to], the prior is the family's density restricted to
[from, to] and its support and renormalized, evidence and losses exactly as stated (band
edges where the file puts them, lines linear between knots and flat outside), actions
continuous unless an estimate grid is given. Every number comes from adaptive quadrature
(scipy.integrate.quad), root finding (scipy.optimize.brentq) or a closed form named beside
it. Scans over a state or measurement axis only *bracket* roots and modes; the numbers
themselves are always refined by brentq / minimize_scalar on quadrature values.

The measurement axis of a rule is the channel's one-number summary (format.md): the mean of
the readings (gaussian), exp(mean of log readings) (lognormal: the geometric mean, the axis
lopside's rule grid uses), the sum of the counts (poisson, binomial). A switch point of a
count channel is the first count at which the new action is taken.
"""

import bisect
import configparser
import math

import numpy as np
from scipy import integrate, optimize, special

LOG2PI = math.log(2 * math.pi)
EPSREL = 1e-11          # quad's relative target; numbers are compared at 1e-6 of a scale
LIMIT = 400


def _log(x):
    return math.log(x) if x > 0 else -math.inf


def nums(v):
    return [float(x) for x in str(v).replace("\n", " ").split(",") if x.strip()]


def words(v):
    return [x.strip() for x in str(v).replace("\n", " ").split(",") if x.strip()]


def parse_ini(text):
    cp = configparser.ConfigParser(inline_comment_prefixes=(";", "#"), interpolation=None,
                                   comment_prefixes=(";", "#"), strict=True)
    cp.optionxform = str
    cp.read_string(text)
    return {name: dict(cp[name]) for name in cp.sections()}


def apply_override(sections, path, value):
    """`section.key = value` with the longest section name that matches (format.md paths)."""
    best = None
    for name in sections:
        if path.startswith(name + ".") and (best is None or len(name) > len(best)):
            best = name
    if best is None:
        raise ValueError(f"override {path}: no section")
    sections[best][path[len(best) + 1:]] = value


# ---------------------------------------------------------------------------------------
# Prior families: log density (normalized on the family's full support), support, kinks.
def prior_family(p):
    fam = p["family"]
    g = lambda k: float(p[k])
    if fam == "normal":
        m, sd = g("mean"), g("sd")
        return (lambda s: -0.5 * ((s - m) / sd) ** 2 - math.log(sd) - 0.5 * LOG2PI), -math.inf, math.inf, []
    if fam == "uniform":
        lo = g("low") if "low" in p else -math.inf
        hi = g("high") if "high" in p else math.inf
        return (lambda s: 0.0 if lo <= s <= hi else -math.inf), lo, hi, [lo, hi]
    if fam == "lognormal":
        lm, ls = math.log(g("median")), g("log_sd")
        return (lambda s: -math.log(s) - math.log(ls) - 0.5 * LOG2PI - 0.5 * ((math.log(s) - lm) / ls) ** 2
                if s > 0 else -math.inf), 0.0, math.inf, []
    if fam == "gamma":
        k, th = g("shape"), g("scale")
        c = -math.lgamma(k) - k * math.log(th)
        return (lambda s: (k - 1) * _log(s) - s / th + c if s > 0 else
                (c if k == 1 and s == 0 else -math.inf)), 0.0, math.inf, []
    if fam == "beta":
        a, b = g("alpha"), g("beta")
        c = -special.betaln(a, b)
        return (lambda s: (a - 1) * _log(s) + (b - 1) * _log(1 - s) + c if 0 < s < 1 else -math.inf), 0.0, 1.0, []
    if fam == "student":
        c0, sc, df = g("center"), g("scale"), g("df")
        c = math.lgamma((df + 1) / 2) - math.lgamma(df / 2) - 0.5 * math.log(df * math.pi) - math.log(sc)
        return (lambda s: c - (df + 1) / 2 * math.log1p(((s - c0) / sc) ** 2 / df)), -math.inf, math.inf, []
    if fam == "exponential":
        mu = g("mean")
        return (lambda s: -s / mu - math.log(mu) if s >= 0 else -math.inf), 0.0, math.inf, []
    if fam == "table":
        at, dens = nums(p["at"]), nums(p["density"])
        area = sum((at[i + 1] - at[i]) * (dens[i] + dens[i + 1]) / 2 for i in range(len(at) - 1))

        def lt(s):
            if s < at[0] or s > at[-1]:
                return -math.inf
            return _log(float(np.interp(s, at, dens)) / area)
        return lt, at[0], at[-1], list(at)
    raise ValueError(f"prior family {fam}")


def prior_model(sections):
    p = sections["prior"]
    if p["family"] != "mixture":
        return prior_family(p)
    parts = []
    for name in words(p["parts"]):
        q = sections[f"prior.{name}"]
        parts.append((float(q["weight"]),) + prior_family(q))
    wsum = sum(w for w, *_ in parts)
    lo = min(x[2] for x in parts)
    hi = max(x[3] for x in parts)
    kinks = sorted(set(k for x in parts for k in x[4]))

    def lp(s):
        terms = [math.log(w / wsum) + f(s) for w, f, *_ in parts if w > 0]
        m = max(terms)
        return m if m == -math.inf else m + math.log(sum(math.exp(t - m) for t in terms))
    return lp, lo, hi, kinks


# ---------------------------------------------------------------------------------------
# Responses r(s) and noise families.
def response_model(e):
    kind = e.get("response", "identity")
    g = lambda k: float(e[k])
    if kind == "identity":
        return (lambda s: s), []
    if kind == "linear":
        o, sl = g("offset"), g("slope")
        return (lambda s: o + sl * s), []
    if kind == "power":
        o, gn, ex = g("offset"), g("gain"), g("exponent")
        return (lambda s: o + gn * max(s, 0.0) ** ex), []
    if kind == "saturating":
        b, t, h, ex = g("base"), g("top"), g("half"), g("exponent")
        return (lambda s: b + t * max(s, 0.0) ** ex / (max(s, 0.0) ** ex + h ** ex)), []
    if kind == "logistic":
        lo, hi, mid, w = g("low"), g("high"), g("mid"), g("width")
        return (lambda s: lo + (hi - lo) * special.expit((s - mid) / w)), []
    if kind == "table":
        at, val = nums(e["at"]), nums(e["value"])
        return (lambda s: float(np.interp(s, at, val))), list(at)
    raise ValueError(f"response {kind}")


def _norm_logpdf(x, m, sd):
    return -0.5 * ((x - m) / sd) ** 2 - math.log(sd) - 0.5 * LOG2PI


def _poisson_logpmf(k, mu):
    if mu <= 0:
        return 0.0 if k == 0 else -math.inf
    return k * math.log(mu) - mu - math.lgamma(k + 1)


def _binom_logpmf(k, n, p):
    if p <= 0:
        return 0.0 if k == 0 else -math.inf
    if p >= 1:
        return 0.0 if k == n else -math.inf
    return (math.lgamma(n + 1) - math.lgamma(k + 1) - math.lgamma(n - k + 1)
            + k * math.log(p) + (n - k) * math.log1p(-p))


class Channel:
    def __init__(self, name, e):
        self.name = name
        self.noise = e["noise"]
        self.r, self.kinks = response_model(e)
        self.repeats = int(e.get("repeats", 1))
        self.observed = nums(e["observed"]) if "observed" in e else []
        g = lambda k, d=None: float(e[k]) if k in e else d
        self.sd, self.weber, self.floor = g("sd"), g("weber"), g("sd_floor", 0.0)
        self.log_sd, self.window, self.trials = g("log_sd"), g("window", 1.0), g("trials")
        self.counts = self.noise in ("poisson", "binomial")

    def scalar_sd(self, r):
        return max(self.weber * r, self.floor)

    def loglik1(self, y, s):
        """One reading y given state s (observed values)."""
        return self.logsum(y, s, 1)

    def logsum(self, t, s, n):
        """Density (or pmf) of the n-reading summary t given s (module docstring)."""
        r = self.r(s)
        if self.noise == "gaussian":
            return _norm_logpdf(t, r, self.sd / math.sqrt(n))
        if self.noise == "scalar":
            assert n == 1
            return _norm_logpdf(t, r, self.scalar_sd(r))
        if self.noise == "lognormal":
            if t <= 0 or r <= 0:
                return -math.inf
            return _norm_logpdf(math.log(t), math.log(r), self.log_sd / math.sqrt(n)) - math.log(t)
        if self.noise == "poisson":
            return _poisson_logpmf(int(round(t)), n * self.window * r)
        if self.noise == "binomial":
            return _binom_logpmf(int(round(t)), int(n * self.trials), r)
        raise ValueError(self.noise)

    def cdf(self, t, s, n):
        """P(summary <= t | s); counts: P(K <= floor(t))."""
        r = self.r(s)
        if self.noise == "gaussian":
            return special.ndtr((t - r) / (self.sd / math.sqrt(n)))
        if self.noise == "scalar":
            return special.ndtr((t - r) / self.scalar_sd(r))
        if self.noise == "lognormal":
            if t <= 0:
                return 0.0
            return special.ndtr((math.log(t) - math.log(r)) / (self.log_sd / math.sqrt(n)))
        k = math.floor(t)
        if k < 0:
            return 0.0
        if self.noise == "poisson":
            mu = n * self.window * r
            return 1.0 if mu <= 0 else special.pdtr(k, mu)
        N = int(n * self.trials)
        return 1.0 if k >= N else special.bdtr(k, N, min(max(r, 0.0), 1.0))


# ---------------------------------------------------------------------------------------
# One positive function exp(logf) on [a, b]: region, mode and integrals by quad.
class Dens:
    def __init__(self, logf, a, b, breaks=(), scan=401, hints=()):
        self.logf = logf
        xs = sorted(set(np.linspace(a, b, scan).tolist()
                        + [x for x in list(breaks) + list(hints) if a <= x <= b]))
        lv = np.array([logf(x) for x in xs])
        i = int(np.argmax(lv))
        if not math.isfinite(lv[i]):
            raise ValueError("density is zero on the whole interval")
        l, h = xs[max(i - 1, 0)], xs[min(i + 1, len(xs) - 1)]
        mode, M = xs[i], float(lv[i])
        if h > l:
            res = optimize.minimize_scalar(lambda s: -logf(s), bounds=(l, h), method="bounded",
                                           options={"xatol": 1e-13 * (b - a)})
            if -res.fun > M:
                mode, M = float(res.x), float(-res.fun)
        self.mode, self.M = mode, M
        # The region: every scan point within 60 of the maximum, one scan point further
        # out, and the bracket of the refined mode (a peak narrower than the scan).
        above = np.nonzero(lv > M - 60)[0]
        if len(above):
            lo = min(xs[max(above[0] - 1, 0)], l)
            hi = max(xs[min(above[-1] + 1, len(xs) - 1)], h)
        else:
            lo, hi = l, h
        pts = {lo, hi, mode}
        pts.update(x for x in breaks if lo < x < hi)
        # Where logf has dropped by 2, 12 and 40 on either side: quad then sees the scale.
        for d in (2.0, 12.0, 40.0):
            f = lambda s: logf(s) - (M - d)
            for end in (lo, hi):
                if end != mode and f(end) < 0:
                    try:
                        pts.add(optimize.brentq(f, min(end, mode), max(end, mode), xtol=1e-14 * (b - a)))
                    except ValueError:
                        pass
        self.a, self.b, self.lo, self.hi = a, b, lo, hi
        self.pts = sorted(pts)
        self.cum = [0.0]
        for p, q in zip(self.pts[:-1], self.pts[1:]):
            self.cum.append(self.cum[-1] + self._quad(lambda s: 1.0, p, q, 1e-15 * (hi - lo)))
        self.Z = self.cum[-1]

    def w(self, s):
        return math.exp(self.logf(s) - self.M)

    def _quad(self, g, p, q, epsabs, points=None):
        if q <= p:
            return 0.0
        if q - p < 1e-9 * (self.b - self.a):
            # Too short for quad's error estimate: the midpoint rule, exact to O(width³).
            m = 0.5 * (p + q)
            return g(m) * self.w(m) * (q - p)
        pts = None if not points else [x for x in points if p < x < q] or None
        return integrate.quad(lambda s: g(s) * self.w(s), p, q, epsabs=epsabs, epsrel=EPSREL,
                              limit=LIMIT, points=pts)[0]

    def integ(self, g, lo=None, hi=None, points=(), scale=1.0):
        """∫ g·exp(logf - M) over [lo, hi] ∩ region, split at the region's points and at
        `points` (kinks of g). scale: a typical |g|, for the absolute target."""
        lo = self.lo if lo is None else max(lo, self.lo)
        hi = self.hi if hi is None else min(hi, self.hi)
        Z = getattr(self, "Z", 1.0)
        eps = 1e-13 * Z * scale
        cuts = sorted(set([lo, hi] + [x for x in list(self.pts) + list(points) if lo < x < hi]))
        return sum(self._quad(g, p, q, eps) for p, q in zip(cuts[:-1], cuts[1:]))

    def E(self, g, points=(), scale=1.0):
        return self.integ(g, points=points, scale=scale) / self.Z

    def sign_whole(self, g, points=()):
        """The sign of E[g] over all of [a, b], not only the region: g·exp(logf - M') with
        M' the largest logf where g is not 0 (on a fine scan and at the kinks), integrated
        to relative precision; for differences far in a tail, below exp's range there."""
        cuts = sorted(set([self.a, self.b] + [x for x in list(self.pts) + list(points)
                                               if self.a < x < self.b]))
        xs = sorted(set(np.linspace(self.a, self.b, 4001).tolist() + cuts))
        top = max((self.logf(x) for x in xs if g(x) != 0), default=-math.inf)
        if not math.isfinite(top):
            return 0
        total = 0.0
        for p, q in zip(cuts[:-1], cuts[1:]):
            if q > p:
                total += integrate.quad(lambda x: g(x) * math.exp(min(self.logf(x) - top, 700.0)),
                                        p, q, epsabs=0.0, epsrel=EPSREL, limit=LIMIT)[0]
        return (total > 0) - (total < 0)

    def cdf(self, t):
        if t <= self.lo:
            return 0.0
        if t >= self.hi:
            return 1.0
        j = bisect.bisect_right(self.pts, t) - 1
        return (self.cum[j] + self._quad(lambda s: 1.0, self.pts[j], t, 1e-13 * self.Z)) / self.Z

    def quantile(self, q):
        return optimize.brentq(lambda t: self.cdf(t) - q, self.lo, self.hi,
                               xtol=1e-13 * (self.b - self.a), rtol=1e-15)

    def pdf(self, s):
        return self.w(s) / self.Z


# ---------------------------------------------------------------------------------------
# Losses.
class ChoiceLoss:
    """Actions over grid states: rows as functions of s (sign: +1 loss, -1 payoff)."""

    def __init__(self, labels, sec, sign):
        self.labels, self.sign = labels, sign
        if "cuts" in sec:
            cuts = nums(sec["cuts"])
            rows = [nums(sec[a]) for a in labels]
            self.fns = [(lambda s, r=r: sign * r[bisect.bisect_right(cuts, s)]) for r in rows]
            self.kinks = cuts
        else:
            at = nums(sec["at"])
            rows = [nums(sec[a]) for a in labels]
            self.fns = [(lambda s, r=r: sign * float(np.interp(s, at, r))) for r in rows]
            self.kinks = at
        self.scale = max(abs(x) for r in rows for x in r)

    def min_loss(self, s):
        return min(f(s) for f in self.fns)


class CurveLoss:
    def __init__(self, sec, sign, actions_sec):
        self.curve = sec["curve"]
        self.sign = sign
        self.relative = sec.get("relative", "no") == "yes"
        g = lambda k, d=None: float(sec[k]) if k in sec else d
        c = self.curve
        self.kinks = [0.0]
        if c == "squared" or c == "absolute":
            sc = g("scale", 1.0)
            self.f = (lambda e: sc * e * e) if c == "squared" else (lambda e: sc * abs(e))
            self.scale_par = sc
        elif c == "linlin":
            u, o = g("under"), g("over")
            self.under, self.over = u, o
            self.f = lambda e: u * max(-e, 0.0) + o * max(e, 0.0)
        elif c == "quadquad":
            u, o = g("under"), g("over")
            self.under, self.over = u, o
            self.f = lambda e: (u if e < 0 else o) * e * e
        elif c == "linex":
            a, sc = g("a"), g("scale", 1.0)
            self.a, self.scale_par = a, sc
            self.f = lambda e: sc * (math.expm1(a * e) - a * e)
        elif c == "tolerance":
            if "half_width" in sec:
                self.below = self.above = g("half_width")
            else:
                self.below, self.above = g("below"), g("above")
            self.inside, self.outside = g("inside", 0.0), g("outside")
            lo, hi, ins, out = -self.below, self.above, self.inside, self.outside
            self.f = lambda e: sign * (ins if lo <= e <= hi else out)
            self.kinks = [lo, hi]
            self.fixed_scale = max(abs(ins), abs(out))
            self.best_known = sign * (ins if sign * ins <= sign * out else out)
        elif c == "points":
            err, val = nums(sec["error"]), nums(sec["value"])
            self.err, self.val = err, val
            self.f = lambda e: sign * float(np.interp(e, err, val))
            self.kinks = err
            self.fixed_scale = max(abs(v) for v in val)
            self.best_known = min(sign * v for v in val)
        else:
            raise ValueError(c)
        if c not in ("tolerance", "points"):
            self.best_known = 0.0
        self.grid = None
        if any(k in actions_sec for k in ("from", "to", "points")):
            self.grid = (actions_sec.get("from"), actions_sec.get("to"), actions_sec.get("points"))

    def loss(self, est, s):
        e = (est - s) / s if self.relative else est - s
        return self.f(e)

    def s_kinks(self, est):
        """States where loss(est, ·) has a kink or a jump."""
        if self.relative:
            return [est / (1 + k) for k in self.kinks if 1 + k > 0]
        return [est - k for k in self.kinks]


# ---------------------------------------------------------------------------------------
class Model:
    def __init__(self, text, overrides=()):
        sec = parse_ini(text)
        for path, value in overrides:
            apply_override(sec, path, value)
        self.sec = sec
        st = sec["states"]
        self.frm, self.to = float(st["from"]), float(st["to"])
        self.span = self.to - self.frm
        self.accuracy = float(sec["problem"].get("accuracy", "1e-6"))
        lp, slo, shi, pk = prior_model(sec)
        self.logprior = lp
        self.a, self.b = max(self.frm, slo), min(self.to, shi)
        self.channels = []
        for name in sec:
            if name == "evidence" or name.startswith("evidence."):
                self.channels.append(Channel(name.split(".", 1)[1] if "." in name else "evidence", sec[name]))
        self.breaks = sorted(set(k for k in pk if self.a < k < self.b)
                             | set(k for c in self.channels for k in c.kinks if self.a < k < self.b))
        acts = sec["actions"]
        self.orientation = "payoff" if "payoff" in sec else "loss"
        sign = -1.0 if self.orientation == "payoff" else 1.0
        lsec = sec[self.orientation]
        if "labels" in acts:
            self.kind = "choice"
            self.loss = ChoiceLoss(words(acts["labels"]), lsec, sign)
            self.breaks = sorted(set(self.breaks) | set(k for k in self.loss.kinks if self.a < k < self.b))
        else:
            self.kind = "estimate"
            self.loss = CurveLoss(lsec, sign, acts)
            if self.loss.grid is not None:
                f, t, n = self.loss.grid
                f = self.frm if f is None else float(f)
                t = self.to if t is None else float(t)
                n = 1001 if n is None else int(n)
                self.est_grid = np.linspace(f, t, n).tolist()
        self.prior = Dens(lp, self.a, self.b, self.breaks)
        self._scale = None

    # --- scales (the contract's tolerance units)
    def score_scale(self):
        if self.kind == "choice":
            return self.loss.scale
        if self.loss.curve in ("tolerance", "points"):
            return self.loss.fixed_scale
        if self._scale is None:
            self._scale = abs(self.estimate(self.prior)[1])
        return self._scale

    # --- posteriors
    def dens(self, loglik, hints=()):
        lp = self.logprior
        return Dens(lambda s: lp(s) + loglik(s), self.a, self.b, self.breaks, hints=hints)

    def case_dens(self):
        obs = [(c, y) for c in self.channels for y in c.observed]
        if not obs:
            return self.prior
        return self.dens(lambda s: sum(c.loglik1(y, s) for c, y in obs))

    def summary_dens(self, ch, t, n):
        return self.dens(lambda s: ch.logsum(t, s, n))

    def summaries(self, D, mode=True):
        out = {"mean": D.mode + D.E(lambda s: s - D.mode, scale=self.span)}
        m = out["mean"]
        out["sd"] = math.sqrt(D.E(lambda s: (s - m) ** 2, scale=self.span ** 2))
        for key, q in (("median", 0.5), ("q05", 0.05), ("q95", 0.95)):
            out[key] = D.quantile(q)
        if mode:
            out["mode"] = D.mode
        return out

    # --- decisions under one posterior D
    def choice_losses(self, D):
        return [D.E(f, points=self.loss.kinks, scale=self.loss.scale) for f in self.loss.fns]

    def best_choice(self, D):
        """The action of least expected loss under D. Expected losses within quad's
        absolute target of the best are told apart by their difference integrated over the
        whole range to relative precision: far in a tail both can be 1e-28 while the
        continuous model still prefers one."""
        els = self.choice_losses(D)
        best = int(np.argmin(els))
        near = 1e-11 * max(self.loss.scale, 1e-300)
        for a in range(len(els)):
            if a != best and abs(els[a] - els[best]) <= near:
                fa, fb = self.loss.fns[a], self.loss.fns[best]
                if D.sign_whole(lambda s: fa(s) - fb(s), points=self.loss.kinks) < 0:
                    best = a
        return best

    def EL(self, D, est):
        L = self.loss
        return D.E(lambda s: L.loss(est, s), points=L.s_kinks(est), scale=self.score_scale_hint())

    def score_scale_hint(self):
        L = self.loss
        return getattr(L, "fixed_scale", None) or 1.0

    def estimate(self, D):
        """(Bayes estimate, its expected loss) under D."""
        L = self.loss
        if L.grid is not None:
            els = [self.EL(D, g) for g in self.est_grid]
            i = int(np.argmin(els))
            return self.est_grid[i], els[i]
        c = L.curve
        if c == "squared" and not L.relative:
            # Squared loss: the posterior mean, expected loss = scale·variance
            # (Berger 1985, Sec. 2.4.2, from memory).
            m = D.mode + D.E(lambda s: s - D.mode, scale=self.span)
            return m, L.scale_par * D.E(lambda s: (s - m) ** 2, scale=self.span ** 2)
        if c == "squared":
            # Relative squared error ((e - s)/s)²: minimizing e²E[s⁻²] - 2eE[s⁻¹] + 1 gives
            # e = E[1/s]/E[1/s²] (own derivation).
            e1 = D.E(lambda s: 1 / s)
            e2 = D.E(lambda s: 1 / s ** 2)
            e = e1 / e2
            return e, L.scale_par * (1 - e1 * e1 / e2)
        if c == "absolute" and not L.relative:
            # Absolute loss: the posterior median (Berger 1985, Sec. 2.4.2, from memory).
            e = D.quantile(0.5)
            return e, self.EL(D, e)
        if c == "linlin" and not L.relative:
            # linlin: the under/(under + over) quantile (Berger 1985, Sec. 2.4.2, from memory).
            e = D.quantile(L.under / (L.under + L.over))
            return e, self.EL(D, e)
        if c == "linex" and not L.relative:
            # LINEX: e = m - (1/a)·log E[exp(-a(s - m))], expected loss
            # scale·log E[exp(-a(s - m))] (Varian 1975 / Zellner 1986, from memory; the
            # minimum follows from setting the derivative to zero).
            m = D.mode + D.E(lambda s: s - D.mode, scale=self.span)
            k = math.log(D.E(lambda s: math.exp(-L.a * (s - m))))
            return m - k / L.a, L.scale_par * k
        if c == "quadquad" and not L.relative:
            # dEL/de = 2·under·∫_{s>e}(e - s)p + 2·over·∫_{s<e}(e - s)p, increasing in e.
            def deriv(e):
                left = D.integ(lambda s: e - s, hi=e, scale=self.span)
                right = D.integ(lambda s: e - s, lo=e, scale=self.span)
                return L.over * left + L.under * right
            e = optimize.brentq(deriv, D.lo, D.hi, xtol=1e-13 * self.span)
            return e, self.EL(D, e)
        if c == "tolerance" and not L.relative:
            # The window [e - above, e + below] holding the most posterior mass: its two
            # ends have equal density (unimodal posterior, own derivation).
            g = lambda e: D.logf(e + L.below) - D.logf(e - L.above)
            e = optimize.brentq(g, D.mode - L.below, D.mode + L.above, xtol=1e-13 * self.span)
            return e, self.EL(D, e)
        if c == "points" and not L.relative:
            # Piecewise-linear loss: EL'(e) = Σ slope_k·P(e - err_{k+1} < s < e - err_k);
            # every local minimum is a root of EL' (bracketed on a scan, refined by brentq).
            err, val = L.err, [L.sign * v for v in L.val]
            sl = [(val[k + 1] - val[k]) / (err[k + 1] - err[k]) for k in range(len(err) - 1)]

            def deriv(e):
                return sum(sl[k] * (D.cdf(e - err[k]) - D.cdf(e - err[k + 1])) for k in range(len(sl)))
            es = np.linspace(D.lo + err[0], D.hi + err[-1], 161)
            dv = [deriv(e) for e in es]
            cands = [D.mode]
            for i in range(len(es) - 1):
                if dv[i] < 0 <= dv[i + 1]:
                    cands.append(optimize.brentq(deriv, es[i], es[i + 1], xtol=1e-13 * self.span))
            els = [self.EL(D, e) for e in cands]
            i = int(np.argmin(els))
            return cands[i], els[i]
        raise ValueError(f"no reference for curve {c} (relative={L.relative})")

    def best_known_loss(self, D):
        """E_D[min over actions of loss(action, s)]: the expected loss with the state known."""
        if self.kind == "choice":
            return D.E(self.loss.min_loss, points=self.loss.kinks, scale=self.loss.scale)
        L = self.loss
        if L.grid is None:
            return L.best_known
        g = self.est_grid
        pts = sorted(set(k for e in g for k in L.s_kinks(e)))
        return D.E(lambda s: min(L.loss(e, s) for e in g), points=pts, scale=self.score_scale_hint())

    def decide(self, D):
        """(action, expected loss, per-action losses or None)."""
        if self.kind == "choice":
            els = self.choice_losses(D)
            i = int(np.argmin(els))
            return self.loss.labels[i], els[i], els
        e, el = self.estimate(D)
        return e, el, None

    # --- the case
    def case(self, mode=True):
        D = self.case_dens()
        post = self.summaries(D, mode=mode)
        act, el, els = self.decide(D)
        return {"posterior": post, "action": act, "expected_loss": el, "actions": els,
                "evpi": el - self.best_known_loss(D)}

    def prior_only_risk(self):
        return self.decide(self.prior)[1]

    # --- decision rules over one channel's summary
    def channel(self, name=None):
        if name is None:
            return self.channels[0]
        return next(c for c in self.channels if c.name == name)

    def pred_cdf(self, ch, t, n):
        return self.prior.E(lambda s: ch.cdf(t, s, n), points=self.breaks)

    def pred_range(self, ch, n, tail=1e-10):
        """Summary values at predictive tail mass `tail` on either side (counts: integers)."""
        if ch.counts:
            top = int(n * ch.trials) if ch.noise == "binomial" else None
            hi = 0
            while (top is None or hi < top) and self.pred_cdf(ch, hi, n) < 1 - tail:
                hi = hi * 2 + 8 if top is None else min(top, hi * 2 + 8)
            return 0, hi
        rs = [ch.r(s) for s in np.linspace(self.prior.lo, self.prior.hi, 201)]
        if ch.noise == "lognormal":
            f = math.exp(12 * ch.log_sd / math.sqrt(n))
            lo, hi = min(rs) / f, max(rs) * f
        else:
            sd = ch.sd / math.sqrt(n) if ch.noise == "gaussian" else max(ch.scalar_sd(r) for r in rs)
            lo, hi = min(rs) - 12 * sd, max(rs) + 12 * sd
        F = lambda t, q: self.pred_cdf(ch, t, n) - q
        return (optimize.brentq(F, lo, hi, args=(tail,), xtol=1e-9 * (hi - lo)),
                optimize.brentq(F, lo, hi, args=(1 - tail,), xtol=1e-9 * (hi - lo)))

    def bayes_choice_rule(self, ch, n, tail=1e-10, scan=81):
        """Regions [(t_lo, t_hi, action index)] of the Bayes rule on the summary, and the
        switch points. Continuous summaries: brentq on the difference of the posterior
        expected losses; counts: every count up to the predictive's 1 - tail."""
        L = self.loss
        lo, hi = self.pred_range(ch, n, tail)
        if ch.counts:
            acts = []
            for k in range(lo, hi + 1):
                D = self.summary_dens(ch, k, n)
                acts.append(self.best_choice(D))
            regions, switches = [], []
            start = -math.inf
            for k in range(1, len(acts)):
                if acts[k] != acts[k - 1]:
                    regions.append((start, k - 0.5, acts[k - 1]))
                    switches.append(float(k))
                    start = k - 0.5
            regions.append((start, math.inf, acts[-1]))
            return regions, switches, (lo, hi)
        ys = np.linspace(lo, hi, scan)
        best = []
        for y in ys:
            best.append(self.best_choice(self.summary_dens(ch, y, n)))
        regions, switches = [], []
        start = -math.inf
        for i in range(len(ys) - 1):
            if best[i] != best[i + 1]:
                a, b = best[i], best[i + 1]
                D0 = self.summary_dens(ch, 0.5 * (ys[i] + ys[i + 1]), n)

                def diff(y):
                    D = Dens(lambda s: self.logprior(s) + ch.logsum(y, s, n), self.a, self.b,
                             self.breaks, hints=[D0.mode])
                    return D.E(lambda s: L.fns[a](s) - L.fns[b](s), points=L.kinks, scale=L.scale)
                t = optimize.brentq(diff, ys[i], ys[i + 1], xtol=1e-13 * max(abs(ys[i]), hi - lo))
                regions.append((start, t, a))
                switches.append(t)
                start = t
        regions.append((start, math.inf, best[-1]))
        return regions, switches, (lo, hi)

    def region_risk(self, ch, n, regions):
        """Σ over regions ∫ prior·loss_a·P(summary in region | s) ds (prior normalized)."""
        L = self.loss
        tot = 0.0
        for t0, t1, a in regions:
            def p(s, t0=t0, t1=t1):
                c1 = 1.0 if t1 == math.inf else ch.cdf(t1, s, n)
                c0 = 0.0 if t0 == -math.inf else ch.cdf(t0, s, n)
                return c1 - c0
            tot += self.prior.E(lambda s, a=a, p=p: L.fns[a](s) * p(s), points=L.kinks, scale=L.scale)
        return tot

    def bayes_risk(self, ch=None, n=None):
        """Bayes risk of the channel's summary with n readings (default: the file's repeats)."""
        ch = self.channel() if ch is None else ch
        n = ch.repeats if n is None else n
        if self.kind == "choice":
            regions, switches, rng = self.bayes_choice_rule(ch, n)
            return self.region_risk(ch, n, regions), switches, rng
        return self.estimate_bayes_risk(ch, n), [], None

    def shift_model(self, ch):
        """Normal prior, gaussian noise, identity response, [from, to] ≥ 12 prior sd either
        side of the mean, continuous estimates: the posterior is normal with a variance that
        does not depend on the measurement (Gelman et al. 2013, Sec. 2.5, from memory), so
        a shift-invariant loss has the same minimum expected loss at every measurement. The
        truncation at [from, to] changes it by less than the normal tail beyond 12 sd
        (< 1e-32)."""
        p = self.sec["prior"]
        if p["family"] != "normal" or ch.noise != "gaussian" or self.loss.grid is not None:
            return False
        if self.sec[[k for k in self.sec if k == "evidence" or k.startswith("evidence.")][0]].get(
                "response", "identity") != "identity" or self.loss.relative or len(self.channels) != 1:
            return False
        m, sd = float(p["mean"]), float(p["sd"])
        return self.frm <= m - 12 * sd and self.to >= m + 12 * sd

    def estimate_bayes_risk(self, ch, n):
        if self.shift_model(ch):
            m = float(self.sec["prior"]["mean"])
            return self.estimate(self.summary_dens(ch, m, n))[1]
        if ch.counts:
            lo, hi = self.pred_range(ch, n, 1e-13)
            tot = 0.0
            for k in range(lo, hi + 1):
                D = self.summary_dens(ch, k, n)
                # D.Z·exp(M) / prior normalization = predictive probability of k.
                pk = math.exp(D.M - self.prior.M) * D.Z / self.prior.Z
                tot += pk * self.estimate(D)[1]
            return tot
        if self.loss.curve == "squared" and not self.loss.relative:
            # ∫ m(y)·Var(s | y) dy over the predictive's 1e-12 range: the rest carries
            # less than 2e-12 of the prior's spread.
            lo, hi = self.pred_range(ch, n, 1e-12)

            def f(y):
                D = self.summary_dens(ch, y, n)
                return math.exp(D.M - self.prior.M) * D.Z / self.prior.Z * self.estimate(D)[1]
            return integrate.quad(f, lo, hi, epsrel=1e-10, limit=200)[0]
        return None

    # --- other rules on choice problems
    def threshold_risk(self, ch, n, t):
        if ch.counts:
            t = math.ceil(t) - 0.5
        return self.region_risk(ch, n, [(-math.inf, t, 0), (t, math.inf, 1)])
