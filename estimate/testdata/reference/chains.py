"""Reference values for loops whose plant is a chain of lightly damped modes,
from SciPy (Debian python3-scipy) and NumPy, independent of the Go code: the
spectral radius of the second-moment operator and, for the stable loops, the
steady E[e'e].

The plant (an invented scenario of our own: a row of carriages on a
conveyor track coupled by springs, the first one driven): K unit masses in a
row, the first tied to a wall by a spring k and each to the next by a spring
k, the last free, and each also held by its own mount of stiffness k0; a
force u on mass 1, its position measured (y = x_1 + v). With k0 = 0 the
modes spread over a decade or more; with k0 = 1 and weak couplings they
cluster just above 1 rad/s, which puts most eigenvalues of the
second-moment operator close to 1 at once (its determinant underflows in
double precision). Damping is Rayleigh's, D = alpha I + beta S (S the
stiffness matrix), so that mode j, of frequency w_j, has the damping ratio
alpha/(2 w_j) + beta w_j / 2 (Lord Rayleigh, The Theory of Sound, 1877,
sec. 97; the formula for the ratio is common practice in structural
dynamics), between about 0.02 and 0.05 here. The state is [positions; velocities] (n = 2K); the process noise is a
force on each mass, W = diag(0, ..., 0, q, ..., q). A static controller
u = d e, e = r - y with r = 0, closes the loop over the network.

The network: period h = 10 ms, compute delay c = 0.5 ms; sensor loss 0.05,
delay 1 ms; command ("iid") loss 0.1, delay 2 ms (weight 0.7), 5 ms (0.2) or
9.5 ms (0.1, always late); or ("bursty") a two-state command channel: good
(mean dwell 2 s, loss 0.02, the delays above) and bad (mean dwell 0.2 s,
loss 0.5, delay 6 ms), switching in continuous time, sampled every period by
P = expm(G h) (G the generator); the joint chain is then the command
channel's (the sensor direction has one state). Every delay is an atom, so
the expectation over the delivered mode is a finite sum.

The model, from its description: z = [x; u] (u the input held from the last
period). Mode m0 (sample lost or stale) and m1 (command lost or late) are the
same map for a static controller: x' = Phi x + Gam u + w, u' = u. Mode
m2(tau): u_k = d (r - C x - v), x' = Phi x + Gam1(tau) u + Gam0(tau) u_k + w,
u' = u_k, with Gam0(tau) = int_0^(h - tau) e^(As) ds B and Gam1 = Gam -
Gam0. Phi, Gam and Gam0 come from scipy.linalg.expm of the block matrix
[[A, B], [0, 0]] over h and h - tau; W_d = int_0^h e^(As) W e^(A's) ds by
scipy.integrate.quad_vec. The second-moment operator on vec(Q) is
K_i = sum over modes of P(mode | state i) kron(F, F) in each joint state i,
and the operator on the stacked vec(Q_j) has the blocks P_ij K_i (block j, i;
the recursion of a Markov jump linear system, Costa, Fragoso and Marques,
Discrete-Time Markov Jump Linear Systems, 2005, ch. 3, from memory);
rho = max |eig| (numpy.linalg.eigvals). The steady second moments solve the
same system with the constant sum_i P_ij pi_i sum P(mode | i) H Xi H', and
E[e'e] = C (sum_j Q_j)_xx C' + V (the mean is 0 with r = 0).

Run from this directory (about a minute):
    /usr/bin/python3 chains.py > chains.out
Output: one line per loop, "name K k k0 alpha beta d channel rho e2"
(e2 = nan when rho >= 1), after '#' lines with the versions and the
frequency and damping ranges.
"""
import sys

import numpy as np
import scipy
from scipy import integrate, linalg

H, C_DELAY = 0.01, 0.0005
PS, PA = 0.05, 0.1
SC_ATOMS = [(0.001, 1.0)]
CA_ATOMS = [(0.002, 0.7), (0.005, 0.2), (0.0095, 0.1)]
# command channel states: (mean dwell s, loss, atoms)
CHANNELS = {
    "iid": [(None, PA, CA_ATOMS)],
    "bursty": [(2.0, 0.02, CA_ATOMS), (0.2, 0.5, [(0.006, 1.0)])],
}
Q_FORCE, V_SENSOR = 1e-4, 1e-8

# name, K, k, k0, alpha, beta, d, command channel
LOOPS = [
    ("chain10_stable", 5, 400.0, 0.0, 0.53, 0.0012, 50.0, "iid"),
    ("chain10_unstable", 5, 400.0, 0.0, 0.53, 0.0012, 1000.0, "iid"),
    ("chain16_stable_near_1", 8, 185.0, 0.0, 0.078, 0.0036, 10.0, "iid"),
    ("chain16_stable_near_1_clustered_bursty", 8, 0.02, 1.0, 0.1, 0.0, 0.1, "bursty"),
    ("chain16_unstable", 8, 185.0, 0.0, 0.078, 0.0036, 800.0, "iid"),
    ("chain24_stable", 12, 900.0, 0.0, 0.36, 0.0012, 300.0, "iid"),
    ("chain24_unstable", 12, 900.0, 0.0, 0.36, 0.0012, 2000.0, "iid"),
    ("chain40_stable", 20, 3600.0, 0.0, 0.44, 0.0008, 200.0, "iid"),
    ("chain40_stable_clustered", 20, 0.2, 25.0, 0.5, 0.0, 1.0, "iid"),
    ("chain40_unstable", 20, 3600.0, 0.0, 0.44, 0.0008, 6000.0, "iid"),
]


def plant(K, k, k0, alpha, beta):
    S = np.zeros((K, K))
    for i in range(K):
        S[i, i] = (2 * k if i < K - 1 else k) + k0
        if i > 0:
            S[i, i - 1] = S[i - 1, i] = -k
    n = 2 * K
    A = np.zeros((n, n))
    A[:K, K:] = np.eye(K)
    A[K:, :K] = -S
    A[K:, K:] = -(alpha * np.eye(K) + beta * S)
    B = np.zeros((n, 1))
    B[K, 0] = 1.0
    C = np.zeros((1, n))
    C[0, 0] = 1.0
    W = np.zeros((n, n))
    W[K:, K:] = Q_FORCE * np.eye(K)
    w = np.sqrt(np.linalg.eigvalsh(S))
    return A, B, C, W, w, alpha / (2 * w) + beta * w / 2


def zoh(A, B, t):
    n, m = B.shape
    M = np.zeros((n + m, n + m))
    M[:n, :n] = A
    M[:n, n:] = B
    E = linalg.expm(M * t)
    return E[:n, :n], E[:n, n:]


def solve(K, k, k0, alpha, beta, d, channel):
    A, B, C, W, w, zeta = plant(K, k, k0, alpha, beta)
    n = A.shape[0]
    nz = n + 1
    Phi, Gam = zoh(A, B, H)
    Wd, _ = integrate.quad_vec(lambda s: linalg.expm(A * s) @ W @ linalg.expm(A.T * s), 0, H,
                               epsabs=1e-20, epsrel=1e-13)
    Wd = (Wd + Wd.T) / 2
    Xi = np.zeros((n + 1, n + 1))
    Xi[:n, :n] = Wd
    Xi[n, n] = V_SENSOR
    D = np.array([[d]])
    F01 = np.zeros((nz, nz))
    F01[:n, :n] = Phi
    F01[:n, n:] = Gam
    F01[n:, n:] = np.eye(1)
    H01 = np.zeros((nz, n + 1))
    H01[:n, :n] = np.eye(n)

    def modes_of(pa, ca_atoms):
        modes = []  # (probability, F, H)
        m2 = 0.0
        for s, ws in SC_ATOMS:
            for a, wa in ca_atoms:
                if s < H and s + a < H - C_DELAY:
                    tau = s + a + C_DELAY
                    _, G0 = zoh(A, B, H - tau)
                    G1 = Gam - G0
                    F = np.zeros((nz, nz))
                    F[:n, :n] = Phi - G0 @ D @ C
                    F[:n, n:] = G1
                    F[n:, :n] = -D @ C
                    Hm = np.zeros((nz, n + 1))
                    Hm[:n, :n] = np.eye(n)
                    Hm[:n, n:] = -G0 @ D
                    Hm[n:, n:] = -D
                    p = (1 - PS) * (1 - pa) * ws * wa
                    m2 += p
                    modes.append((p, F, Hm))
        modes.append((1 - m2, F01, H01))
        return modes

    states = CHANNELS[channel]
    N = len(states)
    if N == 1:
        P, pi = np.ones((1, 1)), np.ones(1)
    else:
        G = np.zeros((N, N))
        for i, (dwell, _, _) in enumerate(states):
            for j in range(N):
                if j != i:
                    G[i, j] = 1 / dwell / (N - 1)
            G[i, i] = -G[i].sum()
        P = linalg.expm(G * H)
        dw = np.array([st[0] for st in states])
        pi = dw / dw.sum()  # two states: pi proportional to the mean dwells
    per = [modes_of(pa, atoms) for _, pa, atoms in states]
    d2 = nz * nz
    big = np.zeros((N * d2, N * d2))
    b = np.zeros(N * d2)
    for i in range(N):
        Ki = sum(p * np.kron(F, F) for p, F, _ in per[i])
        Ci = sum(p * Hm @ Xi @ Hm.T for p, _, Hm in per[i])
        for j in range(N):
            big[j * d2:(j + 1) * d2, i * d2:(i + 1) * d2] = P[i, j] * Ki
            b[j * d2:(j + 1) * d2] += P[i, j] * pi[i] * Ci.reshape(-1, order="F")
    rho = max(abs(np.linalg.eigvals(big)))
    e2 = float("nan")
    if rho < 1:
        x = np.linalg.solve(np.eye(N * d2) - big, b)
        Q = sum(x[j * d2:(j + 1) * d2].reshape(nz, nz, order="F") for j in range(N))
        e2 = float(C @ Q[:n, :n] @ C.T + V_SENSOR)
    return rho, e2, w, zeta


def main():
    print("# Chains of lightly damped modes over a lossy, delaying network (estimate/testdata/reference/chains.py).")
    print("# scipy %s, numpy %s, python %s" % (scipy.__version__, np.__version__, sys.version.split()[0]))
    print("# name K k k0 alpha beta d channel rho e2")
    for name, K, k, k0, alpha, beta, d, channel in LOOPS:
        rho, e2, w, zeta = solve(K, k, k0, alpha, beta, d, channel)
        print("# %s: %d states, modes %.4g..%.4g rad/s, damping ratios %.3f..%.3f"
              % (name, 2 * K, w[0], w[-1], zeta.min(), zeta.max()))
        print("%s %d %r %r %r %r %r %s %.17g %.17g" % (name, K, k, k0, alpha, beta, d, channel, rho, e2))


if __name__ == "__main__":
    main()
