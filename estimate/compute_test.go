package estimate

import (
	"math"
	"math/rand/v2"
	"sort"
	"strconv"
	"testing"

	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// jitteryCompute is a slow, jittery controller at a 10 ms period: its
// computing time 1 ms plus a gamma law of shape 2 and scale 2 ms (mean
// 5 ms, standard deviation 2.8 ms), so that one command in several is
// late where the mean alone would make few.
func jitteryCompute(t *testing.T) laws.Delay {
	t.Helper()
	return must(laws.NewGamma(2, 0.002, 0.001))
}

// atomAndDensity is a compute delay with an atom beside a density: 40 %
// of the commands take exactly 1 ms (a cached answer), the others 2 ms
// plus a gamma of shape 2 and scale 2.5 ms.
func atomAndDensity(t *testing.T) laws.Delay {
	t.Helper()
	return must(laws.NewMixture([]float64{0.4, 0.6}, []laws.Delay{
		must(laws.NewConstant(0.001)), must(laws.NewGamma(2, 0.0025, 0.002)),
	}))
}

// TestComputeLawAgainstMonteCarlo: with a compute delay drawn from a law,
// the exact prediction (the law's varying part added to the command
// direction's delay, sumlaw.go) against the Monte Carlo of the same loop
// (Simulate, which draws c for every command and shares no integral with
// it), on the one-period model and the long-delay chain, over i.i.d. and
// Markov channels. E[eᵀe] must agree within 4 standard errors (plus, for
// the long chain over a Markov channel, the 2 % its "state constant over
// the horizon" may cost, as in TestLongChainAgainstMonteCarlo), the
// shares of command ages within 0.005 (0.01 for a Markov channel); and
// the law must matter: the prediction with its mean as a constant misses
// the Monte Carlo in E[eᵀe] or in the ages.
func TestComputeLawAgainstMonteCarlo(t *testing.T) {
	if testing.Short() {
		t.Skip("Monte Carlo: seconds")
	}
	const h = 0.01
	lnSC := must(laws.NewLognormal(0.002, 0.5, 0))
	lnCA := must(laws.NewLognormal(0.003, 0.6, 0.0005))
	good := must(laws.NewUniform(0.001, 0.004))
	bad := must(laws.NewGamma(3, 0.002, 0.002))
	withC := func(l *profiles.Loop, c laws.Delay) *profiles.Loop { l.Compute = c; return l }
	cases := []struct {
		name   string
		loop   *profiles.Loop
		markov bool
	}{
		{"one period, gamma compute, i.i.d.", withC(servo(profile(iidChannel(0.05, lnSC), iidChannel(0.05, lnCA)), 0), jitteryCompute(t)), false},
		{"one period, atom and density, i.i.d.", withC(servo(profile(iidChannel(0.02, lnSC), iidChannel(0.05, lnCA)), 0), atomAndDensity(t)), false},
		{"one period, gamma compute, burst channel", withC(servo(profile(nil, twoState(2, 0.02, good, 0.5, 0.1, bad)), 0), jitteryCompute(t)), true},
		{"three periods, gamma compute, i.i.d.", withC(scalarIntegrator(0.45, 1, 0.02, 1e-4, 3, profile(iidChannel(0.02, must(laws.NewUniform(0, 0.004))), iidChannel(0.05, must(laws.NewLognormal(0.006, 0.5, 0))))), jitteryCompute(t)), false},
		{"three periods, atom and density, burst channel", withC(scalarIntegrator(0.45, 1, 0.02, 1e-4, 3, profile(nil, twoState(2, 0.02, must(laws.NewUniform(0.004, 0.008)), 0.5, 0.1, must(laws.NewGamma(3, 0.003, 0.003))))), atomAndDensity(t)), true},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			c := agreeWithMonteCarlo(t, tc.loop, tc.markov, 11)
			// Without the law (its mean as a constant) the prediction
			// differs: the law matters to these cases.
			flat := *tc.loop
			flat.Compute = laws.Constant{Value: tc.loop.Compute.Mean()}
			prFlat, err := Predict(&flat, PredictOptions{SkipMargin: true})
			if err != nil {
				t.Fatal(err)
			}
			got, tol := c.sim.SecondMoment, c.tol
			flatM := math.Inf(1) // unstable with the mean as a constant
			if prFlat.MeanSquareStable {
				flatM = prFlat.Error.SecondMoment
			}
			t.Logf("with the mean as a constant %.6g", flatM)
			agesApart := false
			for d := range c.sim.CommandAge {
				if d < len(prFlat.Timing.CommandAge) {
					agesApart = agesApart || math.Abs(c.sim.CommandAge[d]-prFlat.Timing.CommandAge[d]) > 4*c.ageTol
				}
			}
			// The law must matter to the case: the mean alone, as a
			// constant, predicts another second moment or other ages.
			if math.Abs(flatM-got) < 2*tol && !agesApart {
				t.Errorf("the case does not tell the law from its mean: %.6g with the mean, Monte Carlo %.6g (tolerance %.2g), and the same command ages", flatM, got, tol)
			}
		})
	}
}

// TestComputeLawSciPy: a compute delay with an atom beside a density,
// added to the command delay by addLaws, through the one-period model's
// quadrature rule (its in-time mass and first two moments of τ) and the
// long model's law of a command's age, against SciPy's nested quad of the
// three independent delays (estimate/testdata/reference/compute_law.py;
// the command that made compute_law.out is in its doc string).
func TestComputeLawSciPy(t *testing.T) {
	const sciTol = 1e-9 // relative; SciPy's nested quad asks 1e-12 to 1e-13
	want := readNamedValues(t, "testdata/reference/compute_law.out")
	const h = 10 * ms
	dsc := must(laws.NewLognormal(2*ms, 0.5, 0.5*ms))
	dca := must(laws.NewGamma(2, 1*ms, 0))
	comp := must(laws.NewMixture([]float64{0.4, 0.6}, []laws.Delay{
		must(laws.NewConstant(1 * ms)), must(laws.NewGamma(2, 1.5*ms, 2*ms)),
	}))
	l := servo(profile(iidChannel(0, dsc), iidChannel(0, dca)), 0)
	l.Compute = comp
	md, err := buildBase(l, Options{})
	if err != nil {
		t.Fatal(err)
	}
	c0 := l.ComputeFloor()
	if c0 != 1*ms {
		t.Fatalf("compute floor %g, want 1ms", c0)
	}
	sum, err := md.commandLaw(0, dca, 3*h)
	if err != nil {
		t.Fatal(err)
	}
	s := Discretize(l.Plant.A, l.Plant.B, nil, h)
	nodes, err := tauRule(dsc, sum, h, c0, chebDegree(s, c0))
	if err != nil {
		t.Fatal(err)
	}
	for k := 0; k <= 2; k++ {
		got := 0.0
		for _, n := range nodes {
			got += n.Weight * math.Pow(n.Tau, float64(k))
		}
		w := want["moment"+strconv.Itoa(k)]
		if w == 0 || math.Abs(got-w) > sciTol*math.Abs(w) {
			t.Errorf("E[τᵏ; τ < h], k=%d: rule %.15g, SciPy %.15g", k, got, w)
		}
	}
	psc, err := splitLaw(dsc)
	if err != nil {
		t.Fatal(err)
	}
	pca, err := splitLaw(sum)
	if err != nil {
		t.Fatal(err)
	}
	tl, err := newTotalLaw(psc, pca, h, c0, 3*h, laws.ProbBelow(dsc, h))
	if err != nil {
		t.Fatal(err)
	}
	for _, x := range []int{12, 18, 25} {
		w := want["cdf"+strconv.Itoa(x)]
		if got := tl.at(float64(x) * ms); w == 0 || math.Abs(got-w) > sciTol {
			t.Errorf("P(τ ≤ %dms | τsc < h): long model %.15g, SciPy %.15g", x, got, w)
		}
	}
}

// TestComputeConstantIsToday: a compute delay given as a constant is the
// shift both models always carried (no sum law is built), and a law that
// narrows onto that constant (uniform on [c, c + ε]) converges onto its
// prediction: the sum law's machinery and the shift agree in the limit.
func TestComputeConstantIsToday(t *testing.T) {
	prof := profile(iidChannel(0.05, must(laws.NewLognormal(0.002, 0.5, 0))), iidChannel(0.05, must(laws.NewLognormal(0.003, 0.6, 0.0005))))
	base := servo(prof, 0.002)
	pr0, err := Predict(base, PredictOptions{SkipMargin: true})
	if err != nil {
		t.Fatal(err)
	}
	md, err := buildBase(base, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if d, err := md.commandLaw(0, prof.ControllerToActuator.States[0].Delay, 0.01); err != nil || d != prof.ControllerToActuator.States[0].Delay {
		t.Fatalf("a constant compute delay changed the command law: %v, %v", d, err)
	}
	for _, eps := range []float64{1e-4, 1e-6, 1e-8} {
		l := servo(prof, 0)
		l.Compute = must(laws.NewUniform(0.002, 0.002+eps))
		pr, err := Predict(l, PredictOptions{SkipMargin: true})
		if err != nil {
			t.Fatal(err)
		}
		rel := math.Abs(pr.Error.SecondMoment/pr0.Error.SecondMoment - 1)
		t.Logf("ε = %g: E[eᵀe] %.12g against %.12g (relative %.2g)", eps, pr.Error.SecondMoment, pr0.Error.SecondMoment, rel)
		// The second moment moves with the mean delay, ε/2: a first-order
		// change, so the gap must shrink in proportion to ε.
		if rel > 6e-3*eps/1e-4+1e-10 {
			t.Errorf("ε = %g: E[eᵀe] %.12g, the constant's %.12g (relative %.2g)", eps, pr.Error.SecondMoment, pr0.Error.SecondMoment, rel)
		}
	}
}

// TestSumLawShapes: the law of c + τca across the shapes a rig may give
// (a density singular at its start, a heavy tail, a peak a thousand times
// narrower than the period, a bounded one, atoms from measurements, an atom
// beside a density), at scales from far below to beyond the period: its
// CDF rebuilt from its parts must be finite, non-decreasing and match
// 200 000 draws of the two laws (within 5 binomial standard deviations at
// each of 24 points), and its quantile must invert its CDF.
func TestSumLawShapes(t *testing.T) {
	const h = 0.01
	r := rand.New(rand.NewPCG(3, 5))
	meas := make([]float64, 50)
	for i := range meas {
		meas[i] = 0.0005 + 0.002*r.Float64()
	}
	computes := map[string]laws.Delay{
		"gamma shape 0.3":   must(laws.NewGamma(0.3, 0.002, 0.0002)),
		"pareto tail":       must(laws.NewPareto(1.5, 0.001)),
		"narrow lognormal":  must(laws.NewLognormal(0.002, 0.001, 0)),
		"uniform":           must(laws.NewUniform(0.001, 0.003)),
		"measured (atoms)":  must(laws.NewEmpirical(meas, 0)),
		"atom beside gamma": must(laws.NewMixture([]float64{0.3, 0.7}, []laws.Delay{must(laws.NewConstant(0.001)), must(laws.NewGamma(2, 0.001, 0.001))})),
		"microseconds":      must(laws.NewGamma(3, 2e-6, 1e-6)),
		"beyond the period": must(laws.NewGamma(2, 0.008, 0.002)),
	}
	commands := map[string]laws.Delay{
		"lognormal":   must(laws.NewLognormal(0.003, 0.6, 0.0005)),
		"uniform":     must(laws.NewUniform(0.001, 0.002)),
		"measured":    must(laws.NewEmpirical([]float64{0.001, 0.0015, 0.004}, 0)),
		"weibull < 1": must(laws.NewWeibull(0.6, 0.002, 0)),
	}
	for cn, c := range computes {
		for dn, d := range commands {
			t.Run(cn+" + "+dn, func(t *testing.T) {
				c0, _ := c.Support()
				s, err := addLaws(c, -c0, d, 3*h)
				if err != nil {
					t.Fatal(err)
				}
				const n = 200000
				draws := make([]float64, n)
				for i := range draws {
					draws[i] = c.Sample(r) - c0 + d.Sample(r)
				}
				sort.Float64s(draws)
				prev := 0.0
				for k := 1; k <= 24; k++ {
					x := draws[k*n/25]
					got := s.CDF(x)
					if math.IsNaN(got) || got < prev-1e-12 {
						t.Fatalf("CDF(%g) = %g after %g", x, got, prev)
					}
					prev = got
					emp := float64(sort.SearchFloat64s(draws, math.Nextafter(x, math.Inf(1)))) / n
					if sd := math.Sqrt(emp * (1 - emp) / n); math.Abs(got-emp) > 5*sd+1e-9 {
						t.Errorf("P(X ≤ %s): law %.6f, draws %.6f (±%.6f)", laws.FormatSeconds(x), got, emp, sd)
					}
				}
				parts, err := splitLaw(s)
				if err != nil {
					t.Fatal(err)
				}
				for _, p := range parts.pieces {
					for _, u := range []float64{1e-9, 0.01, 0.5, 0.99} {
						x := p.quantile(u)
						if got := p.cdf(x); math.IsNaN(x) || math.Abs(got-u) > 1e-8 {
							t.Errorf("piece %s: quantile(%g) = %g, CDF there %g", laws.Describe(p.base), u, x, got)
						}
					}
				}
			})
		}
	}
	// And each compute law through a whole prediction, one-period and
	// long horizon: an answer with finite moments, or a clear error.
	for cn, c := range computes {
		for _, na := range []int{1, 3} {
			if cn == "measured (atoms)" && na > 1 {
				// Correct but slow (about 10 s): fifty shifted copies of a
				// density singular at its start, each resolved on its own
				// in the long model's law of a command's age.
				continue
			}
			l := servo(profile(iidChannel(0.05, must(laws.NewLognormal(0.002, 0.5, 0))), iidChannel(0.05, commands["weibull < 1"])), 0)
			l.Compute = c
			l.Timing = profiles.Timing{SampleHorizon: 1, CommandHorizon: na}
			pr, err := Predict(l, PredictOptions{SkipMargin: true})
			switch {
			case err != nil:
				t.Errorf("%s, horizon %d: %v", cn, na, err)
			case pr.MeanSquareStable && !(pr.Error.SecondMoment > 0 && !math.IsInf(pr.Error.SecondMoment, 0)):
				t.Errorf("%s, horizon %d: E[eᵀe] %g", cn, na, pr.Error.SecondMoment)
			}
		}
	}
}
