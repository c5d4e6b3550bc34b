package loadkit

import (
	"math"
	"math/rand/v2"
	"sort"
	"testing"
)

// histRelTol is the documented bound of Hist: a returned midpoint is
// within v/128 of the exact value v (half the widest bucket relative to
// its start), plus a half unit for the width-1 buckets.
const histRelTol = 1.0 / 128

func TestHistBuckets(t *testing.T) {
	values := []int64{0, 1, 127, 128, 129, 255, 256, 257, 1000, 4095, 4096, 1e6, 1e9, 1<<62 + 12345, math.MaxInt64}
	for i := range 20000 {
		values = append(values, int64(i)*37)
	}
	for _, v := range values {
		i := histIndex(v)
		if i < 0 || i >= histBuckets {
			t.Fatalf("v=%d: index %d outside [0, %d)", v, i, histBuckets)
		}
		lo, w := histBounds(i)
		if v < lo || v-lo >= w {
			t.Fatalf("v=%d: bucket %d is [%d, %d+%d)", v, i, lo, lo, w)
		}
		if w > 1 && float64(w) > float64(v)/64 {
			t.Fatalf("v=%d: bucket width %d wider than v/64", v, w)
		}
	}
	// Buckets tile the line: each starts where the previous one ends.
	prevLo, prevW := histBounds(0)
	for i := 1; i <= histIndex(math.MaxInt64); i++ {
		lo, w := histBounds(i)
		if lo != prevLo+prevW {
			t.Fatalf("bucket %d starts at %d, previous ends at %d", i, lo, prevLo+prevW)
		}
		prevLo, prevW = lo, w
	}
}

// TestHistQuantileAgainstExact compares Hist with the exact nearest-rank
// quantile of the same (seeded, lognormal, latency-like) sample.
func TestHistQuantileAgainstExact(t *testing.T) {
	cases := []struct {
		name   string
		seed   uint64
		n      int
		median float64 // ns
		sigma  float64
	}{
		{"loopback-like", 1, 100000, 20e3, 0.5},
		{"wide", 2, 50000, 1e6, 2},
		{"tiny", 3, 7, 300, 1},
		{"sub-128 exact", 4, 1000, 40, 0.3},
	}
	ps := []float64{0.001, 0.01, 0.1, 0.5, 0.9, 0.99, 0.999, 1}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			r := rand.New(rand.NewPCG(c.seed, 0))
			var h Hist
			exact := make([]float64, c.n)
			var sum float64
			for i := range exact {
				v := int64(c.median * math.Exp(c.sigma*r.NormFloat64()))
				h.Add(v)
				exact[i] = float64(v)
				sum += float64(v)
			}
			sort.Float64s(exact)
			for _, p := range ps {
				want := QuantileSorted(exact, p)
				got := h.Quantile(p)
				if math.Abs(got-want) > want*histRelTol+0.5 {
					t.Errorf("p=%g: got %g, exact %g", p, got, want)
				}
			}
			if float64(h.Min()) != exact[0] || float64(h.Max()) != exact[len(exact)-1] {
				t.Errorf("min/max %d/%d, exact %g/%g", h.Min(), h.Max(), exact[0], exact[len(exact)-1])
			}
			if h.Count() != uint64(c.n) {
				t.Errorf("count %d, want %d", h.Count(), c.n)
			}
			if m := sum / float64(c.n); math.Abs(h.Mean()-m) > 1e-9*m {
				t.Errorf("mean %g, want %g", h.Mean(), m)
			}
		})
	}
}

func TestHistEdges(t *testing.T) {
	var h Hist
	if !math.IsNaN(h.Quantile(0.5)) || !math.IsNaN(h.Mean()) {
		t.Error("empty: want NaN")
	}
	h.Add(-5)
	h.Add(10)
	if h.Negative != 1 || h.Min() != 0 || h.Quantile(0.5) != 0 || h.Quantile(1) != 10 {
		t.Errorf("negative clamp: %+v", h.Negative)
	}
}

func BenchmarkHistAdd(b *testing.B) {
	var h Hist
	b.ReportAllocs()
	for i := range b.N {
		h.Add(int64(i) * 7919)
	}
}
