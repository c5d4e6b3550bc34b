package engine

import (
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"github.com/prometheus/client_golang/prometheus"

	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// turnaroundDraws are n draws of a gamma compute law (mean 2.3 ms) and the
// same draws 0.2 ms later (two loopback hops and a stack).
func turnaroundDraws(t *testing.T, n int) (laws.Delay, []float64, []float64) {
	t.Helper()
	law, err := laws.NewGamma(4, 0.0005, 0.0003)
	if err != nil {
		t.Fatal(err)
	}
	r := rand.New(rand.NewPCG(1, 2))
	same, late := make([]float64, n), make([]float64, n)
	for i := range same {
		same[i] = law.Sample(r)
		late[i] = same[i] + 0.0002
	}
	return law, same, late
}

// TestCompareTurnaround: turnarounds drawn from the loop's own compute law
// agree with it (Kolmogorov–Smirnov at α = 0.001; the statistic's law as
// profiles/laws/ks.go computes it), the same draws 0.2 ms later differ
// from it, and a constant law differs from any spread.
func TestCompareTurnaround(t *testing.T) {
	const n = 5000
	law, same, late := turnaroundDraws(t, n)
	loop := &profiles.Loop{Period: 0.01, Compute: law}
	if rep := CompareTurnaround(loop, n, slices.Clone(same)); !rep.Agree || rep.Used != n || rep.Binned {
		t.Errorf("draws of the law itself: %s", rep)
	}
	rep := CompareTurnaround(loop, n, slices.Clone(late))
	if rep.Agree || !strings.Contains(rep.String(), "differs from the loop's compute_delay") {
		t.Errorf("draws 0.2 ms late: %s", rep)
	}
	flat := &profiles.Loop{Period: 0.01, Compute: laws.Constant{Value: law.Mean()}}
	if rep := CompareTurnaround(flat, n, slices.Clone(same)); rep.Agree || !strings.Contains(rep.String(), "a constant") {
		t.Errorf("a constant law against a spread: %s", rep)
	}
	if CompareTurnaround(loop, 0, nil) != nil {
		t.Error("no turnaround: want nil")
	}
}

// relayBuckets are the relay's turnaround buckets (emulate/metrics.go).
var relayBuckets = prometheus.ExponentialBucketsRange(10e-6, 1, 34)

// histogramOf bins xs as the relay's histogram does (le: x ≤ bound).
func histogramOf(xs []float64) ([]Bucket, uint64, float64) {
	bs := make([]Bucket, 0, len(relayBuckets)+1)
	sum := 0.0
	for _, x := range xs {
		sum += x
	}
	for _, u := range append(slices.Clone(relayBuckets), math.Inf(1)) {
		c := 0
		for _, x := range xs {
			if x <= u {
				c++
			}
		}
		bs = append(bs, Bucket{Upper: u, Count: uint64(c)})
	}
	return bs, uint64(len(xs)), sum
}

// TestCompareTurnaroundHistogram: the relay's histogram of the same draws
// gives the same verdicts, its statistic never above the exact one (the
// gap at the buckets' bounds is one of the gaps the exact statistic takes
// the largest of), its mean exact and its p99 the bound of the bucket
// holding the exact p99; a histogram that is not cumulative is an error.
func TestCompareTurnaroundHistogram(t *testing.T) {
	const n = 5000
	law, same, late := turnaroundDraws(t, n)
	loop := &profiles.Loop{Period: 0.01, Compute: law}
	for _, c := range []struct {
		name  string
		xs    []float64
		agree bool
	}{{"the law's own draws", same, true}, {"0.2 ms late", late, false}} {
		bs, count, sum := histogramOf(c.xs)
		rep, err := CompareTurnaroundHistogram(loop, bs, count, sum)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		exact := CompareTurnaround(loop, n, slices.Clone(c.xs))
		if rep.Agree != c.agree || !rep.Binned || rep.KS > exact.KS+1e-12 || !strings.Contains(rep.String(), "the relay's histogram") {
			t.Errorf("%s: %s (exact D %.4f)", c.name, rep, exact.KS)
		}
		if d := rep.MeanSeconds - exact.MeanSeconds; d > 1e-12 || d < -1e-12 {
			t.Errorf("%s: mean %g, exact %g", c.name, rep.MeanSeconds, exact.MeanSeconds)
		}
		i, _ := slices.BinarySearch(relayBuckets, exact.P99Seconds)
		if rep.P99Seconds != relayBuckets[i] {
			t.Errorf("%s: p99 %g, want the bound %g above the exact %g", c.name, rep.P99Seconds, relayBuckets[i], exact.P99Seconds)
		}
	}
	if rep, err := CompareTurnaroundHistogram(loop, nil, 0, 0); rep != nil || err != nil {
		t.Errorf("nothing counted: %v, %v; want nil, nil", rep, err)
	}
	for name, bs := range map[string][]Bucket{
		"falling counts": {{0.001, 5}, {0.002, 3}, {math.Inf(1), 5}},
		"above count":    {{0.001, 6}, {math.Inf(1), 5}},
		"falling bounds": {{0.002, 1}, {0.001, 2}, {math.Inf(1), 5}},
	} {
		if _, err := CompareTurnaroundHistogram(loop, bs, 5, 0.01); err == nil {
			t.Errorf("%s: no error", name)
		}
	}
}
