// Package rig simulates a networked control rig on real UDP sockets, as
// estimate/model.md §1 describes it: a node that holds the plant, its
// time-driven sensor and its hold actuator, and an event-driven
// controller, so the relay, the monitor and the prediction can be
// exercised without hardware. `monitor rig node`, `monitor rig
// controller`, `monitor soak --simulated-rig` and `monitor demo` run it.
//
// The node (node.go) integrates the continuous-time plant exactly between
// input changes (plant.go), samples y_k = C x(t_k) + v_k every period h,
// waking at t_k on a timerfd and spinning the last stretch (clock.go),
// sends one text datagram per sample (wire.go: sequence, sample time,
// outputs, laid out as the loop's decode section says) and applies a
// command the moment it arrives if its total delay since t_k is below the
// loop's command horizon Na·h (Na = 1 unless the loop file's timing
// section says more) and it answers a newer sample than the last command
// applied, else discards it as late, duplicate or older — so several
// commands may change the input within one period, each at its arrival,
// and the plant is integrated exactly between them (estimate/model.md
// §13). It can write a sample log, one row per sample with the delay at
// which that sample's command was applied, up to Na·h (SampleLogHeader,
// in node.go). The controller (controller.go) runs the loop's discrete
// controller on each sample younger than its sample horizon Ns·h and
// newer than the last one it used (else discards it as stale, or as a
// duplicate or overtaken one), waits the loop's compute delay and replies
// at once. Both ends judge an arrival by the same rule (policy.go); with
// horizons of one period it is the rule of estimate/model.md §1. Each end
// reads its socket with a blocking read on a thread of its own
// (recv*.go).
//
// What the rig uses of estimate, and why. The rig's plant is the sampled
// plant model the prediction is built on, so that a measured run and the
// prediction cannot differ in what the plant does between samples:
//
//   - estimate.Discretize gives Φ(δ), Γ(δ) and the process-noise
//     covariance W_d(δ) of every sub-interval δ the node steps over (the
//     zero-order-hold sampling by Van Loan's method, estimate/model.md §3);
//   - estimate/simstep is the step's arithmetic on vectors (the noise
//     draws, Φ x + w, the controller's update), one copy shared with the
//     prediction's Monte-Carlo check, estimate.Simulate;
//   - SteadyStart alone asks the prediction itself (estimate.Build and
//     Model.Steady) for the stationary mean E[z] of z = [x; u; xc], to
//     start a run in steady state instead of at rest.
//
// Nothing else of estimate is used, and nothing of the relay: of emulate
// the rig shares only the precise waiter (emulate/internal/timer).
//
// Both ends stamp time with CLOCK_MONOTONIC (clock_*.go), which on Linux
// is one clock for every process on a host: the sample time t_k in a
// datagram means the same thing to the node, the controller and the
// relay's host.
//
// Place in the flow: the rig is the two ends of the link. The node's
// sensor datagrams go to the relay (emulate), which impairs them, copies
// them to the monitor's tap and passes them to the controller; the
// controller's commands go back through the relay to the node. The
// monitor (estimate/engine) measures E[eᵀe] from the tapped datagrams and
// compares it with the prediction (estimate) of the same loop file.
package rig
