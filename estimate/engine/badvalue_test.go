package engine

import (
	"fmt"
	"math"
	"math/rand/v2"
	"rigwire/profiles/datagram"
	"testing"
	"time"
)

// sameTol is the relative tolerance between a run with bad datagrams and
// the run of its good samples alone: the same sums in the same order, so
// the results agree to rounding (common practice).
const sameTol = 1e-12

// badRun feeds the good outputs (one text or binary datagram each, 10 ms
// apart) with, when bad is not nil, bad(seq) inserted before every 500th
// good sample from the 250th; it returns the summary and how many bad
// datagrams went in.
func badRun(t *testing.T, decode string, good []float64, bad func(seq int) []byte) (*Summary, int) {
	t.Helper()
	m, err := New(testLoop(t, decode), stablePred(0.0025), Options{})
	if err != nil {
		t.Fatal(err)
	}
	mk := func(seq int, y float64) []byte {
		if decode == binaryDecode {
			return binDatagram(uint32(seq), y)
		}
		return fmt.Appendf(nil, "%d,%v", seq, y)
	}
	at := time.Unix(0, 0)
	seq, k := 0, 0
	for i, y := range good {
		at = at.Add(10 * time.Millisecond)
		if i%500 == 250 {
			// The bad datagram takes the next sequence number; without
			// it, that number is skipped, so both runs see the same.
			if bad != nil {
				m.Feed(bad(seq), at)
				k++
			}
			seq++
		}
		m.Feed(mk(seq, y), at)
		seq++
	}
	return m.Summary(), k
}

// goodOutputs are n outputs about the setpoint 0.8 (seeded).
func goodOutputs(n int) []float64 {
	rng := rand.New(rand.NewPCG(11, 12))
	good := make([]float64, n)
	for i := range good {
		good[i] = 0.8 + 0.05*rng.NormFloat64()
	}
	return good
}

// checkCountsAddUp fails when the summary contradicts its own counts:
// every datagram from the source is estimated, skipped, after the trip, a
// duplicate, stale or a decode failure; with samples there is a finite
// E[eᵀe]; a reason that blames too few samples or batches has too few.
func checkCountsAddUp(t *testing.T, s *Summary) {
	t.Helper()
	var failed int64
	for _, n := range s.DecodeFailures {
		failed += n
	}
	if got := s.Samples + s.SkippedWarmup + s.AfterTripSamples + s.Duplicates + s.Stale + failed; got != s.Datagrams {
		t.Errorf("counts: samples %d + warm-up %d + after trip %d + duplicates %d + stale %d + decode failures %d = %d, want datagrams %d",
			s.Samples, s.SkippedWarmup, s.AfterTripSamples, s.Duplicates, s.Stale, failed, got, s.Datagrams)
	}
	if s.Samples > 0 && (s.ErrorSecondMoment == nil || s.ErrorStd == nil) {
		t.Errorf("%d samples but E[eᵀe] %v, std %v", s.Samples, s.ErrorSecondMoment, s.ErrorStd)
	}
	var n, want int64
	if _, err := fmt.Sscanf(s.VerdictReason, "only %d judged samples, want ≥ %d", &n, &want); err == nil && (n != s.Samples || n >= want) {
		t.Errorf("reason %q with %d samples", s.VerdictReason, s.Samples)
	}
	if _, err := fmt.Sscanf(s.VerdictReason, "only %d complete batches, want ≥ %d", &n, &want); err == nil && (n != int64(s.Batches) || n >= want) {
		t.Errorf("reason %q with %d batches", s.VerdictReason, s.Batches)
	}
}

// equalPtr says whether two summary values agree within sameTol (both
// null, or both numbers).
func equalPtr(a, b *float64) bool {
	if a == nil || b == nil {
		return a == nil && b == nil
	}
	return *a == *b || math.Abs(*a-*b) <= sameTol*math.Abs(*b)
}

func show(p *float64) string {
	if p == nil {
		return "null"
	}
	return fmt.Sprint(*p)
}

// One absurd value among good samples never poisons the run: outputs
// whose square of a squared error would overflow, beyond
// datagram.MaxOutput, NaN and infinities, in text and in binary, are each
// counted under their reason and left out, and every estimate — the run's
// E[eᵀe], its interval, the error's mean and spread, the batches, each
// window — equals the estimate over the good samples alone.
func TestBadValuesNeverPoisonTheRun(t *testing.T) {
	text := func(v string) func(int) []byte {
		return func(seq int) []byte { return fmt.Appendf(nil, "%d,%s", seq, v) }
	}
	bin := func(v float64) func(int) []byte {
		return func(seq int) []byte { return binDatagram(uint32(seq), v) }
	}
	cases := []struct {
		name   string
		decode string
		bad    func(seq int) []byte
		reason string
	}{
		{"text 1e200", textDecode, text("1e200"), "out_of_range"},
		{"text 1e300", textDecode, text("1e300"), "out_of_range"},
		{"text -1e300", textDecode, text("-1e300"), "out_of_range"},
		{"text 1e100, whose eᵀe squared overflows", textDecode, text("1e100"), "out_of_range"},
		{"text just beyond the range", textDecode, text("1.0000000001e50"), "out_of_range"},
		{"text beyond the range, negative", textDecode, text("-2e50"), "out_of_range"},
		{"text NaN", textDecode, text("NaN"), "not_a_number"},
		{"text Inf", textDecode, text("Inf"), "not_a_number"},
		{"text -Infinity", textDecode, text("-Infinity"), "not_a_number"},
		{"text 1e999 (beyond float64)", textDecode, text("1e999"), "not_finite"},
		{"binary 1e200", binaryDecode, bin(1e200), "out_of_range"},
		{"binary largest float64", binaryDecode, bin(math.MaxFloat64), "out_of_range"},
		{"binary NaN", binaryDecode, bin(math.NaN()), "not_finite"},
		{"binary +Inf", binaryDecode, bin(math.Inf(1)), "not_finite"},
		{"binary -Inf", binaryDecode, bin(math.Inf(-1)), "not_finite"},
	}
	good := goodOutputs(4000)
	alone := map[string]*Summary{}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			sa := alone[c.decode]
			if sa == nil {
				sa, _ = badRun(t, c.decode, good, nil)
				alone[c.decode] = sa
			}
			sw, nbad := badRun(t, c.decode, good, c.bad)
			if sw.ErrorSecondMoment == nil || math.IsInf(*sw.ErrorSecondMoment, 0) {
				t.Fatalf("E[eᵀe] %s with the bad values", show(sw.ErrorSecondMoment))
			}
			for _, v := range []struct {
				what      string
				with, not *float64
			}{
				{"E[eᵀe]", sw.ErrorSecondMoment, sa.ErrorSecondMoment},
				{"ci_low", sw.CILow, sa.CILow},
				{"ci_high", sw.CIHigh, sa.CIHigh},
				{"error_std", sw.ErrorStd, sa.ErrorStd},
				{"error_mean", sw.ErrorMean[0], sa.ErrorMean[0]},
				{"effective_samples", sw.Effective, sa.Effective},
				{"batch_correlation", sw.BatchCorrelation, sa.BatchCorrelation},
			} {
				if v.with == nil || !equalPtr(v.with, v.not) {
					t.Errorf("%s: %s with the bad values, %s without", v.what, show(v.with), show(v.not))
				}
			}
			for i := range sw.Windows {
				w, a := sw.Windows[i], sa.Windows[i]
				if w.Samples != a.Samples || !equalPtr(w.ErrorSecondMoment, a.ErrorSecondMoment) || !equalPtr(w.CILow, a.CILow) || !equalPtr(w.CIHigh, a.CIHigh) {
					t.Errorf("window %gs: %d samples, E[eᵀe] %s [%s, %s] with the bad values; %d, %s [%s, %s] without",
						w.Seconds, w.Samples, show(w.ErrorSecondMoment), show(w.CILow), show(w.CIHigh),
						a.Samples, show(a.ErrorSecondMoment), show(a.CILow), show(a.CIHigh))
				}
			}
			if sw.Samples != sa.Samples || sw.Samples != int64(len(good)) {
				t.Errorf("samples: %d with, %d without, want %d", sw.Samples, sa.Samples, len(good))
			}
			for _, r := range datagram.Reasons {
				want := int64(0)
				if r.Reason == c.reason {
					want = int64(nbad)
				}
				if sw.DecodeFailures[r.Reason] != want {
					t.Errorf("%s counted %d, want %d", r.Reason, sw.DecodeFailures[r.Reason], want)
				}
			}
			if sw.Datagrams != sa.Datagrams+int64(nbad) {
				t.Errorf("datagrams %d, want %d + %d", sw.Datagrams, sa.Datagrams, nbad)
			}
			if sw.Verdict != sa.Verdict || sw.VerdictReason != sa.VerdictReason {
				t.Errorf("verdict %s (%s) with the bad values, %s (%s) without", sw.Verdict, sw.VerdictReason, sa.Verdict, sa.VerdictReason)
			}
			checkCountsAddUp(t, sw)
		})
	}
}

// An output at the edge of the range is a sample like any other: it is
// estimated, and every estimate stays a number (the bound is chosen so
// that the squares of eᵀe summed over a run stay finite); it dominates
// the mean, so the second moment is not converging (one sample holds
// nearly all of the sum), the interval is withheld and the verdict
// cannot be agree.
func TestOutputAtTheBoundStaysFinite(t *testing.T) {
	good := goodOutputs(4000)
	for _, c := range []struct {
		name string
		y    float64
	}{
		{"+MaxOutput", datagram.MaxOutput},
		{"-MaxOutput", -datagram.MaxOutput},
	} {
		t.Run(c.name, func(t *testing.T) {
			s, nbad := badRun(t, textDecode, good, func(seq int) []byte { return fmt.Appendf(nil, "%d,%v", seq, c.y) })
			if s.Samples != int64(len(good)+nbad) {
				t.Errorf("samples %d, want %d: a value at the bound is a sample", s.Samples, len(good)+nbad)
			}
			for _, v := range []struct {
				what string
				p    *float64
			}{
				{"E[eᵀe]", s.ErrorSecondMoment}, {"max_sample_share", s.MaxSampleShare},
				{"error_std", s.ErrorStd}, {"error_mean", s.ErrorMean[0]}, {"effective_samples", s.Effective},
			} {
				if v.p == nil || math.IsNaN(*v.p) || math.IsInf(*v.p, 0) {
					t.Errorf("%s: %s, want a number", v.what, show(v.p))
				}
			}
			if s.SecondMomentConverging || s.CILow != nil || s.CIHigh != nil {
				t.Errorf("one sample holds the sum, but converging %v, interval [%v, %v]", s.SecondMomentConverging, show(s.CILow), show(s.CIHigh))
			}
			if s.CILow != nil && s.CIHigh != nil && s.ErrorSecondMoment != nil && !(*s.CILow <= *s.ErrorSecondMoment && *s.ErrorSecondMoment <= *s.CIHigh) {
				t.Errorf("interval [%v, %v] does not hold E[eᵀe] %v", *s.CILow, *s.CIHigh, *s.ErrorSecondMoment)
			}
			if s.Verdict == VerdictAgree {
				t.Errorf("verdict agree with outputs of %g (reason %s)", c.y, s.VerdictReason)
			}
			for reason, n := range s.DecodeFailures {
				if n != 0 {
					t.Errorf("%s counted %d: a value at the bound is in range", reason, n)
				}
			}
			checkCountsAddUp(t, s)
		})
	}
}

// A setpoint beyond the bound on outputs is refused: its errors could
// overflow the same sums.
func TestSetpointBeyondTheBoundRefused(t *testing.T) {
	l := testLoop(t, textDecode)
	l.Setpoint = []float64{2 * datagram.MaxOutput}
	if _, err := New(l, stablePred(0.0025), Options{}); err == nil {
		t.Errorf("setpoint %g accepted", l.Setpoint[0])
	}
}
