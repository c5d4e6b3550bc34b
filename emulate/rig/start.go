package rig

import (
	"errors"
	"fmt"

	"rigwire/estimate"
	"rigwire/profiles"
)

// Start is where the simulated loop begins: the plant state x, the input
// the actuator holds, and the controller state xc.
type Start struct {
	X, U, XC []float64
}

// RestStart is the loop at rest: x = 0, u = 0, xc = 0.
func RestStart(loop *profiles.Loop) Start {
	n, m, _, nc := loop.Dims()
	return Start{X: make([]float64, n), U: make([]float64, m), XC: make([]float64, nc)}
}

// ErrNoSteadyState: the loop is not mean-square stable, so it has no
// steady mean to start from.
var ErrNoSteadyState = errors.New("the loop is not mean-square stable: no steady mean to start from")

// ErrNoExactSteady: the loop's timing policy has no exact model
// (estimate/model.md §13: a sample horizon above one period), so there is
// no predicted mean to start from.
var ErrNoExactSteady = errors.New("the timing policy has no exact model: no predicted steady mean to start from")

// SteadyStart is the loop at the predicted stationary mean E[z] of
// z = [x; u; …; xc] (estimate/model.md §4 and §13, estimate.Model.Steady:
// the plant first, the held input next, the controller last), so that a run
// measures the steady state from its first sample instead of a transient
// from rest. The node and the controller each compute it from the same
// loop file, so they agree without talking.
func SteadyStart(loop *profiles.Loop) (Start, error) {
	md, err := estimate.Build(loop, estimate.Options{})
	if errors.Is(err, estimate.ErrNoExactChain) {
		return Start{}, ErrNoExactSteady
	}
	if err != nil {
		return Start{}, fmt.Errorf("steady start: %w", err)
	}
	mo, err := md.Steady()
	if errors.Is(err, estimate.ErrNotStable) {
		return Start{}, ErrNoSteadyState
	}
	if err != nil {
		return Start{}, fmt.Errorf("steady start: %w", err)
	}
	n, m, _, nc := loop.Dims()
	z := mo.Mean
	return Start{
		X:  append([]float64(nil), z[:n]...),
		U:  append([]float64(nil), z[n:n+m]...),
		XC: append([]float64(nil), z[len(z)-nc:]...),
	}, nil
}
