package estimate

import (
	"testing"

	"gonum.org/v1/gonum/mat"

	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// wideLoop is the size bar of the long-delay model: a 6-state plant (a
// chain of three lightly damped masses, position output, force input)
// under a static output feedback, over a two-state Gilbert–Elliott
// channel per direction whose command delays reach four periods, with a
// command horizon of 4 periods (nz = 6 + 4, 5 ages × 4 network states).
func wideLoop() *profiles.Loop {
	const n = 6
	a := mat.NewDense(n, n, nil)
	for i := 0; i < n; i += 2 {
		a.Set(i, i+1, 1)
		a.Set(i+1, i, -4)
		a.Set(i+1, i+1, -0.8)
		if i+2 < n {
			a.Set(i+1, i+2, 2)
			a.Set(i+3, i, 1)
		}
	}
	b := mat.NewDense(n, 1, nil)
	b.Set(1, 0, 1)
	c := mat.NewDense(1, n, nil)
	c.Set(0, 0, 1)
	w := mat.NewDense(n, n, nil)
	for i := 1; i < n; i += 2 {
		w.Set(i, i, 0.01)
	}
	ms := 1e-3
	lg := must(laws.NewLognormal(2*ms, 0.5, 0.5*ms))
	ex := must(laws.NewExponential(3*ms, 0.2*ms))
	far := must(laws.NewLognormal(15*ms, 0.4, 5*ms))
	farBad := must(laws.NewGamma(2, 10*ms, 12*ms))
	return &profiles.Loop{
		Period:     0.01,
		Plant:      profiles.Plant{A: a, B: b, C: c, W: w, V: dense([]float64{1e-4})},
		Controller: profiles.Controller{D: dense([]float64{0.6})},
		Setpoint:   []float64{1},
		Profile:    profile(twoState(3, 0.01, lg, 0.3, 0.2, ex), twoState(2, 0.02, far, 0.4, 0.3, farBad)),
		Timing:     profiles.Timing{SampleHorizon: 1, CommandHorizon: 4},
	}
}

// BenchmarkPredictLongHorizon reports a full prediction (model, ρ, steady
// moments, no loss margin) of wideLoop (aim: under 2 s). Report only.
func BenchmarkPredictLongHorizon(b *testing.B) {
	l := wideLoop()
	for b.Loop() {
		pr, err := Predict(l, PredictOptions{SkipMargin: true})
		if err != nil {
			b.Fatal(err)
		}
		b.ReportMetric(pr.SpectralRadius, "rho")
	}
}
