package engine

import (
	"bytes"
	"math"
	"strings"
	"testing"
	"time"

	"rigwire/estimate"
	"rigwire/profiles"
)

// PredictSteps predicts once per distinct profile the steps predict with
// (a ramp's repeated profile is not predicted again), each equal to
// estimate.Predict of the loop over that profile, and is quiet for a
// short list.
func TestPredictSteps(t *testing.T) {
	loop := testLoop(t, textDecode)
	other, err := profiles.ParseLoop([]byte(strings.Replace(loopYAML, "loss: 0.02", "loss: 0.2", 1)+textDecode), "lossy.yaml", ".")
	if err != nil {
		t.Fatal(err)
	}
	lossy := *other.Profile
	lossy.Name = "lossy"
	steps := []profiles.ScenarioStep{
		{Phase: 0, Profile: loop.Profile, Predict: loop.Profile},
		{Phase: 1, Profile: &lossy, Predict: &lossy},
		{Phase: 1, Frac: 0.5, Profile: &lossy, Predict: &lossy},
	}
	var progress bytes.Buffer
	preds, err := PredictSteps(loop, steps, &progress)
	if err != nil {
		t.Fatal(err)
	}
	if len(preds) != 2 {
		t.Fatalf("%d predictions, want one per distinct profile (2)", len(preds))
	}
	const tol = 1e-12 // the same computation, so equal up to rounding
	for _, p := range []*profiles.Profile{loop.Profile, &lossy} {
		l := *loop
		l.Profile, l.ProfileFile = p, ""
		want, err := estimate.Predict(&l, estimate.PredictOptions{SkipMargin: true})
		if err != nil {
			t.Fatal(err)
		}
		got := preds[p]
		if got == nil || math.Abs(got.Error.SecondMoment-want.Error.SecondMoment) > tol*want.Error.SecondMoment {
			t.Errorf("profile %q: prediction %+v, want E[eᵀe] %g", p.Name, got, want.Error.SecondMoment)
		}
	}
	if progress.Len() != 0 {
		t.Errorf("progress for 2 quick predictions: %q", progress.String())
	}
}

// StepFunc: a phase's first step calls atPhase and starts the phase with
// its prediction; a ramp's later step puts its own prediction in force
// for the samples after it, so the phase's predicted value is the mean of
// the two.
func TestStepFunc(t *testing.T) {
	c := &clock{t: time.Unix(1000, 0)}
	m := newClocked(t, c, Options{})
	f := &phaseFeeder{m: m, c: c}
	a, b := &profiles.Profile{Name: "a"}, &profiles.Profile{Name: "b"}
	preds := map[*profiles.Profile]*estimate.Prediction{a: stablePred(0.04), b: stablePred(0.08)}
	sc := &profiles.Scenario{Phases: []profiles.Phase{
		{Index: 0, Name: "nominal", Check: profiles.Check{Tolerance: fp(0.2), MinSamples: 20}},
		{Index: 1, Name: "ramp", Check: profiles.Check{Tolerance: fp(0.2), MinSamples: 20}},
	}}
	m.PlanPhases([]string{"nominal", "ramp"})
	var started []int
	step := m.StepFunc(sc, preds, func(k int) { started = append(started, k) })
	step(profiles.ScenarioStep{Phase: 0, Profile: a, Predict: a})
	f.feed(40)
	step(profiles.ScenarioStep{Phase: 1, Profile: a, Predict: a})
	f.feed(40)
	step(profiles.ScenarioStep{Phase: 1, Frac: 0.5, Profile: b, Predict: b})
	f.feed(40)
	m.EndPhases(false)
	if len(started) != 2 || started[0] != 0 || started[1] != 1 {
		t.Errorf("atPhase called with %v, want [0 1]", started)
	}
	ps := m.Phases()
	if len(ps) != 2 || ps[0].Name != "nominal" || ps[1].Name != "ramp" {
		t.Fatalf("phases %+v", ps)
	}
	const tol = 1e-9
	for _, c := range []struct {
		name string
		got  *float64
		want float64
	}{{"nominal", ps[0].PredictedSecondMoment, 0.04}, {"ramp (half at 0.04, half at 0.08)", ps[1].PredictedSecondMoment, 0.06}} {
		if c.got == nil || math.Abs(*c.got-c.want) > tol {
			t.Errorf("%s: predicted %v, want %g", c.name, c.got, c.want)
		}
	}
}
