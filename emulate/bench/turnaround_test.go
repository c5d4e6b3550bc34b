package bench

import (
	"math/rand/v2"
	"strings"
	"testing"

	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// TestCompareTurnaround: turnarounds drawn from the loop's own compute law
// agree with it (Kolmogorov–Smirnov at α = 0.001; the statistic's law as
// profiles/laws/ks.go computes it), the same draws 0.2 ms later (two
// loopback hops and a stack) differ from it, and a constant law differs
// from any spread; the ring keeps the latest turnarounds only.
func TestCompareTurnaround(t *testing.T) {
	law, err := laws.NewGamma(4, 0.0005, 0.0003)
	if err != nil {
		t.Fatal(err)
	}
	r := rand.New(rand.NewPCG(1, 2))
	const n = 5000
	same, late := make([]float64, n), make([]float64, n)
	for i := range same {
		same[i] = law.Sample(r)
		late[i] = same[i] + 0.0002
	}
	loop := &profiles.Loop{Period: 0.01, Compute: law}
	if rep := compareTurnaround(loop, n, append([]float64(nil), same...)); !rep.Agree || rep.Used != n {
		t.Errorf("draws of the law itself: %s", rep)
	}
	rep := compareTurnaround(loop, n, late)
	if rep.Agree || !strings.Contains(rep.String(), "differs from the loop's compute_delay") {
		t.Errorf("draws 0.2 ms late: %s", rep)
	}
	flat := &profiles.Loop{Period: 0.01, Compute: laws.Constant{Value: law.Mean()}}
	if rep := compareTurnaround(flat, n, same); rep.Agree || !strings.Contains(rep.String(), "a constant") {
		t.Errorf("a constant law against a spread: %s", rep)
	}
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
