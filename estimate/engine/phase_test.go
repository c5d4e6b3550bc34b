package engine

import (
	"math"
	"strings"
	"testing"
	"time"

	"rigwire/emulate/trip"
	"rigwire/estimate"
	"rigwire/profiles"
)

func fp(v float64) *float64 { return &v }

// phaseFeeder feeds samples of |e| = 0.2 (x = 0.04 up to rounding, with
// alternating signs so that batches of even length have equal sums), one
// per 10 ms from the clock's time, advancing the clock past them.
type phaseFeeder struct {
	m   *Monitor
	c   *clock
	seq int
}

func (f *phaseFeeder) feed(n int) { f.feedE(n, 0.2) }

func (f *phaseFeeder) feedE(n int, e float64) {
	for range n {
		v := e
		if f.seq%2 == 1 {
			v = -e
		}
		feedErr(f.m, f.seq, v, f.c.t)
		f.seq++
		f.c.t = f.c.t.Add(10 * time.Millisecond)
	}
}

func TestPhases(t *testing.T) {
	c := &clock{t: time.Unix(1000, 0)}
	m := newClocked(t, c, Options{})
	f := &phaseFeeder{m: m, c: c}
	tol := profiles.Check{Tolerance: fp(0.2), MinSamples: 20}
	// a: predicted 0.04, settle 100 ms: the first 10 samples not judged.
	m.StartPhase(0, "a", stablePred(0.04), 100*time.Millisecond, tol)
	f.feed(110)
	if ps := m.Phases(); len(ps) != 1 || ps[0].Verdict != PhaseRunning || !strings.HasPrefix(ps[0].Reason, "so far pass") {
		t.Fatalf("running phase: %+v", ps)
	}
	// b: predicted 3× the measured value.
	m.StartPhase(1, "b", stablePred(0.12), 0, tol)
	f.feed(100)
	// c: too few samples.
	m.StartPhase(2, "c", nil, 0, tol)
	f.feed(5)
	// d: a bound with the default min_samples: 30 samples are too few.
	m.StartPhase(3, "d", nil, 0, profiles.Check{MaxSecondMoment: fp(0.03)})
	f.feed(30)
	// e: the same bound with min_samples 20: exceeded.
	m.StartPhase(4, "e", nil, 0, profiles.Check{MaxSecondMoment: fp(0.03), MinSamples: 20})
	f.feed(30)
	// f: bound and tolerance both met.
	m.StartPhase(5, "f", nil, 0, profiles.Check{MaxSecondMoment: fp(0.05), Tolerance: fp(0.2), MinSamples: 20})
	f.feed(30)
	// g: a ramp without criterion: 30 samples predicted 0.01, then 10
	// predicted 0.04.
	m.StartPhase(6, "g", stablePred(0.01), 0, profiles.Check{})
	f.feed(30)
	m.UpdatePrediction(stablePred(0.04))
	f.feed(10)
	// h: an unstable prediction on one judged sample.
	m.StartPhase(7, "h", stablePred(0.04), 0, tol)
	f.feed(30)
	m.UpdatePrediction(&estimate.Prediction{Stability: estimate.StabilityUnstable})
	f.feed(1)
	// i: the bound met while the prediction (100× below) lies outside the
	// measured interval: passes on the bound, with a warning.
	m.StartPhase(8, "i", stablePred(0.0004), 0, profiles.Check{MaxSecondMoment: fp(0.5), MinSamples: 20})
	f.feed(40)
	// j: a marginal prediction.
	m.StartPhase(9, "j", &estimate.Prediction{Stability: estimate.StabilityMarginal}, 0, tol)
	f.feed(30)
	m.EndPhases(false)

	ps := m.Phases()
	if len(ps) != 10 {
		t.Fatalf("%d phases", len(ps))
	}
	a := ps[0]
	if a.Samples != 100 || a.SettleSamples != 10 || a.Verdict != PhasePass || a.StartSeconds == nil || *a.StartSeconds != 0 ||
		a.EndSeconds == nil || math.Abs(*a.EndSeconds-1.1) > 1e-9 || a.CutShort != "" || a.PredictionOutside {
		t.Errorf("a: %+v", a)
	}
	if math.Abs(*a.ErrorSecondMoment-0.04) > 1e-12 || math.Abs(*a.PredictedSecondMoment-0.04) > 1e-15 {
		t.Errorf("a: measured %v predicted %v", *a.ErrorSecondMoment, *a.PredictedSecondMoment)
	}
	for _, w := range []struct {
		i       int
		verdict string
		reason  string
	}{
		{1, PhaseFail, "prediction 0.12 above the measured interval [0.04, 0.04] widened by 0.2: measured below"},
		{2, PhaseInconclusive, "only 5 judged samples, want ≥ 20"},
		{3, PhaseInconclusive, "only 30 judged samples, want ≥ 400"},
		{4, PhaseFail, "measured 0.04 [0.04, 0.04] above the bound 0.03"},
		{5, PhasePass, "measured 0.04 [0.04, 0.04] within the bound 0.05"},
		{6, PhasePass, "no criterion: not judged (40 samples)"},
		{7, PhaseFail, "prediction unstable: no E[eᵀe] to compare with"},
		{8, PhasePass, "measured 0.04 [0.04, 0.04] within the bound 0.5; warning: prediction 0.0004 outside the measured interval [0.04, 0.04] (measured above it, ×100)"},
		{9, PhaseFail, "prediction marginal: no E[eᵀe] to compare with"},
	} {
		p := ps[w.i]
		if p.Verdict != w.verdict || !strings.Contains(p.Reason, w.reason) {
			t.Errorf("%s: %s %q, want %s … %q", p.Name, p.Verdict, p.Reason, w.verdict, w.reason)
		}
	}
	if ps[3].MinSamples != DefaultMinSamples || DefaultMinSamples != 400 {
		t.Errorf("d: min samples %d, default %d", ps[3].MinSamples, DefaultMinSamples)
	}
	// (30·0.01 + 10·0.04)/40 = 0.0175.
	if g := ps[6]; math.Abs(*g.PredictedSecondMoment-(30*0.01+10*0.04)/40) > 1e-16 {
		t.Errorf("g: predicted %v", *g.PredictedSecondMoment)
	}
	if h := ps[7]; h.PredictedSecondMoment != nil {
		t.Errorf("h: predicted %v", *h.PredictedSecondMoment)
	}
	if i := ps[8]; !i.PredictionOutside || !strings.HasPrefix(i.Warning, "prediction 0.0004 outside") {
		t.Errorf("i: outside %v, warning %q", i.PredictionOutside, i.Warning)
	}
	if ps[5].PredictionOutside || ps[4].PredictionOutside {
		t.Errorf("e, f: a prediction inside the interval flagged outside")
	}
	s := m.Summary()
	if len(s.Phases) != 10 || s.Phases[0].Verdict == "" || s.Trip != nil {
		t.Errorf("summary phases %d, trip %v", len(s.Phases), s.Trip)
	}
	// The run keeps the monitor's own prediction.
	if *s.PredictedSecondMoment != 0.04 || m.Prediction().Error.SecondMoment != 0.04 {
		t.Errorf("run prediction changed: %v", *s.PredictedSecondMoment)
	}
}

// A phase cut short by the safety trip is judged on its samples up to
// and including the one that fired the trip; the later ones are counted
// (the phase's and the run's after_trip_samples) and estimated nowhere. A
// phase started after the trip and the planned phases that never started
// are listed as not run.
func TestPhaseCutByTrip(t *testing.T) {
	c := &clock{t: time.Unix(0, 0)}
	m := newClocked(t, c, Options{})
	f := &phaseFeeder{m: m, c: c}
	if err := m.SetTrip(trip.Rule{MaxAbsError: 0.5}, nil); err != nil {
		t.Fatal(err)
	}
	m.PlanPhases([]string{"calm", "storm", "after", "cool-down"})
	m.StartPhase(0, "calm", stablePred(0.04), 0, profiles.Check{Tolerance: fp(0.2), MinSamples: 20})
	f.feed(40)
	m.StartPhase(1, "storm", stablePred(0.04), 0, profiles.Check{Tolerance: fp(0.2), MinSamples: 20})
	f.feed(50)
	f.feedE(1, 0.9) // fires the trip
	f.feed(30)      // on the cleaned link
	if ps := m.Phases(); len(ps) != 2 {
		t.Fatalf("before the end, only the started phases: %+v", ps)
	}
	m.StartPhase(2, "after", stablePred(0.04), 0, profiles.Check{Tolerance: fp(0.2), MinSamples: 20})
	f.feed(25)
	m.EndPhases(false)

	ps := m.Phases()
	if len(ps) != 4 {
		t.Fatalf("%d phases: %+v", len(ps), ps)
	}
	calm, storm, after, cool := ps[0], ps[1], ps[2], ps[3]
	if calm.Verdict != PhasePass || calm.CutShort != "" || calm.AfterTripSamples != 0 {
		t.Errorf("calm: %+v", calm)
	}
	const tol = 1e-12 // sums of 51 terms
	wantX := (50*0.04 + 0.81) / 51
	if storm.Samples != 51 || storm.AfterTripSamples != 30 || storm.CutShort != CutByTrip ||
		math.Abs(*storm.ErrorSecondMoment-wantX) > tol ||
		!strings.Contains(storm.Reason, "cut short by the safety trip: judged on its 51 samples before the trip, 30 after it not judged") {
		t.Errorf("storm: %d samples, %d after the trip, cut %q, E[eᵀe] %v (want %v): %s",
			storm.Samples, storm.AfterTripSamples, storm.CutShort, *storm.ErrorSecondMoment, wantX, storm.Reason)
	}
	if after.Verdict != PhaseNotRun || after.Samples != 0 || after.AfterTripSamples != 25 ||
		!strings.Contains(after.Reason, "started after the safety trip (its 25 samples") {
		t.Errorf("after: %+v", after)
	}
	if cool.Verdict != PhaseNotRun || cool.Index != 3 || cool.StartSeconds != nil || cool.EndSeconds != nil ||
		cool.Reason != `not run: the safety trip (abs_error) ended the soak in phase "storm"` {
		t.Errorf("cool-down: %+v", cool)
	}
	s := m.Summary()
	if s.Samples != 91 || s.AfterTripSamples != 55 || s.Trip == nil {
		t.Errorf("run: %d samples, %d after the trip, trip %v", s.Samples, s.AfterTripSamples, s.Trip)
	}
}

// Without a trip, the phases not started when the soak ends are not run;
// the one running when it was interrupted is cut short; the soak exits 5.
func TestPhasesNotRun(t *testing.T) {
	c := &clock{t: time.Unix(0, 0)}
	m := newClocked(t, c, Options{})
	f := &phaseFeeder{m: m, c: c}
	m.PlanPhases([]string{"nominal", "degrading", "recovery"})
	m.StartPhase(0, "nominal", stablePred(0.04), 0, profiles.Check{Tolerance: fp(0.2), MinSamples: 20})
	f.feed(40)
	m.EndPhases(true)
	ps := m.Phases()
	if len(ps) != 3 || ps[0].Verdict != PhasePass || ps[0].CutShort != CutInterrupt ||
		!strings.HasSuffix(ps[0].Reason, "; cut short: the soak was interrupted") {
		t.Fatalf("phases %+v", ps)
	}
	for _, p := range ps[1:] {
		if p.Verdict != PhaseNotRun || p.Reason != "not run: the soak ended before it" {
			t.Errorf("%s: %s %q", p.Name, p.Verdict, p.Reason)
		}
	}
	if s := m.Summary(); s.Trip != nil || len(s.Phases) != 3 {
		t.Errorf("summary: trip %v, %d phases", s.Trip, len(s.Phases))
	}
}

// With min_samples left to its default a phase of 399 judged samples is
// inconclusive, at 400 it is judged.
func TestPhaseDefaultMinSamples(t *testing.T) {
	for _, c := range []struct {
		n    int
		want string
	}{{399, PhaseInconclusive}, {400, PhasePass}} {
		cl := &clock{t: time.Unix(0, 0)}
		m := newClocked(t, cl, Options{})
		f := &phaseFeeder{m: m, c: cl}
		m.StartPhase(0, "p", stablePred(0.04), 0, profiles.Check{Tolerance: fp(0.2)})
		f.feed(c.n)
		m.EndPhases(false)
		if p := m.Phases()[0]; p.Verdict != c.want || p.MinSamples != DefaultMinSamples {
			t.Errorf("%d samples: %s (%s), min %d; want %s", c.n, p.Verdict, p.Reason, p.MinSamples, c.want)
		}
	}
}
