# Reference values for the long-delay model (estimate/model.md §13): the
# loop x_{k+1} = x_k - K x_{k-d} of an integrator under a static gain K and
# a constant delay of d whole periods has the characteristic polynomial
# z^{d+1} - z^d + K; it is stable exactly while every root lies inside the
# unit circle. For d = 0..4 this prints the critical gain K*(d), where the
# largest root modulus reaches 1 (bisection on numpy.roots, 1e-13), and the
# largest root modulus at K = 0.5, 0.9 and 1.1 times K*.
#
# Run from this directory (Debian python3-numpy, python3-scipy):
#   python3 delay_boundary.py > delay_boundary.out
# Output: "d K* rho(0.5K*) rho(0.9K*) rho(1.1K*)", rho the largest |root|.
import numpy as np
from scipy.optimize import brentq


def radius(d, K):
    c = np.zeros(d + 2)
    c[0], c[1], c[-1] = 1.0, -1.0, K
    if d == 0:
        c = np.array([1.0, -1.0 + K])
    return max(abs(np.roots(c)))


print("# d K_star rho_0.5 rho_0.9 rho_1.1")
for d in range(5):
    ks = brentq(lambda K: radius(d, K) - 1.0, 1e-6, 2.5, xtol=1e-15, rtol=1e-14)
    print("%d %.15g %.15g %.15g %.15g" % (d, ks, radius(d, 0.5 * ks), radius(d, 0.9 * ks), radius(d, 1.1 * ks)))
