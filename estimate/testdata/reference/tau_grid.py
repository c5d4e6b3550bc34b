"""Reference values for the mode probabilities of one period over a grid of
delay laws and periods, from SciPy (Debian python3-scipy), independent of the
Go code.

What is computed. A period of length h starts with a sample. The sample is
lost with probability ps, or it reaches the controller after S = tau_sc; it
is stale when S >= h. A sample that is used produces a command after the
compute delay c; the command is lost with probability pa, or reaches the
actuator after T = tau_ca more, so that it acts at tau = S + T + c into the
period, and it is late when tau >= h. The period is in mode m0 (sample lost or
stale), m1 (command lost or late) or m2 (command in force at tau < h):

    P(m0) = ps + (1 - ps) P(S >= h)
    P(m2) = (1 - ps) (1 - pa) P(S < h, S + T + c < h)
    P(m1) = 1 - P(m0) - P(m2)
          = (1 - ps) [pa P(S < h) + (1 - pa) P(S < h, S + T + c >= h)]

S and T are independent. Per case this script prints the four masses
P(S < h), P(S >= h), M = P(S < h, S + T + c < h) and
L = P(S < h, S + T + c >= h) (each computed on its own, not as a difference,
so that small ones keep their relative accuracy), the first moment
E[tau; S < h, S + T + c < h], and from them P(m0), P(m1), P(m2) and
E[tau | m2].

The laws, as the profile format defines them (each written here from that
definition, with SciPy's distributions):
  constant value v           an atom of mass 1 at v
  uniform min a, max b       scipy.stats.uniform(loc=a, scale=b - a)
  normal mean m, std s       N(m, s^2) redrawn while negative (truncated to
                             [0, inf)), THEN the shift added:
                             scipy.stats.truncnorm(-m/s, inf, loc=m + shift, scale=s)
  exponential mean m         scipy.stats.expon(loc=shift, scale=m)
  gamma shape k, scale t     scipy.stats.gamma(k, loc=shift, scale=t)
  lognormal median m, sigma  scipy.stats.lognorm(sigma, loc=shift, scale=m)
  weibull shape k, scale l   scipy.stats.weibull_min(k, loc=shift, scale=l)
  pareto shape a, scale s    P(X > x) = (s/x)^a for x >= s, no shift:
                             scipy.stats.pareto(a, scale=s)
  empirical samples          an atom of mass c/n at each value seen c times
                             in n samples, then the shift added
  mixture parts, weights     the weights normalised to sum 1, each part's
                             law weighted, then the mixture's shift added
A shifted law's atoms sit at (position + shift), added in that order.

Method. Each law is split into atoms and weighted density components. The
masses and moments are bilinear in the two laws, so they are sums over pairs
of components:
  atom a x atom b        exact: the pair counts when a + b < h - c (strict:
                         a command at exactly h is late), mass products;
  atom x density         the density's CDF or survival function (SciPy) at
                         h - c - a, and E[T; T < h - c - a] by quad;
  density x density      one-dimensional quad of f_S(s) F_T(h - c - s) over s
                         (and of s f_S(s) F_T(...), f_S(s) (1 - F_T(...)) for
                         the late mass), and t f_T(t) F_S(h - c - t) over t for
                         E[T; ...].
scipy.integrate.quad (QUADPACK) runs with epsrel 1e-12 and epsabs 1e-20 (far
below any value compared) on pieces split at each component's support ends
and at its quantiles 1e-30, 1e-24, 1e-18, 1e-15, 1e-12, 1e-9, 1e-6, 1e-4,
0.01, 0.1, 0.25, 0.5 and the symmetric upper ones, and at (h - c) minus those
of the other law, so that a peak of any width anywhere in [0, h) is split out
and resolved and no tail mass above 1e-30 hides in a long piece (points
closer than 1e-13 relative to a neighbour are merged into it). A gamma or
Weibull component of shape k < 1 has a density singular at its start like
(s - shift)^(k - 1); it is integrated in y = (s - shift)^k, where
f(s) ds = reg(s) dy / k with reg the density's regular part (written out for
each), so that quad sees a smooth integrand. Read backwards, the same law's
CDF F(h - c - s) has a derivative singular at s = h - c - shift; pieces that
end there are integrated in u = (h - c - shift - s)^k, with the CDF of the
unshifted law evaluated at the distance itself (no cancellation). Any
QUADPACK warning stops the script.

Self-checks, asserted before anything is printed: M computed both ways
(over s and over t) agrees to 1e-11 relative; M + L = P(S < h) and
P(S < h) + P(S >= h) = 1 to 1e-13; every quad's own error estimate is below
1e-11 relative to the mass it contributes (or 1e-16 absolute).

Output: a header of '#' lines, then one JSON object per case with its name,
family, the period h, compute delay c, losses ps and pa, the two laws as
the profile format's delay mappings (times in seconds) and the values.

Run from this directory (about a minute and a half):
    /usr/bin/python3 tau_grid.py > tau_grid.out
"""
import json
import math
import sys
import warnings

import numpy as np
import scipy
from scipy import integrate, special, stats

warnings.simplefilter("error", integrate.IntegrationWarning)

EPSREL = 1e-12
EPSABS = 1e-20  # probabilities and seconds: far below any value compared
QUANTILES = [1e-30, 1e-24, 1e-18, 1e-15, 1e-12, 1e-9, 1e-6, 1e-4, 0.01, 0.1, 0.25, 0.5]


class Comp:
    """A density component: weight w times the density of dist."""

    def __init__(self, w, dist, lo, hi, sing=None):
        self.w = w
        self.dist = dist
        self.lo = lo
        self.hi = hi
        # sing = (k, reg, base): for a law singular at its start, k < 1:
        # density(lo + d) = d^(k - 1) reg(d), and base the unshifted frozen
        # law, whose cdf(d) and sf(d) are F(lo + d), 1 - F(lo + d) without
        # the rounding of lo + d.
        self.sing = sing
        pts = {lo}
        if math.isfinite(hi):
            pts.add(hi)
        for q in QUANTILES:
            with np.errstate(all="ignore"):  # a quantile past the floats is left out
                xs = (dist.ppf(q), dist.isf(q))
            for x in xs:
                if math.isfinite(x):
                    pts.add(float(x))
        self.features = sorted(p for p in pts if lo <= p <= hi)

    def pdf(self, x):
        return float(self.dist.pdf(x))

    def cdf(self, x):
        return float(self.dist.cdf(x))

    def sf(self, x):
        return float(self.dist.sf(x))


def decompose(spec, weight=1.0, shift=0.0):
    """Atoms [(position, mass)] and density components of a law spec, each
    weighted by weight and moved by shift (added after the law's own)."""
    kind = spec["kind"]
    own = spec.get("shift", 0.0)

    def moved(x):
        # the law's own shift first, then the enclosing mixture's
        return (x + own) + shift if own else x + shift

    tot = own + shift if own else shift
    if kind == "constant":
        return [(moved(spec["value"]) if shift else spec["value"], weight)], []
    if kind == "empirical":
        xs = spec["samples"]
        n = len(xs)
        out = {}
        for x in xs:
            out[x] = out.get(x, 0) + 1
        return [(moved(x), weight * c / n) for x, c in sorted(out.items())], []
    if kind == "mixture":
        ws = [p["weight"] for p in spec["parts"]]
        total = sum(ws)
        atoms, comps = [], []
        for p, wp in zip(spec["parts"], ws):
            if wp == 0:
                continue
            sub = {k: v for k, v in p.items() if k != "weight"}
            a, c = decompose(sub, weight * wp / total, 0.0)
            # the mixture's own shift, then the enclosing one
            for pos, m in a:
                atoms.append((moved(pos), m))
            for comp in c:
                comps.append(shift_comp(comp, tot))
        return merge_atoms(atoms), comps
    if kind == "uniform":
        a, b = spec["min"], spec["max"]
        return [], [Comp(weight, stats.uniform(loc=a + tot, scale=b - a), a + tot, b + tot)]
    if kind == "normal":
        m, s = spec["mean"], spec["std"]
        d = stats.truncnorm(-m / s, np.inf, loc=m + tot, scale=s)
        return [], [Comp(weight, d, tot, math.inf)]
    if kind == "exponential":
        return [], [Comp(weight, stats.expon(loc=tot, scale=spec["mean"]), tot, math.inf)]
    if kind == "gamma":
        k, t = spec["shape"], spec["scale"]
        d = stats.gamma(k, loc=tot, scale=t)
        sing = None
        if k < 1:
            # f(x) = x^(k-1) e^(-x/t) / (Gamma(k) t^k)
            lg = special.gammaln(k)
            sing = (k, lambda dd, k=k, t=t, lg=lg: math.exp(-dd / t - lg - k * math.log(t)),
                    stats.gamma(k, scale=t))
        return [], [Comp(weight, d, tot, math.inf, sing)]
    if kind == "weibull":
        k, l = spec["shape"], spec["scale"]
        d = stats.weibull_min(k, loc=tot, scale=l)
        sing = None
        if k < 1:
            # f(x) = (k / l^k) x^(k-1) exp(-(x/l)^k)
            sing = (k, lambda dd, k=k, l=l: k / l ** k * math.exp(-(dd / l) ** k),
                    stats.weibull_min(k, scale=l))
        return [], [Comp(weight, d, tot, math.inf, sing)]
    if kind == "lognormal":
        d = stats.lognorm(spec["sigma"], loc=tot, scale=spec["median"])
        return [], [Comp(weight, d, tot, math.inf)]
    if kind == "pareto":
        a, s = spec["shape"], spec["scale"]
        return [], [Comp(weight, stats.pareto(a, loc=tot, scale=s), s + tot, math.inf)]
    raise ValueError("unknown kind " + kind)


def shift_comp(c, s):
    if s == 0:
        return c
    # Rebuild the frozen law with loc moved by s.
    args, kw = c.dist.args, dict(c.dist.kwds)
    kw["loc"] = kw.get("loc", 0.0) + s
    d = c.dist.dist(*args, **kw)
    return Comp(c.w, d, c.lo + s, c.hi + s, c.sing)


def merge_atoms(atoms):
    out = {}
    for p, m in atoms:
        out[p] = out.get(p, 0.0) + m
    return sorted(out.items())


class Tally:
    worst = 0.0  # largest quad error estimate relative to its value


def quad_pieces(comp, phi, a, b, extra=(), right=None):
    """Integral of comp's (unweighted) density times phi(x, d) over [a, b],
    split at comp's features and the extra points. right = (e, k) says that
    phi behaves like (e - x)^k, k < 1, just below e (the CDF of the other
    law, singular at its start, read backwards); there phi is called with
    d = e - x computed without rounding, else with d = None."""
    if not b > a:
        return 0.0
    inner = sorted(p for p in list(comp.features) + list(extra) if a < p < b)
    # Points closer than a few ulps to their neighbours (the other law's
    # tiny quantiles subtracted from h - c) would make pieces too short to
    # sample: drop them; the piece that keeps the point integrates across.
    pts = [a]
    for p in inner + [b]:
        if p - pts[-1] > 1e-13 * max(abs(p), abs(pts[-1])):
            pts.append(p)
    pts[-1] = b
    if right is not None and a < right[0] < b and right[0] not in pts:
        # keep e itself as a breakpoint, dropping a neighbour too close to it
        e = right[0]
        pts = [p for p in pts if p in (a, b) or abs(p - e) > 1e-13 * abs(e)]
        pts = sorted(pts + [e])
    return sum(piece(comp, phi, p, q, right) for p, q in zip(pts[:-1], pts[1:]))


def piece(comp, phi, p, q, right):
    # Near e (closer than the piece is long) phi's singular derivative is
    # taken out by a change of variable.
    near_right = right is not None and 0 <= right[0] - q <= q - p
    at_left = comp.sing is not None and p == comp.lo
    if near_right and at_left:
        m = (p + q) / 2
        return piece(comp, phi, p, m, right) + piece(comp, phi, m, q, right)
    if near_right:
        # u = (e - x)^k: phi(x) = smooth(u) u, dx = u^(1/k - 1) du / k
        e, k = right

        def g(u):
            dd = u ** (1 / k)
            x = e - dd
            return comp.pdf(x) * phi(x, dd) * u ** (1 / k - 1) / k

        return run_quad(g, max(e - q, 0.0) ** k, (e - p) ** k)
    if comp.sing is not None:
        # y = (x - lo)^k: dx (x - lo)^(k - 1) = dy / k, a smooth integrand
        k, reg, _ = comp.sing
        lo = comp.lo

        def g(y):
            dd = y ** (1 / k)
            return reg(dd) * phi(lo + dd, None) / k

        return run_quad(g, (p - lo) ** k, (q - lo) ** k)
    return run_quad(lambda x: comp.pdf(x) * phi(x, None), p, q)


def run_quad(f, a, b):
    v, err = integrate.quad(f, a, b, epsabs=EPSABS, epsrel=EPSREL, limit=400)
    if err > 1e-16:
        Tally.worst = max(Tally.worst, err / max(abs(v), 1e-300))
    return v


def masses(sc, ca, h, c):
    """The masses and moments of one case, without losses."""
    b = h - c
    asc, dsc = decompose(sc)
    aca, dca = decompose(ca)
    on = 0.0   # P(S < h)
    off = 0.0  # P(S >= h)
    for p, m in asc:
        if p < h:
            on += m
        else:
            off += m
    for cp in dsc:
        on += cp.w * cp.cdf(h)
        off += cp.w * cp.sf(h)

    M = Mt = L = ES = ET = 0.0  # M over s, M over t (check), late, E[S; A], E[T; A]
    # atoms x atoms
    for p, m in asc:
        for q, n in aca:
            if p >= h:
                continue
            if p + q < b:
                M += m * n
                Mt += m * n
                ES += m * n * p
                ET += m * n * q
            else:
                L += m * n
    # atom of S x density of T
    for p, m in asc:
        if p >= h:
            continue
        x = b - p
        for cq in dca:
            F = cq.cdf(x) if x > cq.lo else 0.0
            G = cq.sf(x) if x > cq.lo else 1.0
            M += m * cq.w * F
            Mt += m * cq.w * F
            L += m * cq.w * G
            ES += m * cq.w * p * F
            ET += m * cq.w * quad_pieces(cq, lambda t, _: t, cq.lo, min(x, cq.hi))
    # density of S x atom of T
    for q, n in aca:
        x = b - q
        for cp in dsc:
            F = cp.cdf(x) if x > cp.lo else 0.0
            # late: P(x <= S < h), from the side where it keeps its digits
            lo = max(x, cp.lo)
            if lo >= h:
                G = 0.0
            elif cp.cdf(lo) > 0.5:
                G = cp.sf(lo) - cp.sf(h)
            else:
                G = cp.cdf(h) - cp.cdf(lo)
            M += n * cp.w * F
            Mt += n * cp.w * F
            L += n * cp.w * G
            ET += n * cp.w * q * F
            ES += n * cp.w * quad_pieces(cp, lambda s, _: s, cp.lo, min(x, cp.hi))
    # density x density
    for cp in dsc:
        for cq in dca:
            w = cp.w * cq.w
            ext_s = [b - t for t in cq.features] + [h]
            ext_t = [b - s for s in cp.features]
            rs = (b - cq.lo, cq.sing[0]) if cq.sing else None
            rt = (b - cp.lo, cp.sing[0]) if cp.sing else None
            # F_T(b - s); with dd given, b - s = cq.lo + dd
            FT = lambda s, dd: cq.sing[2].cdf(dd) if dd is not None else cq.cdf(b - s)
            FS = lambda t, dd: cp.sing[2].cdf(dd) if dd is not None else cp.cdf(b - t)
            GT = lambda s, dd: (cq.sing[2].sf(dd) if dd is not None else
                                cq.sf(b - s) if b - s > cq.lo else 1.0)
            hi_s = min(cp.hi, b - cq.lo)
            M += w * quad_pieces(cp, FT, cp.lo, hi_s, ext_s, rs)
            ES += w * quad_pieces(cp, lambda s, dd: s * FT(s, dd), cp.lo, hi_s, ext_s, rs)
            hi_t = min(cq.hi, b - cp.lo)
            Mt += w * quad_pieces(cq, FS, cq.lo, hi_t, ext_t, rt)
            ET += w * quad_pieces(cq, lambda t, dd: t * FS(t, dd), cq.lo, hi_t, ext_t, rt)
            # late: S < h and T >= b - S (1 - F_T has the same kink)
            L += w * quad_pieces(cp, GT, cp.lo, min(cp.hi, h), ext_s, rs)
    E = c * M + ES + ET
    checks = {
        "M_two_ways": abs(M - Mt) / max(M, 1e-300) if M > 0 else abs(Mt),
        "M_plus_L": abs(M + L - on),
        "on_plus_off": abs(on + off - 1),
    }
    return on, off, M, L, E, checks


# ---------------------------------------------------------------------------
# The grid. Law parameters are given in units of the period h.

PERIODS = [1e-3, 0.01, 0.15, 1.0]
LOSSES = [(0.0, 0.0), (0.01, 0.02), (0.2, 0.05), (0.5, 0.3)]


def law(kind, h, **kw):
    """A law spec with its time parameters (all but shape, sigma, weight)
    given in units of h."""
    out = {"kind": kind}
    for k, v in kw.items():
        if k in ("shape", "sigma"):
            out[k] = v
        elif k == "parts":
            out[k] = v
        elif k == "samples":
            out[k] = [x * h for x in v]
        else:
            out[k] = v * h
    return out


def part(weight, spec):
    d = {"weight": weight}
    d.update(spec)
    return d


def grid():
    cases = []
    n = [0]

    def add(family, name, h, c, sc, ca, losses=None):
        if losses is None:
            losses = LOSSES[n[0] % len(LOSSES)]
        n[0] += 1
        cases.append(dict(name=name, family=family, h=h, c=c * h, ps=losses[0], pa=losses[1],
                          sc=sc(h), ca=ca(h)))

    def L(kind, **kw):
        return lambda h: law(kind, h, **kw)

    # 1. Densities singular at their start (gamma, Weibull, shape < 1), with
    # and without a shift, in either direction, against various laws.
    others = [
        ("const", L("constant", value=0.05)),
        ("logn1.5", L("lognormal", median=0.1, sigma=1.5)),
        ("gamma0.3s", L("gamma", shape=0.3, scale=0.05, shift=0.01)),
        ("exp", L("exponential", mean=0.1)),
        ("logn0.4s", L("lognormal", median=0.03, sigma=0.4, shift=0.002)),
    ]
    i = 0
    for kind, k in [("gamma", 0.2), ("gamma", 0.5), ("gamma", 0.95),
                    ("weibull", 0.2), ("weibull", 0.35), ("weibull", 0.75)]:
        for shift in [0.0, 0.02, 0.3]:
            for direction in ("sc", "ca"):
                oname, other = others[i % len(others)]
                h = PERIODS[i % len(PERIODS)]
                c = [0.0, 0.01, 0.1][i % 3]
                scale = [0.05, 0.2, 0.02][i % 3]
                kw = dict(shape=k, scale=scale)
                if shift:
                    kw["shift"] = shift
                sing = L(kind, **kw)
                nm = "%s%g%s_%s_vs_%s_h%g" % (kind, k, "_shift%g" % shift if shift else "",
                                              direction, oname, h)
                if direction == "sc":
                    add("singular", nm, h, c, sing, other)
                else:
                    add("singular", nm, h, c, other, sing)
                i += 1

    # 2. Narrow laws: location from 1e-4 h to 0.9 h, relative widths down to
    # 1e-3; the cut h - c through and beside the peaks.
    i = 0
    for loc in [1e-4, 1e-3, 0.02, 0.2]:
        for rel in [0.125, 0.01, 1e-3]:
            h = PERIODS[(i + 3) % len(PERIODS)]
            kinds = [
                ("normal", L("normal", mean=loc, std=rel * loc)),
                ("lognormal", L("lognormal", median=loc, sigma=rel)),
                ("uniform", L("uniform", min=loc * (1 - rel), max=loc * (1 + rel))),
            ]
            for kn, lw in kinds:
                other = [L("constant", value=loc), L("normal", mean=loc, std=rel * loc),
                         L("lognormal", median=0.1, sigma=0.7)][i % 3]
                on = ["const", "same", "wide"][i % 3]
                if i % 2 == 0:
                    add("narrow", "%s%g_rel%g_sc_vs_%s_h%g" % (kn, loc, rel, on, h), h, 0.0, lw, other)
                else:
                    add("narrow", "%s%g_rel%g_ca_vs_%s_h%g" % (kn, loc, rel, on, h), h, 0.01, other, lw)
                i += 1
    # gamma with large shapes (relative width 1/sqrt(k)); 1e4 is the format's limit
    for k, loc, h in [(64, 1e-4, 1.0), (1e4, 1e-4, 1.0), (1e4, 0.02, 0.15), (1e4, 0.3, 0.01), (400, 0.9, 1e-3)]:
        g = L("gamma", shape=k, scale=loc / k)
        add("narrow", "gamma_k%g_loc%g_h%g" % (k, loc, h), h, 0.0, g, L("constant", value=0.0))
        add("narrow", "gamma_k%g_loc%g_ca_h%g" % (k, loc, h), h, 0.005,
            L("normal", mean=1e-4, std=1.5e-5), g)
    # the slow process loop of the issue: 1 s, normal 120 us +- 15 us both ways
    add("narrow", "normal120us_both_h1", 1.0, 0.0,
        lambda h: {"kind": "normal", "mean": 120e-6, "std": 15e-6},
        lambda h: {"kind": "normal", "mean": 120e-6, "std": 15e-6}, (0.0, 0.0))
    add("narrow", "normal120us_both_h1_c20ms_lossy", 1.0, 0.02,
        lambda h: {"kind": "normal", "mean": 120e-6, "std": 15e-6},
        lambda h: {"kind": "normal", "mean": 120e-6, "std": 15e-6}, (0.01, 0.02))
    # peaks cut in their middle by the deadline
    for rel in [0.125, 0.01, 1e-3]:
        add("narrow", "normal0.45x2_cut_mid_rel%g" % rel, 0.01, 0.1,
            L("normal", mean=0.45, std=0.45 * rel), L("normal", mean=0.45, std=0.45 * rel))
        add("narrow", "normal0.9_cut_mid_rel%g" % rel, 1.0, 0.1,
            L("normal", mean=0.9, std=0.9 * rel), L("constant", value=0.0))
        add("narrow", "lognormal0.6_cut_near_rel%g" % rel, 0.15, 0.05,
            L("lognormal", median=0.6, sigma=rel), L("uniform", min=0.3, max=0.3 * (1 + rel)))
    # a normal whose mean is below 0 (mostly redrawn), then shifted
    add("narrow", "normal_negmean_shift", 0.01, 0.0,
        L("normal", mean=-0.05, std=0.02, shift=0.1), L("normal", mean=0.2, std=0.3))

    # 3. Heavy tails.
    i = 0
    for a in [1.05, 1.5, 2.0, 3.0]:
        for s in [1e-3, 0.05, 0.4]:
            h = PERIODS[i % len(PERIODS)]
            other = [L("lognormal", median=0.01, sigma=1.0), L("constant", value=0.02),
                     L("gamma", shape=0.4, scale=0.05, shift=0.005)][i % 3]
            p = L("pareto", shape=a, scale=s)
            if i % 2 == 0:
                add("heavy", "pareto%g_s%g_sc_h%g" % (a, s, h), h, 0.02, p, other)
            else:
                add("heavy", "pareto%g_s%g_ca_h%g" % (a, s, h), h, 0.0, other, p)
            i += 1
    for sg in [1.0, 1.6, 2.2]:
        for med in [1e-3, 0.05, 0.3]:
            h = PERIODS[(i + 1) % len(PERIODS)]
            other = [L("pareto", shape=1.2, scale=0.01), L("exponential", mean=0.05),
                     L("weibull", shape=0.5, scale=0.02, shift=0.01)][i % 3]
            lg = L("lognormal", median=med, sigma=sg)
            if i % 2 == 0:
                add("heavy", "lognormal_s%g_m%g_sc_h%g" % (sg, med, h), h, 0.05, lg, other)
            else:
                add("heavy", "lognormal_s%g_m%g_ca_h%g" % (sg, med, h), h, 0.0, other, lg)
            i += 1
    # everything late: a Pareto whose scale is beyond the budget
    add("heavy", "pareto_all_late", 0.01, 0.1, L("constant", value=0.0), L("pareto", shape=2, scale=0.95))

    # 4. Mixtures of atoms and densities.
    M = lambda shift=None, *parts: (lambda h: dict(
        {"kind": "mixture", "parts": [part(w, s(h)) for w, s in parts]},
        **({"shift": shift * h} if shift else {})))
    add("mixture", "atom_logn_vs_const", 0.01, 0.05,
        M(None, (0.6, L("constant", value=0.05)), (0.4, L("lognormal", median=0.1, sigma=0.8))),
        L("constant", value=0.02))
    add("mixture", "atom0_gamma0.5_shifted_vs_atom_uniform", 0.15, 0.0,
        M(0.01, (0.3, L("constant", value=0.0)), (0.7, L("gamma", shape=0.5, scale=0.1))),
        M(None, (0.5, L("constant", value=0.2)), (0.5, L("uniform", min=0.1, max=0.6))))
    add("mixture", "late_atom_and_narrow_normal", 1.0, 0.01,
        M(None, (0.2, L("constant", value=1.2)), (0.8, L("normal", mean=0.3, std=0.01))),
        L("exponential", mean=0.05, shift=0.01))
    add("mixture", "three_atoms_and_exp_vs_weibull", 0.01, 0.1,
        M(None, (1, L("constant", value=0.25)), (1, L("constant", value=0.5)),
          (1, L("constant", value=0.75)), (2, L("exponential", mean=0.1))),
        L("weibull", shape=0.6, scale=0.1, shift=0.02))
    add("mixture", "bimodal_narrow_normals", 0.15, 0.0,
        M(None, (0.9, L("normal", mean=0.01, std=1e-4)), (0.1, L("normal", mean=0.6, std=6e-4))),
        M(None, (0.5, L("normal", mean=0.2, std=2e-4)), (0.5, L("normal", mean=0.38, std=3.8e-4))))
    add("mixture", "unnormalised_weights_pareto_const", 1e-3, 0.0,
        M(None, (3, L("constant", value=0.1)), (1, L("pareto", shape=1.3, scale=0.05))),
        M(0.05, (2, L("lognormal", median=0.1, sigma=2.0)), (5, L("constant", value=0.0))))
    add("mixture", "empirical_vs_gamma0.3", 0.01, 0.02,
        L("empirical", samples=[0.05, 0.05, 0.1, 0.3, 0.7, 0.95, 1.5], shift=0.01),
        L("gamma", shape=0.3, scale=0.1, shift=0.05))
    add("mixture", "empirical_both", 0.15, 0.0,
        L("empirical", samples=[0.1, 0.2, 0.2, 0.4, 0.9]),
        L("empirical", samples=[0.05, 0.3, 0.55, 0.85]))
    add("mixture", "nested_mixture_shifted", 1.0, 0.1,
        M(0.02, (0.5, M(0.01, (0.5, L("constant", value=0.1)), (0.5, L("gamma", shape=0.25, scale=0.05)))),
          (0.5, L("lognormal", median=0.2, sigma=1.0, shift=0.03))),
        L("weibull", shape=0.3, scale=0.05, shift=0.01))
    add("mixture", "atom_inside_narrow_normal", 0.01, 0.0,
        M(None, (0.5, L("constant", value=0.45)), (0.5, L("normal", mean=0.45, std=4.5e-4))),
        M(None, (0.5, L("constant", value=0.55)), (0.5, L("normal", mean=0.55, std=5.5e-4))))
    add("mixture", "gamma_singular_both_mixed", 1e-3, 0.05,
        M(None, (0.1, L("constant", value=0.0)), (0.9, L("gamma", shape=0.2, scale=0.2, shift=0.1))),
        M(None, (0.2, L("constant", value=0.3)), (0.8, L("weibull", shape=0.2, scale=0.1, shift=0.05))))

    # 5. Atoms at and near h, ties of atom sums with the deadline (values
    # exact in binary so that a + b + c = h holds in any order of addition).
    c0 = L("constant", value=0.0)
    add("atoms", "sc_atom_at_h", 0.01, 0.0, L("constant", value=1.0), L("lognormal", median=0.1, sigma=0.5))
    add("atoms", "sc_atom_just_below_h", 0.01, 0.0, L("constant", value=1 - 1e-9), c0)
    add("atoms", "sc_atom_just_above_h", 0.01, 0.0, L("constant", value=1 + 1e-9), c0)
    add("atoms", "sc_atom_at_h_in_mixture", 0.15, 0.0,
        M(None, (0.3, L("constant", value=1.0)), (0.7, L("exponential", mean=0.2))),
        L("gamma", shape=0.7, scale=0.1))
    add("atoms", "sum_tie_late", 1.0, 0.125, L("constant", value=0.375), L("constant", value=0.5))
    add("atoms", "sum_tie_late_h2^-6", 0.015625, 0.125, L("constant", value=0.25), L("constant", value=0.625))
    add("atoms", "ca_atom_just_below_budget", 0.01, 0.1, c0, L("constant", value=0.9 * (1 - 1e-9)))
    add("atoms", "ca_atom_at_h", 0.01, 0.0, L("exponential", mean=0.1), L("constant", value=1.0))
    add("atoms", "sc_const_vs_singular_near_budget", 0.01, 0.0,
        L("constant", value=0.5), L("gamma", shape=0.3, scale=0.3, shift=0.4999))
    add("atoms", "const_other_direction_narrow_at_cut", 1.0, 0.2,
        L("normal", mean=0.5, std=5e-4), L("constant", value=0.3))
    add("atoms", "all_zero", 0.01, 0.0, c0, c0)
    return cases


def main():
    cases = grid()
    print("# Reference mode probabilities over a grid of delay laws x periods (estimate/testdata/reference/tau_grid.py).")
    print("# scipy %s, numpy %s, python %s" % (scipy.__version__, np.__version__, sys.version.split()[0]))
    print("# one JSON object per case; times in seconds; masses without losses:")
    print("#   on_time_sc = P(S < h), stale_sc = P(S >= h), m2_mass = P(S < h, S+T+c < h),")
    print("#   late_mass = P(S < h, S+T+c >= h), e_tau_m2 = E[tau; S < h, S+T+c < h];")
    print("# with losses: p0, p1, p2, mean_delay_m2 = E[tau | m2] (null when p2 = 0);")
    print("# quad_err: the largest quad error estimate relative to its value in the case.")
    names = set()
    for cs in cases:
        if cs["name"] in names:
            raise SystemExit("duplicate case name " + cs["name"])
        names.add(cs["name"])
        Tally.worst = 0.0
        on, off, M, L, E, checks = masses(cs["sc"], cs["ca"], cs["h"], cs["c"])
        assert checks["M_two_ways"] < 1e-11, (cs["name"], checks)
        assert checks["M_plus_L"] < 1e-13, (cs["name"], checks)
        assert checks["on_plus_off"] < 1e-13, (cs["name"], checks)
        assert Tally.worst < 1e-11, (cs["name"], Tally.worst)
        ps, pa = cs["ps"], cs["pa"]
        p0 = ps + (1 - ps) * off
        p2 = (1 - ps) * (1 - pa) * M
        p1 = (1 - ps) * (pa * on + (1 - pa) * L)
        assert abs(p0 + p1 + p2 - 1) < 1e-13, cs["name"]
        out = dict(cs)
        out.update(on_time_sc=on, stale_sc=off, m2_mass=M, late_mass=L, e_tau_m2=E,
                   p0=p0, p1=p1, p2=p2, mean_delay_m2=(E / M if M > 0 else None),
                   quad_err=Tally.worst)
        print(json.dumps(out))
    print("# %d cases" % len(cases))


if __name__ == "__main__":
    main()
