//go:build linux

package emulate

import "golang.org/x/sys/unix"

// monotonicNow is CLOCK_MONOTONIC in nanoseconds, the clock the simulated
// rig stamps its samples with: the same in every process of one host.
func monotonicNow() int64 {
	var ts unix.Timespec
	_ = unix.ClockGettime(unix.CLOCK_MONOTONIC, &ts)
	return ts.Nano()
}
