//go:build !linux

package emulate

import "time"

var monotonicEpoch = time.Now()

// monotonicNow is a monotonic clock in nanoseconds; off Linux it is this
// process's own, so sample times from another process cannot be compared
// with it (SampleClockMonotonic is for a rig on the same Linux host).
func monotonicNow() int64 { return int64(time.Since(monotonicEpoch)) }
