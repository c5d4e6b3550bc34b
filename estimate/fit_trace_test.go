package estimate

import (
	"math"
	"testing"

	"rigwire/profiles"
	"rigwire/profiles/laws"
	"rigwire/profiles/markov"
	"rigwire/profiles/trace"
)

// TestPredictTraceDirection: for the prediction a direction that replays
// a trace is its empirical law with i.i.d. loss at the trace's loss rate
// (trace.Replay); the prediction must equal the one for that profile
// written out by hand.
func TestPredictTraceDirection(t *testing.T) {
	const relTol = 1e-12 // the same computation on the same numbers
	loop, err := profiles.LoadLoop("../profiles/examples/loops/conveyor.yaml")
	if err != nil {
		t.Fatal(err)
	}
	delays := []float64{0.003, 0, 0.0041, 0.0052, 0.003, 0, 0.0124, 0.0061}
	lost := []bool{false, true, false, false, false, true, false, false}
	rp, err := trace.NewReplay("field.csv", "one_way_s", trace.AtEndLoop, delays, lost)
	if err != nil {
		t.Fatal(err)
	}
	var kept []float64
	for i, l := range lost {
		if !l {
			kept = append(kept, delays[i])
		}
	}
	emp, err := laws.NewEmpirical(kept, 0)
	if err != nil {
		t.Fatal(err)
	}
	predict := func(st markov.State) float64 {
		p := *loop.Profile
		p.SensorToController = &markov.Channel{States: []markov.State{st}}
		l := *loop
		l.Profile = &p
		pr, err := Predict(&l, PredictOptions{SkipMargin: true})
		if err != nil {
			t.Fatal(err)
		}
		if pr.Error == nil {
			t.Fatal("not mean-square stable")
		}
		return pr.Error.SecondMoment
	}
	got := predict(markov.State{Name: "trace", MeanDwell: math.Inf(1), Loss: rp.LossRate, Delay: rp})
	want := predict(markov.State{Name: "iid", MeanDwell: math.Inf(1), Loss: 2.0 / 8, Delay: emp})
	if math.Abs(got-want) > relTol*want {
		t.Errorf("E[eᵀe] with the trace direction %.15g, with its empirical law and loss %.15g", got, want)
	}
}
