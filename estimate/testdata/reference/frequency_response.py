"""Reference values for the loss-free, delay-free loop's response to a
sinusoidal reference (estimate/model.md §15), from SciPy (Debian
python3-scipy), independent of the Go code: the classical discrete-time
closed loop T = (I + P K)^-1 P K, P and K evaluated entry by entry with
scipy.signal.dfreqresp, the plant sampled with scipy.signal.cont2discrete
(zero-order hold), the noise covariance of the closed loop from
scipy.linalg.solve_discrete_lyapunov, the sampled process noise by Van
Loan's method (C. F. Van Loan, "Computing integrals involving the matrix
exponential", IEEE Trans. Automat. Control 23(3), 1978).

Loops (invented for the check):
  servo  h = 10 ms, plant A = [[0, 1], [0, -2]], B = [[0], [3]], C = [1, 0],
         W = diag(0, 0.04), V = 1e-6; controller Ac = 1, Bc = 0.01, Cc = 5,
         Dc = 12; reference amplitude 0.5, phase 0.
  mimo   h = 20 ms, plant A = [[-1, 0.5], [0.2, -2]], B = I, C = I,
         W = diag(0.01, 0.02), V = diag(1e-4, 2e-4); static controller
         D = [[3, 0.5], [0, 4]]; reference amplitudes (1, 0.5), phases
         (0, 90) degrees.

The reference of output i is A_i sin(w t + phi_i) = Re(R_i e^{j w t}) with
R_i = -j A_i e^{j phi_i}; the mean output is Re(Y e^{j w t}), Y = T R.
Printed per loop, frequency f (Hz) and output i:
  <loop>_f<f>_y<i>_re, _im   Y_i
  <loop>_var<i>              Var(e_i) from the noise alone (any frequency)

Run from this directory:
    /usr/bin/python3 frequency_response.py > frequency_response.out
"""
import numpy as np
import scipy
from scipy import signal, linalg


def van_loan(A, W, h):
    n = A.shape[0]
    M = np.zeros((2 * n, 2 * n))
    M[:n, :n] = -A
    M[:n, n:] = W
    M[n:, n:] = A.T
    F = linalg.expm(M * h)
    phi = F[n:, n:].T
    return phi @ F[:n, n:]


def freq(num_a, num_b, num_c, num_d, h, w):
    """Frequency response of a SISO discrete state-space system at w rad/s."""
    sys = signal.StateSpace(num_a, num_b, num_c, num_d, dt=h)
    _, H = signal.dfreqresp(sys, w=[w * h])
    return H[0]


def loop(name, A, B, C, W, V, h, ctl, amps, phases, freqs):
    n, m = B.shape
    p = C.shape[0]
    Phi, Gam, _, _, _ = signal.cont2discrete((A, B, C, np.zeros((p, m))), h, method="zoh")
    Ac, Bc, Cc, Dc = ctl
    nc = 0 if Ac is None else Ac.shape[0]
    R = np.array([-1j * a * np.exp(1j * np.deg2rad(ph)) for a, ph in zip(amps, phases)])
    for f in freqs:
        w = 2 * np.pi * f
        P = np.zeros((p, m), dtype=complex)
        for i in range(p):
            for j in range(m):
                P[i, j] = freq(Phi, Gam[:, [j]], C[[i], :], np.zeros((1, 1)), h, w)
        K = np.zeros((m, p), dtype=complex)
        for i in range(m):
            for j in range(p):
                if nc:
                    K[i, j] = freq(Ac, Bc[:, [j]], Cc[[i], :], Dc[[i], [j]].reshape(1, 1), h, w)
                else:
                    K[i, j] = Dc[i, j]
        L = P @ K
        T = np.linalg.solve(np.eye(p) + L, L)
        Y = T @ R
        for i in range(p):
            print(f"{name}_f{f:g}_y{i}_re {Y[i].real!r}")
            print(f"{name}_f{f:g}_y{i}_im {Y[i].imag!r}")
    # Noise: closed loop z = [x; xc], e = r - C x - v.
    Wd = van_loan(A, W, h)
    k = n + nc
    Acl = np.zeros((k, k))
    Acl[:n, :n] = Phi - Gam @ Dc @ C
    Bv = np.zeros((k, p))
    Bv[:n, :] = -Gam @ Dc
    if nc:
        Acl[:n, n:] = Gam @ Cc
        Acl[n:, :n] = -Bc @ C
        Acl[n:, n:] = Ac
        Bv[n:, :] = -Bc
    Q = np.zeros((k, k))
    Q[:n, :n] = Wd
    Q += Bv @ V @ Bv.T
    Pss = linalg.solve_discrete_lyapunov(Acl, Q)
    var = np.diag(C @ Pss[:n, :n] @ C.T + V)
    for i in range(p):
        print(f"{name}_var{i} {var[i]!r}")


print(f"# scipy {scipy.__version__}")
loop("servo",
     np.array([[0.0, 1.0], [0.0, -2.0]]), np.array([[0.0], [3.0]]), np.array([[1.0, 0.0]]),
     np.diag([0.0, 0.04]), np.array([[1e-6]]), 0.01,
     (np.array([[1.0]]), np.array([[0.01]]), np.array([[5.0]]), np.array([[12.0]])),
     [0.5], [0.0], [0.05, 0.5, 1, 3, 20, 45])
loop("mimo",
     np.array([[-1.0, 0.5], [0.2, -2.0]]), np.eye(2), np.eye(2),
     np.diag([0.01, 0.02]), np.diag([1e-4, 2e-4]), 0.02,
     (None, None, None, np.array([[3.0, 0.5], [0.0, 4.0]])),
     [1.0, 0.5], [0.0, 90.0], [0.1, 1, 5, 12])
