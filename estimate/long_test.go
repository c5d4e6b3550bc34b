package estimate

import (
	"math"
	"testing"

	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// longOne builds the long-delay model with a one-period command horizon
// on the loop: the same rules as the model of estimate/model.md §1–§4,
// computed by the other method (§13).
func longOne(t *testing.T, loop *profiles.Loop) *Model {
	t.Helper()
	md, err := Build(loop, Options{})
	if err != nil {
		t.Fatal(err)
	}
	md.thetaPi = nil
	md.Pi = append([]float64(nil), md.Pi...)
	if err := md.buildLong(1); err != nil {
		t.Fatal(err)
	}
	return md
}

// TestLongChainReproducesOnePeriod: with a horizon of one period the
// long-delay chain (ages, arrival CDFs, sigma modes) and the three-mode
// model of estimate/model.md §3 describe the same jump system, computed
// by independent integrals (CDF products over the period against the
// quantile-scale τ rule): ρ and E[eᵀe] agree to 1e-8 relative.
func TestLongChainReproducesOnePeriod(t *testing.T) {
	const rel = 1e-8
	cases := []struct {
		name string
		loop *profiles.Loop
	}{
		{"servo, lognormal both ways, c=1ms", servo(profile(iidChannel(0.05, laws.Lognormal{Mu: math.Log(0.002), Sigma: 0.5}), iidChannel(0.1, laws.Lognormal{Mu: math.Log(0.003), Sigma: 0.8})), 0.001)},
		{"servo, constant delays (atoms)", servo(profile(iidChannel(0.02, laws.Constant{Value: 0.003}), iidChannel(0.05, laws.Constant{Value: 0.004})), 0)},
		{"servo, burst channel", servo(profile(twoState(2, 0.01, laws.Constant{Value: 0.002}, 0.5, 0.4, laws.Exponential{Scale: 0.004}), nil), 0.0005)},
		{"deadbeat scalar, exponential delay", scalarDeadbeat(1.2, 0.01, profile(iidChannel(0.1, laws.Exponential{Scale: 0.003}), nil), profiles.HoldLast)},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			old, err := Build(tc.loop, Options{})
			if err != nil {
				t.Fatal(err)
			}
			lg := longOne(t, tc.loop)
			ro, rl := old.Radius(), lg.Radius()
			if math.Abs(ro.Value-rl.Value) > rel*ro.Value+1e-12 {
				t.Errorf("ρ: three-mode %.15g, long chain %.15g", ro.Value, rl.Value)
			}
			if ro.Stability != StabilityStable {
				return
			}
			mo, err := old.Steady()
			if err != nil {
				t.Fatal(err)
			}
			ml, err := lg.Steady()
			if err != nil {
				t.Fatal(err)
			}
			eo, el := old.Error(mo).SecondMoment, lg.Error(ml).SecondMoment
			if math.Abs(eo-el) > rel*eo {
				t.Errorf("E[eᵀe]: three-mode %.15g, long chain %.15g (rel %.2g)", eo, el, math.Abs(eo-el)/eo)
			}
		})
	}
}
