package tests

import (
	"math"
	"testing"

	"rigwire/estimate"
	"rigwire/profiles"
)

// Monte-Carlo checks of the prediction: the analytic steady E[eᵀe] of
// estimate.Predict (estimate/model.md §4) against a plain simulation of the same
// loop (estimate.Simulate, which draws modes and delays from the
// profile's own Sample methods and samples the plant exactly each
// period). The runs are independent, so their time averages give an
// honest standard error; the check is |analytic − MC| < zLevel·SE.
//
// zLevel = 4: a two-sided normal test at level 6e-5, so a seeded run that
// passes is not luck, and a model error of a few SE is caught.
const zLevel = 4

func TestPredictAgreesWithMonteCarlo(t *testing.T) {
	if testing.Short() {
		t.Skip("Monte Carlo: skipped in -short")
	}
	cases := []struct {
		name string
		file string
		seed uint64
	}{
		{"iid losses, lognormal and uniform delays", "../profiles/examples/checks/mc-iid.yaml", 1},
		{"Gilbert–Elliott command channel, gamma sensor delay", "../profiles/examples/checks/mc-burst.yaml", 2},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			loop, err := profiles.LoadLoop(tc.file)
			if err != nil {
				t.Fatal(err)
			}
			pr, err := estimate.Predict(loop, estimate.PredictOptions{SkipMargin: true})
			if err != nil {
				t.Fatal(err)
			}
			if !pr.MeanSquareStable {
				t.Fatalf("not stable: ρ = %g", pr.SpectralRadius)
			}
			sim, err := estimate.Simulate(loop, estimate.SimOptions{
				Periods: 12000, Warmup: 2000, Runs: 40, Seed: tc.seed,
			})
			if err != nil {
				t.Fatal(err)
			}
			want := pr.Error.SecondMoment
			z := (sim.SecondMoment - want) / sim.StdErr
			t.Logf("analytic E[eᵀe] = %.6g, Monte Carlo %.6g ± %.2g (z = %.2f), modes %v",
				want, sim.SecondMoment, sim.StdErr, z, sim.ModeCounts)
			if math.Abs(z) > zLevel {
				t.Errorf("Monte Carlo %.6g ± %.2g disagrees with the analytic %.6g: z = %.2f > %d",
					sim.SecondMoment, sim.StdErr, want, z, zLevel)
			}
			if sim.StdErr > 0.05*want {
				t.Errorf("standard error %.2g is too coarse (%.1f%% of the value) to check anything", sim.StdErr, 100*sim.StdErr/want)
			}
		})
	}
}
