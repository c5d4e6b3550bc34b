package estimate

import (
	"math"
	"testing"

	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// TestLongChainAgainstMonteCarlo: the exact long-delay chain of
// estimate/model.md §13 against the event-by-event Monte Carlo of the same
// rules (Simulate), which shares no integral with it: random delays of
// whole periods and of fractions, on a scalar loop and on a 2-state loop
// with a controller of its own state, over i.i.d. and Markov channels.
// The steady E[eᵀe] must agree within 4 standard errors of the Monte
// Carlo (plus, for a Markov channel, the 2 % the chain's "state constant
// over the horizon" may cost with dwells of 50–200 periods), and the
// share of periods ending on each command age within 0.005 (0.01 for a
// Markov channel).
func TestLongChainAgainstMonteCarlo(t *testing.T) {
	if testing.Short() {
		t.Skip("Monte Carlo: seconds")
	}
	const h = 0.01
	whole := must(laws.NewEmpirical([]float64{0.4 * h, 1.4 * h, 1.4 * h, 2.4 * h, 3.4 * h}, 0))
	spread := must(laws.NewLognormal(1.6*h, 0.5, 0.2*h))
	good := must(laws.NewUniform(0.3*h, 1.5*h))
	bad := must(laws.NewGamma(3, 0.5*h, 1.5*h))
	servo4 := func(prof *profiles.Profile) *profiles.Loop {
		l := servo(prof, 0.0005)
		l.Controller.D = dense([]float64{4})
		l.Controller.C = dense([]float64{2})
		l.Timing = profiles.Timing{SampleHorizon: 1, CommandHorizon: 4}
		return l
	}
	cases := []struct {
		name   string
		loop   *profiles.Loop
		markov bool
	}{
		{"scalar, whole-period delays, i.i.d.", scalarIntegrator(0.3, 1, 0.02, 1e-4, 4, profile(iidChannel(0.05, nil), iidChannel(0.05, whole))), false},
		{"scalar, lognormal over 1–4 periods, i.i.d.", scalarIntegrator(0.25, 1, 0.02, 1e-4, 5, profile(iidChannel(0.02, must(laws.NewUniform(0, 0.5*h))), iidChannel(0.1, spread))), false},
		{"2-state servo with PI state, i.i.d.", servo4(profile(iidChannel(0.05, must(laws.NewConstant(0.2*h))), iidChannel(0.05, spread))), false},
		{"scalar, burst channel", scalarIntegrator(0.25, 1, 0.02, 1e-4, 4, profile(nil, twoState(2, 0.02, good, 0.5, 0.3, bad))), true},
		{"2-state servo, burst channel", servo4(profile(nil, twoState(2, 0.02, good, 0.5, 0.3, bad))), true},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			agreeWithMonteCarlo(t, tc.loop, tc.markov, 7)
		})
	}
}

// mcCheck is what agreeWithMonteCarlo compared: the prediction, the
// Monte Carlo and the tolerances it held them to.
type mcCheck struct {
	pr          *Prediction
	sim         *SimResult
	tol, ageTol float64
}

// agreeWithMonteCarlo predicts the loop and runs the seeded Monte Carlo of
// the same rules (60 000 periods × 10 runs): E[eᵀe] must agree within 4
// standard errors (plus, for the long chain over a Markov channel, the
// 2 % its "state constant over the horizon" may cost with dwells of
// 50–200 periods), and the share of periods ending on each command age
// within 0.005 (0.01 for a Markov channel).
func agreeWithMonteCarlo(t *testing.T, loop *profiles.Loop, markov bool, seed uint64) mcCheck {
	t.Helper()
	pr, err := Predict(loop, PredictOptions{SkipMargin: true})
	if err != nil {
		t.Fatal(err)
	}
	if !pr.MeanSquareStable {
		t.Fatalf("not stable: ρ %g", pr.SpectralRadius)
	}
	sim, err := Simulate(loop, SimOptions{Periods: 60000, Warmup: 2000, Runs: 10, Seed: seed})
	if err != nil {
		t.Fatal(err)
	}
	c := mcCheck{pr: pr, sim: sim, tol: 4 * sim.StdErr, ageTol: 0.005}
	want, got := pr.Error.SecondMoment, sim.SecondMoment
	if _, na := loop.Horizons(); markov && na > 1 {
		c.tol += 0.02 * want
	}
	if markov {
		c.ageTol = 0.01
	}
	t.Logf("exact %.6g, Monte Carlo %.6g ± %.2g; ages %.4f / %.4f, stale %.4f / %.4f",
		want, got, sim.StdErr, pr.Timing.CommandAge, sim.CommandAge, pr.Timing.Stale, sim.Stale)
	if math.Abs(want-got) > c.tol {
		t.Errorf("E[eᵀe]: exact %.6g, Monte Carlo %.6g ± %.2g (tolerance %.2g)", want, got, sim.StdErr, c.tol)
	}
	for d := range sim.CommandAge {
		if d < len(pr.Timing.CommandAge) && math.Abs(sim.CommandAge[d]-pr.Timing.CommandAge[d]) > c.ageTol {
			t.Errorf("age %d: exact %.4f, Monte Carlo %.4f", d, pr.Timing.CommandAge[d], sim.CommandAge[d])
		}
	}
	return c
}
