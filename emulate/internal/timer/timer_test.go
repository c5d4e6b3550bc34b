package timer

import (
	"runtime"
	"testing"
	"time"
)

// waiters are the two kinds, each made fresh for a case.
var waiters = []struct {
	name string
	make func(t *testing.T) Waiter
}{
	{"portable", func(*testing.T) Waiter { return NewPortable() }},
	{"precise", func(t *testing.T) Waiter {
		w, err := NewPrecise()
		if err != nil {
			t.Fatal(err)
		}
		return w
	}},
}

// TestWaiterContract checks what the relay's release goroutine and the
// rig's ticker rely on: a wait armed for d does not end before d has
// passed, an arm at or below zero ends the wait at once, the latest arm
// wins (a later, shorter arm from another goroutine wakes a wait armed
// far ahead, as a newly scheduled earlier datagram does), and after a
// disarm the next arm still works. No upper bound on the wake-up is
// asserted: that is the machine's, not the contract's.
func TestWaiterContract(t *testing.T) {
	const d = 3 * time.Millisecond
	for _, wk := range waiters {
		t.Run(wk.name, func(t *testing.T) {
			runtime.LockOSThread()
			defer runtime.UnlockOSThread()
			w := wk.make(t)
			defer w.Close()

			start := time.Now()
			w.Arm(d)
			w.Wait()
			if got := time.Since(start); got < d {
				t.Errorf("armed for %v, woke after %v", d, got)
			}

			for _, z := range []time.Duration{0, -time.Second} {
				w.Arm(z)
				w.Wait() // must not block
			}

			w.Arm(time.Hour)
			go func() {
				time.Sleep(time.Millisecond)
				w.Arm(time.Millisecond)
			}()
			w.Wait() // would block for an hour if the later arm did not win

			w.Arm(time.Hour)
			w.Disarm()
			w.Arm(time.Millisecond)
			w.Wait()
		})
	}
}

// TestWaiterNoAlloc: arming and waiting sit on the relay's per-datagram
// path, which does not allocate.
func TestWaiterNoAlloc(t *testing.T) {
	for _, wk := range waiters {
		t.Run(wk.name, func(t *testing.T) {
			w := wk.make(t)
			defer w.Close()
			if n := testing.AllocsPerRun(100, func() {
				w.Arm(time.Microsecond)
				w.Wait()
				w.Disarm()
			}); n != 0 {
				t.Errorf("%v allocations per arm, wait and disarm, want 0", n)
			}
		})
	}
}
