package engine

import (
	"testing"
	"time"
)

// The history stays at most MaxHistory points: when full it keeps every
// other point and the spacing doubles, evenly.
func TestHistoryBounded(t *testing.T) {
	c := &clock{t: time.Unix(0, 0)}
	m := newClocked(t, c, Options{HistoryEvery: 10 * time.Millisecond}) // one sample
	const n = 10000
	for k := 1; k <= n; k++ {
		feedErr(m, k, 0.1, c.t.Add(time.Duration(k)*10*time.Millisecond))
	}
	h := m.History()
	// 4096 points at 1…4096; at 4097 kept 2, 4, …, 4096, then every 2
	// up to 8192; at 8194 kept 4, 8, …, 8192, then every 4 up to 10000.
	if len(h) != 2500 || m.HistoryEvery() != 4 {
		t.Fatalf("%d points every %d samples, want 2500 every 4", len(h), m.HistoryEvery())
	}
	for i, p := range h {
		if p.Samples != int64(4*(i+1)) || p.Phase != -1 || p.Predicted == nil || *p.Predicted != 0.04 {
			t.Fatalf("point %d: %+v", i, p)
		}
	}
	if last := h[len(h)-1]; last.Elapsed != 100 || last.Measured == nil {
		t.Errorf("last point %+v", last)
	}
	if cap(m.hist.points) != MaxHistory {
		t.Errorf("history capacity %d", cap(m.hist.points))
	}
}
