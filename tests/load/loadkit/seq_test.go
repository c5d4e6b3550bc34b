package loadkit

import "testing"

// The expected counts are worked by hand from the definitions of RFC 4737
// §3 (a datagram is reordered if its number is below NextExp, one more than
// the highest number received before it).
func TestSeqTracker(t *testing.T) {
	cases := []struct {
		name  string
		limit uint64
		seqs  []uint64
		sent  uint64
		want  SeqTracker // counters only
		lost  uint64
		gaps  uint64
	}{
		{
			name: "in order", limit: 100, seqs: []uint64{0, 1, 2, 3, 4}, sent: 5,
			want: SeqTracker{Unique: 5, NextExp: 5},
		},
		{
			name: "middle lost", limit: 100, seqs: []uint64{0, 1, 3, 4}, sent: 5,
			want: SeqTracker{Unique: 4, NextExp: 5}, lost: 1, gaps: 1,
		},
		{
			name: "tail lost is seen only with the sent count", limit: 100,
			seqs: []uint64{0, 1, 2}, sent: 5,
			want: SeqTracker{Unique: 3, NextExp: 3}, lost: 2, gaps: 0,
		},
		{
			// RFC 4737 §3.3 example shape: 1, 2, 4, 5, 3 — only 3 is reordered.
			name: "one late", limit: 100, seqs: []uint64{1, 2, 4, 5, 3}, sent: 6,
			want: SeqTracker{Unique: 5, Reordered: 1, NextExp: 6}, lost: 1, gaps: 1,
		},
		{
			// 0, 3, 1, 2: both 1 and 2 arrive below NextExp = 4.
			name: "one early", limit: 100, seqs: []uint64{0, 3, 1, 2}, sent: 4,
			want: SeqTracker{Unique: 4, Reordered: 2, NextExp: 4},
		},
		{
			name: "duplicates are not reordered", limit: 100,
			seqs: []uint64{0, 1, 1, 2, 0}, sent: 3,
			want: SeqTracker{Unique: 3, Duplicates: 2, NextExp: 3},
		},
		{
			name: "beyond the limit", limit: 10, seqs: []uint64{0, 9, 10, 1 << 40}, sent: 10,
			want: SeqTracker{Unique: 2, Reordered: 0, OutOfRange: 2, NextExp: 10}, lost: 8, gaps: 8,
		},
		{
			name: "more received than said sent", limit: 100, seqs: []uint64{0, 1, 2}, sent: 2,
			want: SeqTracker{Unique: 3, NextExp: 3}, lost: 0,
		},
		{
			name: "bitmap grows", limit: 1 << 20, seqs: []uint64{5, 200000, 70000, 200000}, sent: 200001,
			want: SeqTracker{Unique: 3, Duplicates: 1, Reordered: 1, NextExp: 200001},
			lost: 199998, gaps: 199998,
		},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			tr := NewSeqTracker(c.limit)
			for _, s := range c.seqs {
				tr.Add(s)
			}
			got := SeqTracker{Unique: tr.Unique, Duplicates: tr.Duplicates, Reordered: tr.Reordered,
				OutOfRange: tr.OutOfRange, NextExp: tr.NextExp}
			want := c.want
			if got.Unique != want.Unique || got.Duplicates != want.Duplicates ||
				got.Reordered != want.Reordered || got.OutOfRange != want.OutOfRange ||
				got.NextExp != want.NextExp {
				t.Errorf("counters: got %+v, want %+v", got, want)
			}
			if l := tr.Lost(c.sent); l != c.lost {
				t.Errorf("Lost(%d) = %d, want %d", c.sent, l, c.lost)
			}
			if g := tr.Gaps(); g != c.gaps {
				t.Errorf("Gaps() = %d, want %d", g, c.gaps)
			}
		})
	}
}

// slowSeqTracker is the obvious implementation with a map, as a reference
// for the bitmap one.
type slowSeqTracker struct {
	seen                        map[uint64]bool
	unique, dup, reord, nextExp uint64
}

func (s *slowSeqTracker) add(q uint64) {
	if s.seen[q] {
		s.dup++
		return
	}
	s.seen[q] = true
	s.unique++
	if q < s.nextExp {
		s.reord++
	} else {
		s.nextExp = q + 1
	}
}

func TestSeqTrackerAgainstSlow(t *testing.T) {
	const (
		n    = 20000
		seed = 7
	)
	// A deterministic shuffle-ish stream: in order with local swaps, losses
	// and repeats, from a linear congruential generator (seeded).
	x := uint64(seed)
	next := func() uint64 { x = x*6364136223846793005 + 1442695040888963407; return x >> 33 }
	fast := NewSeqTracker(1 << 20)
	slow := &slowSeqTracker{seen: map[uint64]bool{}}
	for i := uint64(0); i < n; i++ {
		q := i
		switch next() % 10 {
		case 0: // lost
			continue
		case 1: // late by up to 50
			if d := next() % 50; d < q {
				q -= d
			}
		case 2: // repeat
			fast.Add(q)
			slow.add(q)
		}
		fast.Add(q)
		slow.add(q)
	}
	if fast.Unique != slow.unique || fast.Duplicates != slow.dup ||
		fast.Reordered != slow.reord || fast.NextExp != slow.nextExp {
		t.Fatalf("fast %+v, slow unique=%d dup=%d reord=%d next=%d",
			*fast, slow.unique, slow.dup, slow.reord, slow.nextExp)
	}
}
