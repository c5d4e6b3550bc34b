"""Reference values for estimate's quadrature over the total delay, from SciPy
(Debian python3-scipy), independent of the Go code.

The sensor delay is shift + lognormal (median 2 ms, sigma 0.5, shift 0.5 ms),
the command delay gamma (shape 2, scale 1 ms); with period h = 8 ms and compute
delay c = 1 ms a command is in time when S = tau_sc + tau_ca < h - c = 7 ms.
Printed: E[S^k; S < 7 ms] for k = 0, 1, 2 (seconds^k), by scipy.integrate.quad
of the convolution density.

Run from this directory:
    /usr/bin/python3 convolution.py > convolution.out
"""
import numpy as np
import scipy
from scipy import integrate, stats

ms = 1e-3
sc = stats.lognorm(s=0.5, scale=2 * ms, loc=0.5 * ms)
ca = stats.gamma(a=2, scale=1 * ms)
budget = 7 * ms


def conv_density(x):
    # density of S at x: integral of f_sc(s) f_ca(x - s) ds over s in [0.5 ms, x]
    if x <= 0.5 * ms:
        return 0.0
    v, _ = integrate.quad(lambda s: sc.pdf(s) * ca.pdf(x - s), 0.5 * ms, x,
                          epsabs=0, epsrel=1e-13, limit=200)
    return v


print("# scipy", scipy.__version__)
for k in range(3):
    v, err = integrate.quad(lambda x: x ** k * conv_density(x), 0.5 * ms, budget,
                            epsabs=0, epsrel=1e-12, limit=200)
    print("moment%d %.17g" % (k, v))
