// Package estimate computes what theory predicts for a control loop
// closed over a lossy, delaying network: mean-square stability, the
// steady moments of the tracking error and the loss margin. It is pure
// numerics: it takes a validated [profiles.Loop] and returns numbers or
// an error that says why it cannot. It also holds the online estimators
// of the monitor and the goodness-of-fit statistics used to fit and check
// profiles (ks.go).
//
// # The model
//
// A continuous-time plant dx = (A x + B u) dt + dw is sampled every h.
// Each period the sensor's sample may be lost or arrive too late (mode
// m0: controller and input held), the controller's command may be lost
// or arrive too late (m1: controller advanced, input held), or the
// command arrives at τ = τsc + τca + c < h and takes over from the held
// input (m2(τ)). With z = [x; u_{k−1}; xc] each mode is an affine map
// z' = F z + g + H ξ (modes.go), from Van Loan's discretization and the
// fractional-delay split Γ = Γ0(τ) + Γ1(τ) (discretize.go). The network
// state of each direction is a Markov chain sampled at the periods; the
// joint chain P = P_sc ⊗ P_ca carries the modes' probabilities, so the
// loop is a Markov jump linear system.
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
// # Stability and moments
//
// The first and second moments follow the recursions of Costa, Fragoso
// and Marques (moments.go); the second-moment operator ℒ acts on
// symmetric matrices (symop.go). Its spectral radius ρ decides
// mean-square stability (stability.go): tests of s against ρ solve
// X − ℒ(X)/s = I with refined accuracy and read the answer from the
// smallest eigenvalue of X (≥ 1 above ρ, ≤ 0 at or below it), saying
// "undecided" when the arithmetic cannot tell; ρ is bracketed by such
// tests and estimated by inverse iteration, and reported with its error.
// A loop is stable only when certified, unstable when ρ ≥ 1 is certified,
// and marginal when ρ lies within its error of 1. The steady moments
// solve two linear systems. The loss margin scans an extra loss on every
// packet and bisects the first loss of stability. [Simulate] runs the
// same loop by Monte Carlo from the profile's own samplers.
//
// # Limits
//
// Every number the prediction returns is finite. A plant whose sampling
// over one period overflows float64, gains that make the operator
// overflow, and loops whose second-moment operator would be larger than
// [MaxOperatorSide] (N·nz(nz+1)/2 for nz loop states and N joint network
// states) are refused up front with an error that names the sizes.
//
// Entry points: [Predict] for the prediction (stability verdict, ρ and its
// error, the error's steady moments, the loss margin), [Build] for the
// model itself ([Model.Transient] for a step response, [Model.Radius]),
// [Sweep] for a curve against extra loss or a delay scale, [Simulate].
package estimate
