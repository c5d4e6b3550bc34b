package laws_test

import (
	"math"
	"math/rand/v2"
	"rigwire/profiles/laws"
	"slices"
	"testing"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/integrate/quad"
	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distuv"
)

// reference is an outside definition of a law, from gonum's stat/distuv,
// with the shift applied by hand: X = shift + Y.
type reference struct {
	cdf, pdf   func(float64) float64
	mean, vari float64
}

func shifted(shift float64, cdf, pdf func(float64) float64, mean, vari float64) *reference {
	return &reference{
		cdf:  func(x float64) float64 { return cdf(x - shift) },
		pdf:  func(x float64) float64 { return pdf(x - shift) },
		mean: mean + shift, vari: vari,
	}
}

// lawCase is one law under test. Delays are in seconds and of the size a
// 10 ms control loop meets.
type lawCase struct {
	name string
	law  laws.Delay
	ref  *reference // nil where distuv has no such law
	// heavyTail marks a law whose variance is mostly carried beyond the
	// last quantile integrated, where the quadrature check of moments is
	// skipped.
	heavyTail bool
	// singular marks a density that is unbounded at the lower end
	// (shape < 1), where quadrature needs a looser tolerance.
	singular bool
}

// mustFor returns a helper that unwraps a constructor's result, failing
// t on error.
func mustFor(t testing.TB) func(laws.Delay, error) laws.Delay {
	return func(d laws.Delay, err error) laws.Delay {
		t.Helper()
		if err != nil {
			t.Fatal(err)
		}
		return d
	}
}

func lawCases(t testing.TB) []lawCase {
	must := mustFor(t)
	ms := 1e-3
	n := func(mu, sigma float64) distuv.Normal { return distuv.Normal{Mu: mu, Sigma: sigma} }
	truncRef := func(mu, sigma, shift float64) *reference {
		// Truncation to [0, ∞) of distuv.Normal, by hand; the moments from
		// the closed forms of Johnson, Kotz & Balakrishnan (vol. 1, §10.1,
		// from memory): E = μ + σλ, Var = σ²(1 + αλ − λ²), α = −μ/σ,
		// λ = φ(α)/(1 − Φ(α)).
		nd := n(mu, sigma)
		z := nd.Survival(0)
		a := -mu / sigma
		std := n(0, 1)
		lam := std.Prob(a) / std.Survival(a)
		cdf := func(x float64) float64 {
			if x < 0 {
				return 0
			}
			return (nd.CDF(x) - nd.CDF(0)) / z
		}
		pdf := func(x float64) float64 {
			if x < 0 {
				return 0
			}
			return nd.Prob(x) / z
		}
		return shifted(shift, cdf, pdf, mu+sigma*lam, sigma*sigma*(1+a*lam-lam*lam))
	}
	gammaRef := func(k, theta, shift float64) *reference {
		g := distuv.Gamma{Alpha: k, Beta: 1 / theta}
		return shifted(shift, g.CDF, g.Prob, g.Mean(), g.Variance())
	}
	weibullRef := func(k, lambda, shift float64) *reference {
		w := distuv.Weibull{K: k, Lambda: lambda}
		pdf := func(x float64) float64 {
			if x < 0 {
				return 0
			}
			return w.Prob(x)
		}
		return shifted(shift, w.CDF, pdf, w.Mean(), w.Variance())
	}
	paretoRef := func(a, s float64) *reference {
		p := distuv.Pareto{Xm: s, Alpha: a}
		v := p.Variance()
		if a <= 2 {
			v = math.Inf(1) // distuv reports NaN or Inf; the law has none
		}
		return shifted(0, p.CDF, p.Prob, p.Mean(), v)
	}
	lnRef := func(median, sigma, shift float64) *reference {
		l := distuv.LogNormal{Mu: math.Log(median), Sigma: sigma}
		pdf := func(x float64) float64 {
			if x <= 0 {
				return 0
			}
			return l.Prob(x)
		}
		cdf := func(x float64) float64 {
			if x <= 0 {
				return 0
			}
			return l.CDF(x)
		}
		return shifted(shift, cdf, pdf, l.Mean(), l.Variance())
	}
	expRef := func(mean, shift float64) *reference {
		e := distuv.Exponential{Rate: 1 / mean}
		return shifted(shift, e.CDF, e.Prob, e.Mean(), e.Variance())
	}
	u := distuv.Uniform{Min: 2 * ms, Max: 8 * ms}

	mixHeavy := must(laws.NewMixture([]float64{9, 1}, []laws.Delay{
		must(laws.NewLognormal(2*ms, 0.3, 0)),
		must(laws.NewPareto(1.5, 4*ms)),
	}))
	mixAtoms := must(laws.NewMixture([]float64{0.7, 0.2, 0.1}, []laws.Delay{
		laws.Constant{Value: 1 * ms},
		must(laws.NewUniform(1*ms, 3*ms)),
		must(laws.NewEmpirical([]float64{1 * ms, 5 * ms}, 0)),
	}))
	nested := must(laws.Shift(must(laws.NewMixture([]float64{1, 1}, []laws.Delay{
		mixHeavy,
		must(laws.NewGamma(3, 0.5*ms, 0)),
	})), 0.25*ms))

	return []lawCase{
		{name: "constant", law: laws.Constant{Value: 2 * ms}},
		{name: "uniform", law: must(laws.NewUniform(2*ms, 8*ms)), ref: shifted(0, u.CDF, u.Prob, u.Mean(), u.Variance())},
		{name: "normal mostly kept", law: must(laws.NewNormal(3*ms, 0.5*ms, 0.2*ms)), ref: truncRef(3*ms, 0.5*ms, 0.2*ms)},
		{name: "normal near zero", law: must(laws.NewNormal(0.5*ms, 1*ms, 0)), ref: truncRef(0.5*ms, 1*ms, 0)},
		{name: "normal mostly cut (robert)", law: must(laws.NewNormal(-2*ms, 1*ms, 0.1*ms)), ref: truncRef(-2*ms, 1*ms, 0.1*ms)},
		{name: "exponential", law: must(laws.NewExponential(2*ms, 0.5*ms)), ref: expRef(2*ms, 0.5*ms)},
		{name: "gamma shape 2.5", law: must(laws.NewGamma(2.5, 1*ms, 0.3*ms)), ref: gammaRef(2.5, 1*ms, 0.3*ms)},
		{name: "gamma shape 0.6 (boost)", law: must(laws.NewGamma(0.6, 2*ms, 0)), ref: gammaRef(0.6, 2*ms, 0), singular: true},
		{name: "lognormal", law: must(laws.NewLognormal(3*ms, 0.4, 1*ms)), ref: lnRef(3*ms, 0.4, 1*ms)},
		{name: "weibull shape 1.5", law: must(laws.NewWeibull(1.5, 2*ms, 0.5*ms)), ref: weibullRef(1.5, 2*ms, 0.5*ms)},
		{name: "weibull shape 0.8", law: must(laws.NewWeibull(0.8, 1*ms, 0)), ref: weibullRef(0.8, 1*ms, 0), singular: true},
		{name: "pareto shape 2.5", law: must(laws.NewPareto(2.5, 1*ms)), ref: paretoRef(2.5, 1*ms), heavyTail: true},
		{name: "pareto shape 1.2", law: must(laws.NewPareto(1.2, 0.5*ms)), ref: paretoRef(1.2, 0.5*ms)},
		{name: "empirical", law: must(laws.NewEmpirical([]float64{3.5 * ms, 1 * ms, 2 * ms, 1 * ms, 3.5 * ms, 9 * ms, 3.5 * ms}, 0.5*ms))},
		{name: "mixture heavy tail", law: mixHeavy},
		{name: "mixture with atoms", law: mixAtoms},
		{name: "nested mixture shifted", law: nested},
	}
}

// TestSamplersKS checks each sampler against its own CDF by the
// one-sample Kolmogorov–Smirnov test (Massey 1951), n = 20000 seeded
// draws, rejecting at α = 0.001 with the asymptotic Kolmogorov law and
// Stephens' (1970) modified statistic (laws.KSPValue). For laws with
// atoms the statistic is the exact supremum and the test conservative.
// Purely atomic laws are checked by Pearson's chi-square test on the atom
// counts instead (p-value from distuv.ChiSquared), at the same level.
func TestSamplersKS(t *testing.T) {
	const (
		n     = 20000
		alpha = 0.001
	)
	for i, tc := range lawCases(t) {
		t.Run(tc.name, func(t *testing.T) {
			r := rand.New(rand.NewPCG(2024, uint64(i)))
			x := make([]float64, n)
			for j := range x {
				x[j] = tc.law.Sample(r)
				if !(x[j] >= 0) {
					t.Fatalf("draw %d = %v, want ≥ 0", j, x[j])
				}
			}
			slices.Sort(x)
			atoms := tc.law.Atoms()
			atomMass := 0.0
			for _, a := range atoms {
				atomMass += a.Mass
			}
			if math.Abs(atomMass-1) < 1e-12 {
				chiSquareAtoms(t, x, atoms, alpha)
				return
			}
			d := laws.KSStatistic(x, tc.law.CDF)
			if p := laws.KSPValue(d, n); p < alpha {
				t.Errorf("KS D = %.5f, p = %.3g < %v", d, p, alpha)
			}
		})
	}
}

func chiSquareAtoms(t *testing.T, sorted []float64, atoms []laws.Atom, alpha float64) {
	t.Helper()
	n := float64(len(sorted))
	obs := make([]float64, len(atoms))
	exp := make([]float64, len(atoms))
	for i, a := range atoms {
		lo, _ := slices.BinarySearch(sorted, a.At)
		hi, _ := slices.BinarySearch(sorted, math.Nextafter(a.At, math.Inf(1)))
		obs[i] = float64(hi - lo)
		exp[i] = n * a.Mass
	}
	if s := floats.Sum(obs); s != n {
		t.Fatalf("%v of %v draws fall off the atoms", n-s, n)
	}
	if len(atoms) == 1 {
		return // every draw is on the only atom
	}
	chi := stat.ChiSquare(obs, exp)
	if p := (distuv.ChiSquared{K: float64(len(atoms) - 1)}).Survival(chi); p < alpha {
		t.Errorf("chi-square %.3g on %d atoms, p = %.3g < %v", chi, len(atoms), p, alpha)
	}
}

// TestLawsAgainstDistuv compares CDF, density, mean and variance with
// gonum's stat/distuv (Normal, Exponential, Gamma, LogNormal, Weibull,
// Pareto, Uniform), the shift applied by hand; the truncated normal is
// built from distuv.Normal by hand, its moments from the closed form of
// Johnson, Kotz & Balakrishnan §10.1.
func TestLawsAgainstDistuv(t *testing.T) {
	const (
		cdfTol = 1e-12 // absolute, probabilities
		relTol = 1e-9  // relative, densities and moments
	)
	for _, tc := range lawCases(t) {
		if tc.ref == nil {
			continue
		}
		t.Run(tc.name, func(t *testing.T) {
			for _, p := range []float64{1e-6, 0.001, 0.05, 0.3, 0.5, 0.7, 0.95, 0.999, 1 - 1e-6} {
				x := laws.Quantile(tc.law, p)
				for _, y := range []float64{x, x * 0.97, x * 1.05} {
					if got, want := tc.law.CDF(y), tc.ref.cdf(y); math.Abs(got-want) > cdfTol {
						t.Errorf("CDF(%g) = %.15g, want %.15g (distuv)", y, got, want)
					}
					if got, want := tc.law.Density(y), tc.ref.pdf(y); !close(got, want, relTol) {
						t.Errorf("Density(%g) = %.15g, want %.15g (distuv)", y, got, want)
					}
				}
			}
			if got := tc.law.CDF(-1e-3); got != 0 {
				t.Errorf("CDF(-1ms) = %v, want 0", got)
			}
			if got, want := tc.law.Mean(), tc.ref.mean; !close(got, want, relTol) {
				t.Errorf("Mean = %.15g, want %.15g", got, want)
			}
			if got, want := tc.law.Variance(), tc.ref.vari; !close(got, want, relTol) {
				t.Errorf("Variance = %.15g, want %.15g", got, want)
			}
		})
	}
}

func close(got, want, rel float64) bool {
	if math.IsInf(want, 0) || math.IsInf(got, 0) {
		return got == want
	}
	return math.Abs(got-want) <= rel*math.Max(math.Abs(want), 1e-300)
}

// breakpoints returns points that split the law's support into pieces
// where the density is smooth: its lower end, quantiles, its atoms.
func breakpoints(d laws.Delay) []float64 {
	lo, _ := d.Support()
	pts := []float64{lo}
	for _, p := range []float64{1e-9, 1e-6, 1e-4, 0.001, 0.01, 0.03, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 0.97, 0.99, 0.999, 1 - 1e-4, 1 - 1e-6, 1 - 1e-8, 1 - 1e-10} {
		pts = append(pts, laws.Quantile(d, p))
	}
	for _, a := range d.Atoms() {
		pts = append(pts, a.At)
	}
	pts = append(pts, componentEnds(d, 0)...)
	slices.Sort(pts)
	return slices.Compact(pts)
}

// componentEnds lists the finite ends of the supports of the laws that d
// is made of (mixture parts, shifted bases), where its density may jump.
func componentEnds(d laws.Delay, offset float64) []float64 {
	lo, hi := d.Support()
	out := []float64{lo + offset}
	if !math.IsInf(hi, 1) {
		out = append(out, hi+offset)
	}
	switch v := d.(type) {
	case *laws.Mixture:
		for _, p := range v.Parts {
			out = append(out, componentEnds(p, offset)...)
		}
	case *laws.Shifted:
		out = append(out, componentEnds(v.Base, offset+v.Shift)...)
	}
	return out
}

// TestDensityAndAtomsIntegrate checks the law's parts against each other
// by quadrature (gonum integrate/quad, 30-point Legendre on each piece
// between breakpoints): ∫ density + Σ atoms = 1 up to the 1e-10 tail left
// out, CDF(x) = ∫_lo^x density + Σ_{atoms ≤ x} mass at each breakpoint,
// and the mean and (finite) variance equal ∫ x dF and ∫ (x − m)² dF —
// the slow, obviously correct reference beside the closed forms.
func TestDensityAndAtomsIntegrate(t *testing.T) {
	const (
		massTol     = 2e-9 // the 1e-10 tail left out plus quadrature error
		singularTol = 2e-5 // x^{k−1} singularities integrate poorly
		momentTol   = 1e-3 // relative; heavy tails beyond the last point
	)
	for _, tc := range lawCases(t) {
		t.Run(tc.name, func(t *testing.T) {
			tol := massTol
			if tc.singular {
				tol = singularTol
			}
			pts := breakpoints(tc.law)
			atoms := tc.law.Atoms()
			cum, m1, m2 := 0.0, 0.0, 0.0
			mean := tc.law.Mean()
			for i, x := range pts {
				if i > 0 {
					a := pts[i-1]
					cum += quad.Fixed(tc.law.Density, a, x, 30, nil, 0)
					m1 += quad.Fixed(func(y float64) float64 { return y * tc.law.Density(y) }, a, x, 30, nil, 0)
					m2 += quad.Fixed(func(y float64) float64 { return (y - mean) * (y - mean) * tc.law.Density(y) }, a, x, 30, nil, 0)
				}
				below := 0.0
				for _, at := range atoms {
					if at.At <= x {
						below += at.Mass
					}
				}
				if got, want := tc.law.CDF(x), cum+below; math.Abs(got-want) > tol {
					t.Errorf("CDF(%g) = %.12g, ∫density + atoms = %.12g", x, got, want)
				}
			}
			total := cum
			for _, at := range atoms {
				total += at.Mass
				m1 += at.At * at.Mass
				m2 += (at.At - mean) * (at.At - mean) * at.Mass
			}
			if math.Abs(total-1) > tol {
				t.Errorf("∫density + Σatoms = %.12g, want 1", total)
			}
			if v := tc.law.Variance(); !math.IsInf(v, 1) && !tc.heavyTail {
				if !close(m1, mean, momentTol) {
					t.Errorf("Mean = %.9g, ∫x dF = %.9g", mean, m1)
				}
				if !close(m2, v, 10*momentTol) {
					t.Errorf("Variance = %.9g, ∫(x−m)² dF = %.9g", v, m2)
				}
			}
		})
	}
}

// TestQuantileInvertsCDF checks that Quantile returns the smallest x with
// CDF(x) ≥ p: CDF(x) ≥ p, and CDF just below x is < p.
func TestQuantileInvertsCDF(t *testing.T) {
	const slack = 1e-12 // bisection stops at float resolution
	for _, tc := range lawCases(t) {
		t.Run(tc.name, func(t *testing.T) {
			for _, p := range []float64{0.001, 0.01, 0.1, 0.25, 0.5, 0.75, 0.9, 0.99, 0.999} {
				x := laws.Quantile(tc.law, p)
				if tc.law.CDF(x) < p-slack {
					t.Errorf("p=%v: CDF(%g) = %v < p", p, x, tc.law.CDF(x))
				}
				below := x - 1e-9*math.Max(x, 1e-6)
				if tc.law.CDF(below) > p+slack {
					t.Errorf("p=%v: CDF(%g) = %v > p just below the quantile %g", p, below, tc.law.CDF(below), x)
				}
			}
		})
	}
}

// TestSampleDoesNotAllocate checks the hot-path promise of Delay.Sample.
func TestSampleDoesNotAllocate(t *testing.T) {
	r := rand.New(rand.NewPCG(1, 1))
	for _, tc := range lawCases(t) {
		t.Run(tc.name, func(t *testing.T) {
			if a := testing.AllocsPerRun(1000, func() { tc.law.Sample(r) }); a != 0 {
				t.Errorf("Sample allocates %v times per call", a)
			}
		})
	}
}

// TestLawStructure checks the parts of laws that are defined by the
// profile format rather than by an outside law: merged atoms of an
// empirical law and of a mixture, normalised mixture weights, shifts.
func TestLawStructure(t *testing.T) {
	const tol = 1e-15
	must := mustFor(t)
	ms := 1e-3
	emp := must(laws.NewEmpirical([]float64{2 * ms, 1 * ms, 2 * ms, 2 * ms}, 0))
	want := []laws.Atom{{At: 1 * ms, Mass: 0.25}, {At: 2 * ms, Mass: 0.75}}
	if got := emp.Atoms(); !atomsEqual(got, want, tol) {
		t.Errorf("empirical atoms = %v, want %v", got, want)
	}
	// Mean 1.75ms; variance (1·(0.75)² + 3·(0.25)²)/4 ms² = 0.1875 ms².
	if !close(emp.Mean(), 1.75*ms, 1e-12) || !close(emp.Variance(), 0.1875*ms*ms, 1e-12) {
		t.Errorf("empirical mean, variance = %v, %v; want 1.75ms, 0.1875ms²", emp.Mean(), emp.Variance())
	}
	mix := must(laws.NewMixture([]float64{3, 1}, []laws.Delay{
		laws.Constant{Value: 1 * ms},
		emp,
	}))
	want = []laws.Atom{{At: 1 * ms, Mass: 0.75 + 0.25*0.25}, {At: 2 * ms, Mass: 0.25 * 0.75}}
	if got := mix.Atoms(); !atomsEqual(got, want, tol) {
		t.Errorf("mixture atoms = %v, want %v", got, want)
	}
	sh := must(laws.Shift(mix, 0.5*ms))
	want = []laws.Atom{{At: 1.5 * ms, Mass: 0.8125}, {At: 2.5 * ms, Mass: 0.1875}}
	if got := sh.Atoms(); !atomsEqual(got, want, tol) {
		t.Errorf("shifted atoms = %v, want %v", got, want)
	}
	if u := must(laws.NewUniform(3*ms, 3*ms)); u.Kind() != "constant" {
		t.Errorf("uniform min = max: kind %q, want constant", u.Kind())
	}
	if c := must(laws.Shift(laws.Constant{Value: 1 * ms}, 2*ms)); c != (laws.Constant{Value: 3 * ms}) {
		t.Errorf("shifted constant = %v", c)
	}
}

func atomsEqual(a, b []laws.Atom, tol float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Abs(a[i].At-b[i].At) > tol || math.Abs(a[i].Mass-b[i].Mass) > tol {
			return false
		}
	}
	return true
}

// TestConstructorsReject checks that the constructors refuse parameters
// outside each law's domain.
func TestConstructorsReject(t *testing.T) {
	nan := math.NaN()
	tests := []struct {
		name string
		err  error
	}{
		{"constant negative", second(laws.NewConstant(-1))},
		{"uniform min > max", second(laws.NewUniform(2, 1))},
		{"uniform negative", second(laws.NewUniform(-1, 1))},
		{"normal std 0", second(laws.NewNormal(1, 0, 0))},
		{"normal mean nan", second(laws.NewNormal(nan, 1, 0))},
		{"normal cut too far", second(laws.NewNormal(-30, 1, 0))},
		{"exponential mean 0", second(laws.NewExponential(0, 0))},
		{"gamma shape 0", second(laws.NewGamma(0, 1, 0))},
		{"lognormal sigma negative", second(laws.NewLognormal(1, -1, 0))},
		{"weibull scale 0", second(laws.NewWeibull(1, 0, 0))},
		{"pareto scale 0", second(laws.NewPareto(1, 0))},
		{"empirical empty", second(laws.NewEmpirical(nil, 0))},
		{"empirical negative", second(laws.NewEmpirical([]float64{-1}, 0))},
		{"mixture zero weights", second(laws.NewMixture([]float64{0}, []laws.Delay{laws.Constant{}}))},
		{"shift negative", second(laws.Shift(laws.Constant{}, -1))},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if tt.err == nil {
				t.Error("accepted")
			}
		})
	}
}

func second(_ laws.Delay, err error) error { return err }
