package emulate

import "time"

// waiter puts the release goroutine to sleep until the next release is
// near. arm may be called from any goroutine while wait is blocked; the
// latest arm wins. Callers serialise arm with the direction's lock.
type waiter interface {
	// arm makes wait return d from now (at once when d ≤ 0).
	arm(d time.Duration)
	// disarm makes wait block until the next arm.
	disarm()
	// wait blocks until the armed time. It may return early (spuriously);
	// callers look at the clock again.
	wait()
	close()
}

// timerWaiter sleeps on a Go timer: portable, and the one testing/synctest
// can drive, but Go rounds waits under a millisecond up to about one, so
// releases come late by up to that much.
type timerWaiter struct{ t *time.Timer }

func newTimerWaiter() *timerWaiter {
	t := time.NewTimer(time.Hour)
	t.Stop()
	return &timerWaiter{t: t}
}

func (w *timerWaiter) arm(d time.Duration) { w.t.Reset(max(d, 0)) }
func (w *timerWaiter) disarm()             { w.t.Stop() }
func (w *timerWaiter) wait()               { <-w.t.C }
func (w *timerWaiter) close()              { w.t.Stop() }
