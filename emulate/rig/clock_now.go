package rig

import "rigwire/emulate/internal/timer"

// Now is the rig clock in nanoseconds: CLOCK_MONOTONIC on Linux, the same
// in every process of one host, so sample times can cross process
// boundaries (timer.Now).
func Now() int64 { return timer.Now() }
