package bench

import "testing"

// TestTurnaroundRing: the ring keeps the latest turnarounds only, and
// keeping one allocates nothing.
func TestTurnaroundRing(t *testing.T) {
	var tr turnarounds
	for i := range turnaroundKeep + 10 {
		tr.observe(0, int64(i), -1)
	}
	if tr.n != turnaroundKeep+10 || tr.ring[0] != float64(turnaroundKeep)/1e9 {
		t.Errorf("ring: n %d, first slot %g", tr.n, tr.ring[0])
	}
	if a := testing.AllocsPerRun(100, func() { tr.observe(1, 5, -1) }); a != 0 {
		t.Errorf("observe: %v allocations, want 0", a)
	}
}
