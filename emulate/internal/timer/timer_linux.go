//go:build linux

package timer

import (
	"fmt"
	"time"

	"golang.org/x/sys/unix"
)

// Slack is how late a precise Waiter may wake on a locked OS thread: a
// caller that must be on time sleeps until Slack before its deadline and
// spins the rest. A timerfd read on a locked OS thread wakes within about
// 0.1 ms, where a Go timer rounds waits under 1 ms up to about 1 ms
// (DEVELOPERS.md, "The relay's hot path").
const Slack = 100 * time.Microsecond

// timerfd sleeps on a Linux timerfd (CLOCK_MONOTONIC) with a plain
// blocking read. The goroutine that waits is locked to its OS thread (its
// caller's doing, see NewPrecise), so the wake-up comes straight from the
// kernel's high-resolution timer rather than through the Go scheduler's
// millisecond-resolution poller.
type timerfd struct {
	fd  int
	buf [8]byte
}

// NewPrecise returns a Waiter on a timerfd. The goroutine that calls
// Wait should have called runtime.LockOSThread.
func NewPrecise() (Waiter, error) {
	fd, err := unix.TimerfdCreate(unix.CLOCK_MONOTONIC, unix.TFD_CLOEXEC)
	if err != nil {
		return nil, fmt.Errorf("timerfd: %w", err)
	}
	return &timerfd{fd: fd}, nil
}

func (w *timerfd) Arm(d time.Duration) {
	if d <= 0 {
		d = 1 // a zero value would disarm
	}
	spec := unix.ItimerSpec{Value: unix.NsecToTimespec(int64(d))}
	_ = unix.TimerfdSettime(w.fd, 0, &spec, nil)
}

func (w *timerfd) Disarm() {
	var spec unix.ItimerSpec
	_ = unix.TimerfdSettime(w.fd, 0, &spec, nil)
}

func (w *timerfd) Wait() {
	for {
		_, err := unix.Read(w.fd, w.buf[:])
		if err != unix.EINTR {
			return
		}
	}
}

func (w *timerfd) Close() { unix.Close(w.fd) }

// Now is CLOCK_MONOTONIC in nanoseconds: the same clock in every process
// of one host, so the simulated rig's sample times cross process
// boundaries and the relay can compare them with its own.
func Now() int64 {
	var ts unix.Timespec
	_ = unix.ClockGettime(unix.CLOCK_MONOTONIC, &ts)
	return ts.Nano()
}
