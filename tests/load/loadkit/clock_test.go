package loadkit

import (
	"testing"

	"golang.org/x/sys/unix"
)

// monoAgreeNs is how far Mono may stray from a direct clock_gettime read
// taken just before and after it: generous, since a shared machine may
// deschedule the test between the reads; this checks the anchoring (a
// wrong clock would be off by seconds or more), not speed.
const monoAgreeNs = 50e6

func TestMonoMatchesClockGettime(t *testing.T) {
	m, err := NewMono()
	if err != nil {
		t.Fatal(err)
	}
	prev := m.Now()
	for range 100 {
		var a, b unix.Timespec
		if err := unix.ClockGettime(unix.CLOCK_MONOTONIC, &a); err != nil {
			t.Fatal(err)
		}
		now := m.Now()
		if err := unix.ClockGettime(unix.CLOCK_MONOTONIC, &b); err != nil {
			t.Fatal(err)
		}
		if now < a.Nano()-monoAgreeNs || now > b.Nano()+monoAgreeNs {
			t.Fatalf("Mono %d outside [%d, %d] ± %g", now, a.Nano(), b.Nano(), monoAgreeNs)
		}
		if now < prev {
			t.Fatalf("Mono went back: %d after %d", now, prev)
		}
		prev = now
	}
}
