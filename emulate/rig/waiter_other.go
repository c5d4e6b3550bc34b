//go:build !linux

package rig

import "time"

// waiter sleeps on a Go timer and spins the last spinNs (coarser than the
// Linux timerfd: Go rounds short waits up to about 1 ms).
type waiter struct{}

const spinNs = 1_500_000

func newWaiter() (*waiter, error) { return &waiter{}, nil }

func (w *waiter) until(t int64) {
	if d := t - spinNs - Now(); d > 0 {
		time.Sleep(time.Duration(d))
	}
	for Now() < t {
	}
}

func (w *waiter) close() {}
