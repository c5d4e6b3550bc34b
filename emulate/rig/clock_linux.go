//go:build linux

package rig

import "golang.org/x/sys/unix"

// Now is CLOCK_MONOTONIC in nanoseconds: the same clock in every process
// of one host, so sample times can cross process boundaries.
func Now() int64 {
	var ts unix.Timespec
	_ = unix.ClockGettime(unix.CLOCK_MONOTONIC, &ts)
	return ts.Nano()
}
