"""Reference values for a compute delay drawn from a law with an atom beside
a density (estimate/model.md §14), from SciPy (Debian python3-scipy),
independent of the Go code.

Period h = 10 ms. Sensor delay: lognormal (median 2 ms, sigma 0.5) shifted by
0.5 ms. Command delay: gamma (shape 2, scale 1 ms). Compute delay c: 1 ms with
probability 0.4, else 2 ms plus a gamma (shape 2, scale 1.5 ms). The total
delay is tau = tau_sc + c + tau_ca, the three independent.

Printed:
  moment<k>  E[tau^k; tau < h] for k = 0, 1, 2 (seconds^k): the one-period
             model's in-time mass and moments;
  cdf<x>     P(tau <= x | tau_sc < h) for x = 12, 18, 25 ms: the long-delay
             model's law of a command's age on arrival.
The gamma part of c is integrated in closed form (its partial moments are
regularised incomplete gamma functions); tau_sc and tau_ca by nested
scipy.integrate.quad, split where an indicator cuts.

Run from this directory:
    /usr/bin/python3 compute_law.py > compute_law.out
"""
import math

import scipy
from scipy import integrate, special, stats

ms = 1e-3
h = 10 * ms
sc = stats.lognorm(s=0.5, scale=2 * ms, loc=0.5 * ms)
ca = stats.gamma(a=2, scale=1 * ms)
p_atom, atom = 0.4, 1 * ms
shape, scale, shift = 2.0, 1.5 * ms, 2 * ms


def gamma_partial(j, top):
    """E[g^j; g < top] for g ~ gamma(shape, scale)."""
    if top <= 0:
        return 0.0
    return scale ** j * math.gamma(shape + j) / math.gamma(shape) * special.gammainc(shape + j, top / scale)


def c_part(k, a, limit):
    """E[(a + c)^k; a + c < limit] over the compute delay c."""
    v = 0.0
    if a + atom < limit:
        v += p_atom * (a + atom) ** k
    top = limit - a - shift
    if top > 0:
        A = a + shift
        v += (1 - p_atom) * sum(math.comb(k, j) * A ** (k - j) * gamma_partial(j, top) for j in range(k + 1))
    return v


def over_ca(k, s, limit):
    """E[(s + tau_ca + c)^k; s + tau_ca + c < limit] over tau_ca and c."""
    top = limit - s - atom  # beyond it c_part is 0
    if top <= 0:
        return 0.0
    brk = limit - s - shift  # where the gamma part of c stops counting
    pts = [brk] if 0 < brk < top else None
    v, _ = integrate.quad(lambda t: ca.pdf(t) * c_part(k, s + t, limit), 0, top,
                          points=pts, epsabs=0, epsrel=1e-13, limit=400)
    return v


def total(k, limit, sc_top):
    lo = 0.5 * ms
    if sc_top <= lo:
        return 0.0
    v, _ = integrate.quad(lambda s: sc.pdf(s) * over_ca(k, s, limit), lo, sc_top,
                          epsabs=0, epsrel=1e-12, limit=400)
    return v


print("# scipy", scipy.__version__)
for k in range(3):
    print("moment%d %.17g" % (k, total(k, h, h)))
on_time = sc.cdf(h)
for x in (12, 18, 25):
    print("cdf%d %.17g" % (x, total(0, x * ms, h) / on_time))
