package timer

import "time"

// Waiter puts one goroutine to sleep until an armed time. Arm may be
// called from any goroutine while Wait is blocked; the latest arm wins.
// Callers serialise Arm and Disarm among themselves (the relay does so with
// the direction's lock).
type Waiter interface {
	// Arm makes Wait return d from now (at once when d ≤ 0).
	Arm(d time.Duration)
	// Disarm makes Wait block until the next Arm.
	Disarm()
	// Wait blocks until the armed time. It may return early (spuriously):
	// callers look at the clock again.
	Wait()
	// Close releases the waiter; it is not used afterwards.
	Close()
}

// NewPortable returns a Waiter on a Go timer: portable, and the one
// testing/synctest can drive, but Go rounds waits under a millisecond up
// to about one, so a sleeper wakes late by up to that much.
func NewPortable() Waiter {
	t := time.NewTimer(time.Hour)
	t.Stop()
	return &goTimer{t: t}
}

type goTimer struct{ t *time.Timer }

func (w *goTimer) Arm(d time.Duration) { w.t.Reset(max(d, 0)) }
func (w *goTimer) Disarm()             { w.t.Stop() }
func (w *goTimer) Wait()               { <-w.t.C }
func (w *goTimer) Close()              { w.t.Stop() }
