//go:build linux

package rig

import (
	"fmt"

	"golang.org/x/sys/unix"
)

// waiter sleeps until an absolute CLOCK_MONOTONIC time on a Linux timerfd
// (TFD_TIMER_ABSTIME) and spins the last spinNs. Go timers round waits
// below 1 ms up to 1 ms (measured; DEVELOPERS.md, "The relay's hot path"); a timerfd read on a locked
// OS thread wakes within about 0.1 ms, and the spin takes up the rest.
// The goroutine that calls until must have called runtime.LockOSThread.
type waiter struct {
	fd  int
	buf [8]byte
}

const spinNs = 100_000

func newWaiter() (*waiter, error) {
	fd, err := unix.TimerfdCreate(unix.CLOCK_MONOTONIC, unix.TFD_CLOEXEC)
	if err != nil {
		return nil, fmt.Errorf("timerfd: %w", err)
	}
	return &waiter{fd: fd}, nil
}

// until returns at or just after the monotonic time t (nanoseconds).
func (w *waiter) until(t int64) {
	if wake := t - spinNs; wake > Now() {
		spec := unix.ItimerSpec{Value: unix.NsecToTimespec(wake)}
		if err := unix.TimerfdSettime(w.fd, unix.TFD_TIMER_ABSTIME, &spec, nil); err == nil {
			for {
				if _, err := unix.Read(w.fd, w.buf[:]); err != unix.EINTR {
					break
				}
			}
		}
	}
	for Now() < t {
	}
}

func (w *waiter) close() { unix.Close(w.fd) }
