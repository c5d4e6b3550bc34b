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

var epoch = time.Now()

// Now is nanoseconds on this process's monotonic clock. Off Linux it is
// not shared between processes: run the rig's ends and the relay in one
// process, or accept that their times use unrelated clocks.
func Now() int64 { return int64(time.Since(epoch)) }
