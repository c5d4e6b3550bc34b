package engine

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
	"time"
)

// One absurd value among good samples never poisons the run: values whose
// square would overflow, beyond profiles.MaxOutput, NaN and infinities are
// counted under their reason and left out, and every estimate equals the
// estimate over the good samples alone.
func TestBadValuesNeverPoisonTheRun(t *testing.T) {
	bad := []struct {
		text, reason string
	}{
		{"1e200", "out_of_range"},
		{"1e300", "out_of_range"},
		{"-1e101", "out_of_range"},
		{"NaN", "not_a_number"},
		{"1e999", "not_finite"},
	}
	rng := rand.New(rand.NewPCG(11, 12))
	good := make([]float64, 4000)
	for i := range good {
		good[i] = 0.8 + 0.05*rng.NormFloat64()
	}
	with, err := New(testLoop(t, textDecode), stablePred(0.0025), Options{})
	if err != nil {
		t.Fatal(err)
	}
	alone, err := New(testLoop(t, textDecode), stablePred(0.0025), Options{})
	if err != nil {
		t.Fatal(err)
	}
	at := time.Unix(0, 0)
	seq := 0
	for i, y := range good {
		at = at.Add(10 * time.Millisecond)
		if i%500 == 250 {
			b := bad[(i/500)%len(bad)]
			with.Feed([]byte(fmt.Sprintf("%d,%s", seq, b.text)), at)
			seq++
		}
		with.Feed([]byte(fmt.Sprintf("%d,%v", seq, y)), at)
		alone.Feed([]byte(fmt.Sprintf("%d,%v", seq, y)), at)
		seq++
	}
	sw, sa := with.Summary(), alone.Summary()
	if sw.ErrorSecondMoment == nil || sa.ErrorSecondMoment == nil {
		t.Fatalf("no estimate: with %v, alone %v", sw.ErrorSecondMoment, sa.ErrorSecondMoment)
	}
	const tol = 1e-12 // relative: the same sums in the same order
	if v, w := *sw.ErrorSecondMoment, *sa.ErrorSecondMoment; math.IsInf(v, 0) || math.IsNaN(v) || math.Abs(v-w) > tol*w {
		t.Errorf("E[eᵀe] %v with the bad values, %v without", v, w)
	}
	if sw.CILow == nil || sa.CILow == nil || *sw.CILow != *sa.CILow || *sw.CIHigh != *sa.CIHigh {
		t.Errorf("interval with the bad values %v–%v, without %v–%v", sw.CILow, sw.CIHigh, sa.CILow, sa.CIHigh)
	}
	if sw.Samples != sa.Samples || sw.Samples != int64(len(good)) {
		t.Errorf("samples: %d with, %d without, want %d", sw.Samples, sa.Samples, len(good))
	}
	want := map[string]int64{}
	for i := range good {
		if i%500 == 250 {
			want[bad[(i/500)%len(bad)].reason]++
		}
	}
	for reason, n := range want {
		if sw.DecodeFailures[reason] != n {
			t.Errorf("%s counted %d, want %d", reason, sw.DecodeFailures[reason], n)
		}
	}
	if sw.Verdict != sa.Verdict {
		t.Errorf("verdict %s with the bad values, %s without", sw.Verdict, sa.Verdict)
	}
}
