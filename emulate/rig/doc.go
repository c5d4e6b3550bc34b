// Package rig simulates a networked control rig on real UDP sockets, as
// estimate/model.md §1 describes it: a node that holds the plant, its time-driven
// sensor and its hold actuator, and an event-driven controller, so the
// relay, the monitor and the prediction can be exercised without hardware.
//
// The node integrates the continuous-time plant exactly between input
// changes (plant.go: Φ(δ), Γ(δ) and the process-noise covariance W_d(δ) of
// each sub-interval by Van Loan's method, through estimate.Discretize),
// samples y_k = C x(t_k) + v_k every period h on a precise ticker
// (waiter*.go), sends one text datagram per sample (wire.go: sequence,
// sample time, outputs, laid out as the loop's decode section says) and
// applies a command the moment it arrives if its total delay since t_k is
// below h, else discards it as late (node.go). It can write a sample log
// (samplelog.go). The controller (controller.go) runs the loop's discrete
// controller on each sample that is not stale, waits the loop's compute
// delay and replies at once.
//
// Both ends stamp time with CLOCK_MONOTONIC (clock*.go), which on Linux is
// one clock for every process on a host: the sample time t_k in a datagram
// means the same thing to the node, the controller and the relay's host.
package rig
