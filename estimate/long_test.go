package estimate

import (
	"math"
	"strings"
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

// scalarIntegrator is x' = x + u·(time applied)/h: an integrator plant
// dx/dt = u/h, y = x, under a static controller u = K e, setpoint r, with
// the given noise, horizon and profile: the loop x_{k+1} = x_k − K x_{k−d}
// when every command takes d periods.
func scalarIntegrator(K, r, w, v float64, na int, prof *profiles.Profile) *profiles.Loop {
	const h = 0.01
	return &profiles.Loop{Period: h,
		Plant:      profiles.Plant{A: dense([]float64{0}), B: dense([]float64{1 / h}), C: dense([]float64{1}), W: dense([]float64{w}), V: dense([]float64{v})},
		Controller: profiles.Controller{D: dense([]float64{K})}, Setpoint: []float64{r},
		Profile: prof,
		Timing:  profiles.Timing{SampleHorizon: 1, CommandHorizon: na}}
}

// TestLongChainAcrossLaws runs the long-delay model over the shapes a
// profile may give, against a 10 ms period and a four-period horizon:
// atoms on and off the period grid, a singular start, a peak far narrower
// than the period, a heavy tail, an atom beside a density, every command
// late, every command lost. Each must give a finite answer whose command
// ages add up to one (the internal checks of estimate/model.md §13 —
// probabilities, Σ M = Γ — run on every period and would refuse it).
func TestLongChainAcrossLaws(t *testing.T) {
	ms := 1e-3
	cases := []struct {
		name string
		ca   *profiles.Profile
	}{
		{"constant 25 ms (between periods)", profile(nil, iidChannel(0.05, must(laws.NewConstant(25*ms))))},
		{"constant 20 ms (on the grid)", profile(nil, iidChannel(0, must(laws.NewConstant(20*ms))))},
		{"gamma shape 0.4 (singular start)", profile(nil, iidChannel(0.1, must(laws.NewGamma(0.4, 20*ms, 1*ms))))},
		{"lognormal peak 1000× narrower than h", profile(nil, iidChannel(0, must(laws.NewLognormal(17*ms, 0.0005, 0))))},
		{"pareto heavy tail", profile(nil, iidChannel(0.02, must(laws.NewPareto(1.2, 5*ms))))},
		{"atom beside a density", profile(iidChannel(0.01, must(laws.NewUniform(0, 3*ms))), iidChannel(0.05, must(laws.NewMixture([]float64{0.3, 0.7}, []laws.Delay{must(laws.NewConstant(12 * ms)), must(laws.NewExponential(10*ms, 5*ms))}))))},
		{"empirical with repeats", profile(nil, iidChannel(0, must(laws.NewEmpirical([]float64{4 * ms, 14 * ms, 14 * ms, 27 * ms, 33 * ms, 38 * ms}, 0))))},
		{"every command late", profile(nil, iidChannel(0, must(laws.NewConstant(45*ms))))},
		{"every command lost", profile(nil, iidChannel(1, must(laws.NewConstant(5*ms))))},
		{"burst channel, long delays in the bad state", profile(twoState(2, 0, must(laws.NewConstant(1*ms)), 1, 0.5, must(laws.NewUniform(1*ms, 9*ms))), twoState(3, 0.01, must(laws.NewLognormal(12*ms, 0.3, 0)), 0.5, 0.3, must(laws.NewGamma(2, 8*ms, 15*ms))))},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			loop := scalarIntegrator(0.2, 1, 1e-4, 1e-6, 4, tc.ca)
			pr, err := Predict(loop, PredictOptions{SkipMargin: true})
			if err != nil {
				t.Fatal(err)
			}
			if math.IsNaN(pr.SpectralRadius) || math.IsInf(pr.SpectralRadius, 0) {
				t.Fatalf("ρ = %g", pr.SpectralRadius)
			}
			tr := pr.Timing
			sum := tr.Stale
			for _, a := range tr.CommandAge {
				if a < -1e-12 || a > 1+1e-12 {
					t.Errorf("age share %g outside [0, 1]", a)
				}
				sum += a
			}
			if math.Abs(sum-1) > 1e-9 {
				t.Errorf("age shares add up to %.12g, want 1: %+v", sum, tr)
			}
			if pr.MeanSquareStable && (pr.Error == nil || !(pr.Error.SecondMoment > 0) || math.IsInf(pr.Error.SecondMoment, 0)) {
				t.Errorf("stable but E[eᵀe] = %+v", pr.Error)
			}
			t.Logf("ρ %.6g %s E[eᵀe] %v ages %.4g stale %.4g", pr.SpectralRadius, pr.Stability, errOf(pr), tr.CommandAge, tr.Stale)
		})
	}
}

func errOf(pr *Prediction) float64 {
	if pr.Error == nil {
		return math.NaN()
	}
	return pr.Error.SecondMoment
}

// TestSampleHorizonFallsBackToMonteCarlo: a sample horizon above one
// period has no exact chain (estimate/model.md §13); the prediction is a
// Monte Carlo from the same rules, marked as such, with a standard error,
// no spectral radius and a verdict in words that says it is not
// certified. A loop far beyond its stable gains is not called stable.
func TestSampleHorizonFallsBackToMonteCarlo(t *testing.T) {
	if testing.Short() {
		t.Skip("Monte Carlo: seconds")
	}
	const h = 0.01
	prof := profile(iidChannel(0.05, must(laws.NewUniform(0.2*h, 1.8*h))), iidChannel(0.05, must(laws.NewUniform(0, 0.8*h))))
	loop := scalarIntegrator(0.3, 1, 0.02, 1e-4, 3, prof)
	loop.Timing.SampleHorizon = 2
	pr, err := Predict(loop, PredictOptions{})
	if err != nil {
		t.Fatal(err)
	}
	tr := pr.Timing
	if tr.Method != MethodMonteCarlo || !strings.Contains(tr.Reason, "sample horizon of 2 periods") {
		t.Errorf("method %q, reason %q", tr.Method, tr.Reason)
	}
	if !pr.MeanSquareStable || pr.Error == nil || !(tr.SecondMomentStdErr > 0) || tr.SecondMomentStdErr > 0.05*pr.Error.SecondMoment {
		t.Fatalf("stable %v, error %+v, standard error %g", pr.MeanSquareStable, pr.Error, tr.SecondMomentStdErr)
	}
	if !math.IsNaN(pr.SpectralRadius) || !math.IsNaN(pr.LossMargin) {
		t.Errorf("ρ %g, loss margin %g: want both not computed (NaN)", pr.SpectralRadius, pr.LossMargin)
	}
	if d := DescribeStability(pr); !strings.Contains(d, "by simulation (not certified") {
		t.Errorf("words: %q", d)
	}
	sum := tr.Stale
	for _, a := range tr.CommandAge {
		sum += a
	}
	if math.Abs(sum-1) > 1e-12 || len(tr.CommandAge) != 3 || len(pr.States) != 1 {
		t.Errorf("ages %v stale %g, states %d", tr.CommandAge, tr.Stale, len(pr.States))
	}
	loop.Controller.D = dense([]float64{3})
	pr, err = Predict(loop, PredictOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if pr.MeanSquareStable || pr.Error != nil {
		t.Errorf("gain 3 over a delayed integrator called stable: %+v", pr.Error)
	}
}

// TestLongChainMarginAndSweep: the loss margin (estimate/model.md §8) and
// the delay-scale sweep work on the long-delay chain, which is rebuilt at
// each extra loss: stable just below the margin, not at it; the sweep's
// boundary between a stable and an unstable point, and the mean command
// age there above one period (a loop that tolerates delays of several
// periods).
func TestLongChainMarginAndSweep(t *testing.T) {
	const h = 0.01
	loop := scalarIntegrator(0.35, 1, 0.02, 1e-4, 6, profile(iidChannel(0.02, must(laws.NewUniform(0, 0.5*h))), iidChannel(0.05, must(laws.NewLognormal(0.8*h, 0.4, 0.2*h)))))
	md, err := Build(loop, Options{})
	if err != nil {
		t.Fatal(err)
	}
	m := md.LossMargin()
	if !(m > 0 && m < 1) {
		t.Fatalf("loss margin %g, want inside (0, 1) for this loop", m)
	}
	for _, c := range []struct {
		q    float64
		want bool
	}{{m - 2e-4, true}, {m, false}} {
		mq, err := Build(loop, Options{ExtraLoss: c.q})
		if err != nil {
			t.Fatal(err)
		}
		if got := mq.MeanSquareStable(); got != c.want {
			t.Errorf("extra loss %.5f (margin %.5f): stable %v, want %v", c.q, m, got, c.want)
		}
	}
	res, err := Sweep(loop, SweepDelayScale, []float64{1, 2, 3, 4, 6})
	if err != nil {
		t.Fatal(err)
	}
	if math.IsNaN(res.Boundary) || res.LostFromStart {
		t.Fatalf("no boundary in the sweep: %+v", res.Points)
	}
	if age := MeanCommandAge(loop, res.Boundary) / h; !(age > 1) {
		t.Errorf("stability lost at delay scale %.4g, a mean command age of %.2f periods; want more than one", res.Boundary, age)
	}
	t.Logf("loss margin %.4f; delay scale boundary %.4g (mean command age %.2f periods)", m, res.Boundary, MeanCommandAge(loop, res.Boundary)/h)
}
