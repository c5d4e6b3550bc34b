package rig

import (
	"time"

	"rigwire/emulate/internal/timer"
)

// sleepUntil returns at or just after the time t on Now's clock: it
// sleeps on w until timer.Slack before t and spins the rest. Go timers
// round waits below 1 ms up to 1 ms; a timerfd read on a locked OS thread
// wakes within about 0.1 ms, and the spin takes up the rest. The goroutine
// that calls it has called runtime.LockOSThread.
func sleepUntil(w timer.Waiter, t int64) {
	for {
		d := t - int64(timer.Slack) - Now()
		if d <= 0 {
			break
		}
		w.Arm(time.Duration(d))
		w.Wait()
	}
	for Now() < t {
	}
}
