//go:build !linux

package timer

import "time"

// Slack is how late a Waiter may wake: a caller that must be on time
// sleeps until Slack before its deadline and spins the rest. Off Linux the
// precise Waiter is a Go timer, which rounds short waits up to about 1 ms.
const Slack = 1500 * time.Microsecond

// NewPrecise returns the best Waiter this system has: off Linux, a Go
// timer (NewPortable).
func NewPrecise() (Waiter, error) { return NewPortable(), nil }
