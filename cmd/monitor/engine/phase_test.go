package engine

import (
	"math"
	"strings"
	"testing"
	"time"

	"rigwire/estimate"
	"rigwire/profiles"
)

func fp(v float64) *float64 { return &v }

func TestPhases(t *testing.T) {
	c := &clock{t: time.Unix(1000, 0)}
	m := newClocked(t, c, Options{})
	t0 := c.t
	seq := 0
	// feed n samples of |e| = 0.2 (x = 0.04 up to rounding), one per
	// 10 ms from the clock's time, and advance the clock past them.
	feed := func(n int) {
		for range n {
			e := 0.2
			if seq%2 == 1 {
				e = -0.2
			}
			feedErr(m, seq, e, c.t)
			seq++
			c.t = c.t.Add(10 * time.Millisecond)
		}
	}
	tol := profiles.Check{Tolerance: fp(0.2), MinSamples: 20}
	// a: predicted 0.04, settle 100 ms: the first 10 samples not judged.
	m.StartPhase(0, "a", stablePred(0.04), 100*time.Millisecond, tol)
	feed(110)
	if ps := m.Phases(); len(ps) != 1 || ps[0].Verdict != PhaseRunning || !strings.HasPrefix(ps[0].Reason, "so far pass") {
		t.Fatalf("running phase: %+v", ps)
	}
	// b: predicted 3× the measured value.
	m.StartPhase(1, "b", stablePred(0.12), 0, tol)
	feed(100)
	// c: too few samples.
	m.StartPhase(2, "c", nil, 0, tol)
	feed(5)
	// d, e: the bound on the measured value.
	m.StartPhase(3, "d", nil, 0, profiles.Check{MaxSecondMoment: fp(0.03)})
	feed(30)
	m.StartPhase(4, "e", nil, 0, profiles.Check{MaxSecondMoment: fp(0.05), Tolerance: fp(0.2)})
	feed(30)
	// f: a ramp: 30 samples predicted 0.01, then 10 predicted 0.04.
	m.StartPhase(5, "f", stablePred(0.01), 0, profiles.Check{})
	feed(30)
	m.UpdatePrediction(stablePred(0.04))
	feed(10)
	// g: an unstable prediction on one judged sample.
	m.StartPhase(6, "g", stablePred(0.04), 0, tol)
	feed(30)
	m.UpdatePrediction(&estimate.Prediction{})
	feed(1)
	m.EndPhases()

	ps := m.Phases()
	if len(ps) != 7 {
		t.Fatalf("%d phases", len(ps))
	}
	a := ps[0]
	if a.Samples != 100 || a.SettleSamples != 10 || a.Verdict != PhasePass || a.StartSeconds != 0 ||
		a.EndSeconds == nil || math.Abs(*a.EndSeconds-1.1) > 1e-9 {
		t.Errorf("a: %+v", a)
	}
	if math.Abs(*a.ErrorSecondMoment-0.04) > 1e-12 || math.Abs(*a.PredictedSecondMoment-0.04) > 1e-15 {
		t.Errorf("a: measured %v predicted %v", *a.ErrorSecondMoment, *a.PredictedSecondMoment)
	}
	b := ps[1]
	if b.Verdict != PhaseFail || !strings.Contains(b.Reason, "prediction 0.12 outside the measured interval [0.04, 0.04] widened by 0.2") {
		t.Errorf("b: %s %q", b.Verdict, b.Reason)
	}
	if ps[2].Verdict != PhaseFail || ps[2].Reason != "only 5 judged samples, want ≥ 20" {
		t.Errorf("c: %s %q", ps[2].Verdict, ps[2].Reason)
	}
	if ps[3].Verdict != PhaseFail || ps[3].Reason != "measured 0.04 above the bound 0.03" || ps[3].MinSamples != DefaultMinSamples {
		t.Errorf("d: %s %q", ps[3].Verdict, ps[3].Reason)
	}
	if ps[4].Verdict != PhasePass {
		t.Errorf("e: %s %q", ps[4].Verdict, ps[4].Reason)
	}
	// (30·0.01 + 10·0.04)/40 = 0.0175.
	if f := ps[5]; f.Verdict != PhasePass || math.Abs(*f.PredictedSecondMoment-(30*0.01+10*0.04)/40) > 1e-16 {
		t.Errorf("f: %s predicted %v", f.Verdict, *f.PredictedSecondMoment)
	}
	if g := ps[6]; g.Verdict != PhaseFail || g.PredictedSecondMoment != nil || g.Reason != "prediction unstable: no value to compare" {
		t.Errorf("g: %+v", g)
	}
	s := m.Summary()
	if len(s.Phases) != 7 || s.SoakExitCode() != ExitPhaseFailed || s.TripExitCode() != 0 {
		t.Errorf("summary phases %d soak exit %d", len(s.Phases), s.SoakExitCode())
	}
	// The run keeps the monitor's own prediction.
	if *s.PredictedSecondMoment != 0.04 || m.Prediction().Error.SecondMoment != 0.04 {
		t.Errorf("run prediction changed: %v", *s.PredictedSecondMoment)
	}
	_ = t0
}
