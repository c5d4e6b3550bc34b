package emulate

import (
	"math/rand/v2"
	"sort"
	"testing"
)

// TestScheduleOrdersTiesByArrival pushes packets whose due times repeat
// (as a batch read at one instant under a constant delay gives) in a
// shuffled order: they must come out by due time, then by arrival number,
// exactly as a stable sort of the arrival sequence would give them.
func TestScheduleOrdersTiesByArrival(t *testing.T) {
	r := rand.New(rand.NewPCG(1, 2))
	for trial := range 200 {
		n := 1 + r.IntN(64)
		ps := make([]*packet, n)
		for i := range ps {
			ps[i] = &packet{seq: uint64(i + 1), due: int64(r.IntN(4))}
		}
		want := append([]*packet(nil), ps...)
		sort.SliceStable(want, func(i, j int) bool { return want[i].due < want[j].due })
		r.Shuffle(n, func(i, j int) { ps[i], ps[j] = ps[j], ps[i] })
		s := schedule{h: make([]*packet, 0, n)}
		for _, p := range ps {
			s.push(p)
		}
		for i, w := range want {
			if got := s.pop(); got != w {
				t.Fatalf("trial %d: pop %d gave (due %d, seq %d), want (due %d, seq %d)", trial, i, got.due, got.seq, w.due, w.seq)
			}
		}
	}
}
