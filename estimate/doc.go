// Package estimate computes what theory predicts for a control loop
// closed over a lossy, delaying network: mean-square stability, the
// steady moments of the tracking error and the loss margin. It is pure
// numerics: it takes a validated [profiles.Loop] and returns numbers or
// an error that says why it cannot. It also holds the online estimators
// of the monitor and the goodness-of-fit statistics used to fit and check
// profiles (ks.go). The sections below are the project's description of
// the model; code elsewhere cites them by their headings.
//
// # The rig and its timing
//
// A continuous-time linear plant dx = (A x + B u) dt + dw, E[dw dwᵀ] = W dt,
// is sampled every h: y_k = C x(t_k) + v_k, v_k ~ N(0, V), t_k = k h. Each
// period:
//
//  1. The sensor node samples y_k at t_k and sends it, with its sequence
//     number and t_k, towards the controller (sensor_to_controller).
//  2. The controller runs on each sample it receives: with e_k = r − y_k,
//     u_k = Cc xc_k + Dc e_k and xc_{k+1} = Ac xc_k + Bc e_k, and it sends
//     u_k back at once (controller_to_actuator). A sample delayed by a
//     period or more is stale and discarded; without a sample the
//     controller state is held.
//  3. The actuator applies u_k the moment it arrives, provided the total
//     delay τ_k = τsc + τca + c (c the compute delay) is below h, and
//     holds it (zero-order hold); a lost or late command leaves the
//     previous input in place.
//
// So each period is in one of three modes: m0 (sample lost or stale:
// controller and input held), m1 (sample used, command lost or late:
// controller advanced, input held), m2(τ) (both delivered, τ < h: the held
// input on [t_k, t_k + τ), u_k after).
//
// # The network
//
// Each direction is one set of loss and delay parameters (i.i.d. packets)
// or a Markov-modulated channel: states with their own loss and delay law,
// switching in continuous time. For the prediction a direction's state is
// taken as constant over a period and sampled at t_k, moving by
// P = expm(G h) over one period (G the channel's generator); the two
// directions are independent, so the joint chain has P = P_sc ⊗ P_ca. In a
// joint state with loss probabilities ps, pa and delay laws Dsc, Dca:
//
//	P(m0)       = ps + (1 − ps) P(τsc ≥ h)
//	P(m2, dτ)   = (1 − ps)(1 − pa) P(τsc < h, τsc + τca + c ∈ dτ),  τ < h
//	P(m1)       = 1 − P(m0) − P(m2)
//
// The relay draws a command's fate from the state its direction is in at
// the command's arrival; taking it at t_k is an approximation, negligible
// when dwell times are far longer than the delays.
//
// # The closed loop as a jump linear system
//
// With z_k = [x_k; u_{k−1}; xc_k], Φ = e^{Ah}, Γ = ∫₀ʰ e^{As} ds B,
// Γ0(τ) = ∫₀^{h−τ} e^{As} ds B, Γ1(τ) = Γ − Γ0(τ) and
// W_d = ∫₀ʰ e^{As} W e^{Aᵀs} ds (discretize.go):
//
//	m0:    x' = Φx + Γ u + w                 u' = u     xc' = xc
//	m1:    x' = Φx + Γ u + w                 u' = u     xc' = Ac xc + Bc e
//	m2(τ): x' = Φx + Γ1(τ) u + Γ0(τ) u_k + w u' = u_k   xc' = Ac xc + Bc e
//
// Each mode is affine, z' = F z + g + H ξ with ξ = [w; v] (modes.go), and
// the network's joint state drives the choice: a Markov jump linear
// system. An actuator that applies zero unless a fresh command is in force
// (actuator.on_loss) changes the held input to zero in every mode.
//
// # Moments and stability
//
// With θ the joint network state, q_i = E[z 1{θ=i}], Q_i = E[z zᵀ 1{θ=i}]
// and E_i the expectation over the modes of state i, the first and second
// moments follow the recursions of O. L. V. Costa, M. D. Fragoso and
// R. P. Marques (Discrete-Time Markov Jump Linear Systems, Springer 2005;
// moments.go). The loop is mean-square stable iff the spectral radius ρ
// of the second-moment operator ℒ: Q ↦ (Σ_i P_ij E_i[F Q_i Fᵀ])_j is below
// 1. The tracked error e = r − C x − v then has E[e] = r − C E[x] and
// E[eᵀe] = |E[e]|² + tr(C Cov(x) Cᵀ) + tr(V).
//
// # The expectation over the delays
//
// The delivered-in-time mode is integrated over the law of τ exactly up
// to quadrature, whatever the shape of the delay laws against the period
// (delaylaw.go, lawparts.go). Each law is split into its atoms and
// continuous pieces, and every piece is integrated in its own probability
// scale u = F(x) through its quantile function, by tanh–sinh quadrature
// (tanhsinh.go): a density singular at its start, a peak a thousand times
// narrower than the period or a heavy tail all become bounded, smooth
// integrands. Atoms stay at their own points. What is integrated is
// checked: the pieces must rebuild each law's own CDF, and the mass of
// the in-time mode must agree with the same probability computed the
// other way round from the CDFs; a law that fails either is refused with
// an error naming the direction, the network state and the law.
//
// # Deciding stability
//
// ρ is found by tests of s against it (stability.go): X − ℒ(X)/s = I is
// solved with refined accuracy and the answer read from the smallest
// eigenvalue of X (≥ 1 above ρ, ≤ 0 at or below it), "undecided" when
// the arithmetic cannot tell; ρ is bracketed by such tests, estimated by
// inverse iteration and reported with its error. A loop is stable only
// when certified, unstable when ρ ≥ 1 is certified, and marginal when ρ
// lies within its error of 1. The steady moments solve two linear systems.
//
// # What a prediction reports
//
// The stability verdict, ρ and its error, the steady error moments (mean,
// E[eᵀe], standard deviation; none unless stable) and the loss margin:
// the smallest extra loss q ∈ [0, 1], applied independently to every
// packet of both directions on top of the profile (ps → ps + (1 − ps) q,
// likewise pa), at which the loop stops being mean-square stable, to
// 1e-4; 1 when it stays stable for every q < 1. [Simulate] runs the same
// loop by Monte Carlo from the profile's own samplers.
//
// # Conventions
//
//   - "Stale" and "late" mean a delay ≥ h: exactly h counts as stale or
//     late.
//   - ρ(q) need not be monotone in the extra loss, so the margin scans q
//     on a grid before bisecting the first crossing; at q = 1 itself a
//     held input never converges, so the scan stops just below.
//   - For a plant with a free integrator the expected error is the
//     loss-free one whatever the network: that equilibrium is a fixed
//     point of every mode.
//   - The stale and late rules compare the sample time with the
//     controller's and actuator's clocks (one host, or synchronised
//     clocks). Latencies of the rig's own stack add to τ; left out of
//     compute_delay they bias the prediction (about +0.6–0.9 % on a
//     loopback rig).
//
// # Limits
//
// Every number the prediction returns is finite. A plant whose sampling
// over one period overflows float64, gains that make the operator
// overflow, and loops whose second-moment operator would be larger than
// [MaxOperatorSide] (N·nz(nz+1)/2 for nz loop states and N joint network
// states) are refused up front with an error that names the sizes.
//
// # Sources for checks
//
// The tests name their source beside each value: K. J. Åström and
// B. Wittenmark, Computer-Controlled Systems (3rd ed., 1997) for sampling
// and the fractional input delay; C. F. Van Loan, "Computing integrals
// involving the matrix exponential", IEEE TAC 23(3), 1978; Costa, Fragoso
// and Marques (2005) for the moments; L. Schenato, B. Sinopoli,
// M. Franceschetti, K. Poolla and S. Sastry, "Foundations of control and
// estimation over lossy networks", Proc. IEEE 95(1), 2007, for the
// loss threshold 1/a² of a deadbeat scalar loop with a zero input on loss
// (with a held input a renewal argument gives 1/(a(2a+1)),
// closedform_test.go); and values from GNU Octave's control package and
// SciPy committed in tests/reference with the commands that made them.
//
// Entry points: [Predict] for the prediction, [Build] for the model itself
// ([Model.Transient] for a step response, [Model.Radius]), [Sweep] for a
// curve against extra loss or a delay scale, [Simulate].
package estimate
