package estimate

import (
	"math"
	"testing"

	"rigwire/profiles"
)

// Closed-form stability thresholds for a scalar plant with sampled pole
// a > 1, the deadbeat gain, no delay and i.i.d. loss ℓ of the sensor's
// samples (estimate/model.md §12).
//
// Zero input on loss (Schenato, Sinopoli, Franceschetti, Poolla, Sastry,
// "Foundations of control and estimation over lossy networks", Proc. IEEE
// 95(1), 2007): x' = a x when the packet is lost, 0 when it arrives, so
// E[x'²] = ℓ a² E[x²] and the loop is mean-square stable iff ℓ < 1/a².
//
// Held input (our actuator, estimate/model.md §1), renewal argument written out
// here. A delivery at k sets x_{k+1} = 0 and holds u_k = −(a/Γ) x_k. After
// i further losses, x_{k+1+i} = a x_{k+i} + Γ u_k = −x_k (a + a² + … + aⁱ).
// So the state at the next delivery, after L losses (P(L = i) = ℓⁱ(1−ℓ)),
// is y' = −S_L y with S_L = a(a^L − 1)/(a − 1), the L_n independent: the
// delivered states are mean-square stable iff E[S_L²] < 1. Summing the
// geometric series (finite while ℓa² < 1),
//
//	E[(a^L − 1)²] = (1−ℓ)[1/(1−ℓa²) − 2/(1−ℓa) + 1/(1−ℓ)]
//	              = ℓ(a−1)²(1+ℓa) / ((1−ℓa)(1−ℓa²)),
//
// so E[S_L²] < 1 ⇔ a²ℓ(1+ℓa) < (1−ℓa)(1−ℓa²) ⇔ 2a²ℓ + aℓ < 1 ⇔
// ℓ < 1/(a(2a+1)). That is below 1/a², so the states between deliveries
// (geometric sums of aⁱ weighted by ℓⁱ) stay bounded too.
//
// With the extra loss q of estimate/model.md §8 on both directions, a static
// controller makes a lost command the same as a lost sample, so the
// delivery probability is (1−q)² and the margin solves 1 − (1−q)² = ℓ*.

const (
	thresholdRelStep = 1e-3 // probe ℓ* (1 ± this) for the sign of ρ − 1
	marginTol        = 1e-4 // estimate/model.md §8: the loss margin to 1e-4
)

func TestScalarDeadbeatThresholds(t *testing.T) {
	cases := []struct {
		name      string
		a         float64
		policy    profiles.ActuatorPolicy
		threshold float64 // critical i.i.d. loss ℓ*
		source    string
	}{
		{"hold a=1.5", 1.5, profiles.HoldLast, 1 / (1.5 * 4), "renewal argument above (estimate/model.md §12)"},
		{"hold a=2", 2, profiles.HoldLast, 1.0 / 10, "renewal argument above (estimate/model.md §12)"},
		{"hold a=1.1", 1.1, profiles.HoldLast, 1 / (1.1 * 3.2), "renewal argument above (estimate/model.md §12)"},
		{"zero a=1.5", 1.5, profiles.ZeroUnlessFresh, 1 / 2.25, "Schenato et al. 2007: 1/a²"},
		{"zero a=2", 2, profiles.ZeroUnlessFresh, 0.25, "Schenato et al. 2007: 1/a²"},
		{"zero a=3", 3, profiles.ZeroUnlessFresh, 1.0 / 9, "Schenato et al. 2007: 1/a²"},
	}
	const h = 0.01
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			for _, side := range []struct {
				l      float64
				stable bool
			}{
				{tc.threshold * (1 - thresholdRelStep), true},
				{tc.threshold * (1 + thresholdRelStep), false},
			} {
				loop := scalarDeadbeat(tc.a, h, profile(iidChannel(side.l, nil), nil), tc.policy)
				md, err := Build(loop, Options{})
				if err != nil {
					t.Fatal(err)
				}
				rho := md.SpectralRadius()
				if (rho < 1) != side.stable || md.MeanSquareStable() != side.stable {
					t.Errorf("ℓ = %.6g (%s): ρ = %.9g, Lyapunov test %v, want stable %v",
						side.l, tc.source, rho, md.MeanSquareStable(), side.stable)
				}
			}
			// Loss margin from a loss-free profile: 1 − (1−q)² = ℓ*.
			loop := scalarDeadbeat(tc.a, h, profile(nil, nil), tc.policy)
			pr, err := Predict(loop, PredictOptions{})
			if err != nil {
				t.Fatal(err)
			}
			want := 1 - math.Sqrt(1-tc.threshold)
			if math.Abs(pr.LossMargin-want) > marginTol {
				t.Errorf("loss margin %.6f, want %.6f (1 − (1−q)² = %.6g, %s)", pr.LossMargin, want, tc.threshold, tc.source)
			}
		})
	}
}
