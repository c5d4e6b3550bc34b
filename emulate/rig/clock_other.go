//go:build !linux

package rig

import "time"

var epoch = time.Now()

// Now is nanoseconds on this process's monotonic clock. Off Linux it is
// not shared between processes: run the node and the controller in one
// process, or accept that stale and late decisions use unrelated clocks.
func Now() int64 { return int64(time.Since(epoch)) }
