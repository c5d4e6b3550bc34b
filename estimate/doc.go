// Package estimate computes what theory predicts for a control loop
// closed over a lossy, delaying network: mean-square stability, the
// steady moments of the tracking error and the loss margin (MODEL.md).
// It is pure numerics: it takes a validated [profiles.Loop] and returns
// numbers. It also holds the goodness-of-fit statistics used to fit and
// check profiles (ks.go).
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
// # What is computed
//
// The expectation over m2 integrates the distribution of τ exactly up to
// quadrature: atoms of the delay laws at their own points, densities
// through the Chebyshev moments of their convolution (delaylaw.go). The
// first and second moments follow the recursions of Costa, Fragoso and
// Marques (moments.go); the second-moment operator acts on symmetric
// matrices (symop.go), its spectral radius decides mean-square stability
// and a Lyapunov solve decides it cheaply (stability.go); the steady
// moments solve two linear systems. The loss margin scans an extra loss
// on every packet and bisects the first loss of stability. [Simulate] runs
// the same loop by Monte Carlo from the profile's own samplers.
//
// Entry points: [Predict] for the numbers of MODEL.md §5, [Build] for the
// model itself ([Model.Transient] for a step response), [Sweep] for a
// curve against extra loss or a delay scale, [Simulate].
package estimate
