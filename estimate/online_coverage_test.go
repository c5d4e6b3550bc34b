package estimate

import (
	"rigwire/estimate/online"
	"rigwire/profiles/laws"
	"testing"
)

// The online estimator's interval checked on this package's simulator
// against this package's prediction (estimate/online holds the estimator).

// The interval's coverage on the Monte-Carlo simulator (Simulate, the
// loop's jump system): over 400 independent runs of 80 000 periods of the
// servo loop over i.i.d. losses (10 % each way, constant delays), the
// 95 % log-scale batch-means interval of each run should cover the
// analytic E[eᵀe] (Predict, the steady moments of the jump system) in
// about 95 % of them. The binomial standard deviation of the covered
// fraction is √(0.95·0.05/400) ≈ 0.011; the accepted band is [0.92, 0.98].
// Seeded; the figure is logged (0.958, 383 of 400, here; 0.953 with the
// earlier symmetric interval). Batch means undercover when the batches are
// not long against the correlation time (Schmeiser 1982): with runs of 20 000 periods
// (batches of 500–1000 periods) this loop's coverage was 0.914 over 1000
// runs, with the bias of the run means under 1 % of their spread — the
// batches, not the estimator, were too short.
func TestOnlineCoverageOnSimulator(t *testing.T) {
	if testing.Short() {
		t.Skip("200 Monte-Carlo runs")
	}
	const (
		runs    = 400
		periods = 82_000
		warmup  = 2_000
	)
	loop := servo(profile(iidChannel(0.1, laws.Constant{Value: 0.001}), iidChannel(0.1, laws.Constant{Value: 0.002})), 0.0005)
	pr, err := Predict(loop, PredictOptions{SkipMargin: true})
	if err != nil || pr.Error == nil {
		t.Fatalf("prediction: %v", err)
	}
	truth := pr.Error.SecondMoment
	covered := 0
	for r := range runs {
		res, err := Simulate(loop, SimOptions{Periods: periods, Runs: 1, Warmup: warmup, Seed: 1000 + uint64(r), Paths: 1})
		if err != nil {
			t.Fatal(err)
		}
		on, _ := online.New(online.Options{Setpoint: loop.Setpoint})
		for _, pt := range res.Paths[0][warmup:] {
			on.AddError(pt.Error)
		}
		st := on.Run(nil)
		if st.CILow <= truth && truth <= st.CIHigh {
			covered++
		}
	}
	frac := float64(covered) / runs
	t.Logf("coverage of the 95 %% interval: %d of %d runs (%.3f); analytic E[eᵀe] = %.6g", covered, runs, frac, truth)
	if frac < 0.92 || frac > 0.98 {
		t.Errorf("coverage %.3f outside [0.92, 0.98]", frac)
	}
}
