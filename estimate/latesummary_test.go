package estimate

import (
	"math"
	"path/filepath"
	"strconv"
	"testing"

	"gonum.org/v1/gonum/mat"

	"rigwire/profiles"
	"rigwire/profiles/summary"
)

// TestCheckLateAgreesWithPrediction checks that the share of late
// datagrams `impair check` reports for the sensor direction of every
// shipped profile is the prediction's P(sample stale) for a loop with the
// same period, state by state: both come from laws.ProbBelow, and
// must not drift apart.
func TestCheckLateAgreesWithPrediction(t *testing.T) {
	const agreeTol = 1e-15 // the same function: equal up to the subtraction
	files, err := filepath.Glob("../profiles/examples/profiles/*.yaml")
	if err != nil || len(files) == 0 {
		t.Fatalf("no shipped profiles: %v", err)
	}
	for _, f := range files {
		for _, period := range []float64{1e-3, 10e-3, 1} {
			t.Run(filepath.Base(f)+"/"+strconv.FormatFloat(period, 'g', -1, 64), func(t *testing.T) {
				p, err := profiles.Load(f)
				if err != nil {
					t.Fatal(err)
				}
				loop := &profiles.Loop{Period: period, Profile: p,
					Plant:      profiles.Plant{A: mat.NewDense(1, 1, []float64{-1}), B: mat.NewDense(1, 1, []float64{1}), C: mat.NewDense(1, 1, []float64{1})},
					Controller: profiles.Controller{D: mat.NewDense(1, 1, []float64{0.5})},
					Setpoint:   []float64{0}}
				md, err := Build(loop, Options{})
				if err != nil {
					t.Fatal(err)
				}
				nca := len(p.ControllerToActuator.States)
				for i, s := range p.SensorToController.States {
					got := summary.LateShare(s.Delay, period)
					want := 1 - md.States[i*nca].OnTimeSC
					if math.Abs(got-want) > agreeTol {
						t.Errorf("state %s: check says late %.17g, the prediction %.17g", s.Name, got, want)
					}
				}
			})
		}
	}
}
