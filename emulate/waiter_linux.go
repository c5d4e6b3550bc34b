//go:build linux

package emulate

import (
	"fmt"
	"time"

	"golang.org/x/sys/unix"
)

// timerfdWaiter sleeps on a Linux timerfd (CLOCK_MONOTONIC) with a plain
// blocking read. The release goroutine locks itself to its OS thread, so
// the wake-up comes straight from the kernel's high-resolution timer rather
// than through the Go scheduler's millisecond-resolution poller.
type timerfdWaiter struct {
	fd  int
	buf [8]byte
}

func newPreciseWaiter() (waiter, error) {
	fd, err := unix.TimerfdCreate(unix.CLOCK_MONOTONIC, unix.TFD_CLOEXEC)
	if err != nil {
		return nil, fmt.Errorf("timerfd: %w", err)
	}
	return &timerfdWaiter{fd: fd}, nil
}

func (w *timerfdWaiter) arm(d time.Duration) {
	if d <= 0 {
		d = 1 // a zero value would disarm
	}
	spec := unix.ItimerSpec{Value: unix.NsecToTimespec(int64(d))}
	_ = unix.TimerfdSettime(w.fd, 0, &spec, nil)
}

func (w *timerfdWaiter) disarm() {
	var spec unix.ItimerSpec
	_ = unix.TimerfdSettime(w.fd, 0, &spec, nil)
}

func (w *timerfdWaiter) wait() {
	for {
		_, err := unix.Read(w.fd, w.buf[:])
		if err != unix.EINTR {
			return
		}
	}
}

func (w *timerfdWaiter) close() { unix.Close(w.fd) }
