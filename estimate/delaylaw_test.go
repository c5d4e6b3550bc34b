package estimate

import (
	"bufio"
	"math"
	"math/rand/v2"
	"os"
	"rigwire/profiles/laws"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

const (
	ms = 1e-3
	// lawTol is the agreement asked of E[τᵏ; m2] from the rule, relative
	// to the mass times the k-th power of the period.
	lawTol = 1e-10
)

func must(d laws.Delay, err error) laws.Delay {
	if err != nil {
		panic(err)
	}
	return d
}

// ruleMoment is Σ w τᵏ over the rule.
func ruleMoment(nodes []tauNode, k int) float64 {
	s := 0.0
	for _, n := range nodes {
		s += n.Weight * math.Pow(n.Tau, float64(k))
	}
	return s
}

// TestTauRuleClosedForms checks the law of τ = τsc + τca + c on {τ < h}
// that the prediction integrates over, for pairs of laws whose sum has a
// known law. Sources beside each case.
func TestTauRuleClosedForms(t *testing.T) {
	gammaSum := func(shape, scale float64) func(k int, x float64) float64 {
		// E[Sᵏ; S < x] for S ~ Gamma(shape, scale):
		// shape(shape+1)…(shape+k−1) scaleᵏ F_{shape+k}(x), the identity
		// x^k f_a(x) = a(a+1)…(a+k−1) θᵏ f_{a+k}(x) of gamma densities,
		// with F from gonum's distuv.Gamma (rate = 1/scale).
		return func(k int, x float64) float64 {
			c := 1.0
			for i := 0; i < k; i++ {
				c *= (shape + float64(i)) * scale
			}
			return c * distuv.Gamma{Alpha: shape + float64(k), Beta: 1 / scale}.CDF(x)
		}
	}
	hypoExp := func(m1, m2 float64) func(k int, x float64) float64 {
		// Sum of two exponentials of rates λ1 ≠ λ2 (hypoexponential):
		// f(s) = λ1λ2/(λ2−λ1) (e^{−λ1 s} − e^{−λ2 s}), so
		// E[Sᵏ; S < x] = λ1λ2/(λ2−λ1) (G_k(λ1, x) − G_k(λ2, x)) with
		// G_k(λ, x) = ∫₀ˣ sᵏ e^{−λs} ds = k!/λ^{k+1} P(k+1, λx), P the
		// regularised lower incomplete gamma (distuv.Gamma's CDF).
		l1, l2 := 1/m1, 1/m2
		return func(k int, x float64) float64 {
			g := func(l float64) float64 {
				fact := math.Gamma(float64(k) + 1)
				return fact / math.Pow(l, float64(k)+1) * distuv.Gamma{Alpha: float64(k) + 1, Beta: l}.CDF(x)
			}
			return l1 * l2 / (l2 - l1) * (g(l1) - g(l2))
		}
	}
	cases := []struct {
		name     string
		sc, ca   laws.Delay
		h, c     float64
		moment   func(k int, x float64) float64 // E[Sᵏ; S < x], S = τsc + τca
		source   string
		sumShift float64 // S − shift is the law of moment
	}{
		{"gamma+gamma", must(laws.NewGamma(2, 1*ms, 0)), must(laws.NewGamma(3, 1*ms, 0)), 10 * ms, 1 * ms,
			gammaSum(5, 1*ms), "Gamma(2,θ)+Gamma(3,θ) = Gamma(5,θ); distuv.Gamma", 0},
		{"gamma shape<1 pair", must(laws.NewGamma(0.5, 2*ms, 0)), must(laws.NewGamma(0.7, 2*ms, 0)), 10 * ms, 0,
			gammaSum(1.2, 2*ms), "Gamma(0.5,θ)+Gamma(0.7,θ) = Gamma(1.2,θ), singular densities; distuv.Gamma", 0},
		{"exponential pair", must(laws.NewExponential(1*ms, 0)), must(laws.NewExponential(2.5*ms, 0)), 8 * ms, 0.5 * ms,
			hypoExp(1*ms, 2.5*ms), "hypoexponential density, distuv.Gamma for the incomplete gamma", 0},
		{"exponential pair shifted", must(laws.NewExponential(1*ms, 1*ms)), must(laws.NewExponential(2.5*ms, 0.5*ms)), 8 * ms, 0.5 * ms,
			hypoExp(1*ms, 2.5*ms), "hypoexponential moved by the shifts", 1.5 * ms},
		{"atom+exponential", laws.Constant{Value: 2 * ms}, must(laws.NewExponential(1.5*ms, 0)), 6 * ms, 1 * ms,
			func(k int, x float64) float64 {
				e := distuv.Exponential{Rate: 1 / (1.5 * ms)}
				g := func(k int, x float64) float64 { // ∫₀ˣ sᵏ λe^{−λs} ds
					return math.Gamma(float64(k)+1) * math.Pow(1.5*ms, float64(k)) * distuv.Gamma{Alpha: float64(k) + 1, Beta: e.Rate}.CDF(x)
				}
				// S = 2 ms + E: E[Sᵏ; S<x] by the binomial expansion.
				s := 0.0
				for j := 0; j <= k; j++ {
					s += binom(k, j) * math.Pow(2*ms, float64(k-j)) * g(j, x-2*ms)
				}
				return s
			}, "constant + exponential: binomial expansion, distuv.Gamma", 0},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			l := servo(profile(iidChannel(0, tc.sc), iidChannel(0, tc.ca)), tc.c)
			l.Period = tc.h
			s := Discretize(l.Plant.A, l.Plant.B, l.Plant.W, tc.h)
			nodes, err := tauRule(tc.sc, tc.ca, tc.h, tc.c, chebDegree(s, tc.c))
			if err != nil {
				t.Fatal(err)
			}
			budget := tc.h - tc.c - tc.sumShift
			for k := 0; k <= 2; k++ {
				// E[(τ − c − shift)ᵏ] from the rule: expand τᵏ of the rule.
				got := 0.0
				for _, n := range nodes {
					got += n.Weight * math.Pow(n.Tau-tc.c-tc.sumShift, float64(k))
				}
				want := tc.moment(k, budget)
				scale := math.Pow(tc.h, float64(k))
				if math.Abs(got-want) > lawTol*scale {
					t.Errorf("E[Sᵏ; S < %g] k=%d: rule %.15g, want %.15g (%s), |Δ|/hᵏ = %.2g",
						budget, k, got, want, tc.source, math.Abs(got-want)/scale)
				}
			}
		})
	}
}

func binom(n, k int) float64 {
	return math.Gamma(float64(n)+1) / (math.Gamma(float64(k)+1) * math.Gamma(float64(n-k)+1))
}

// TestTauRuleSciPy compares with SciPy's quad of the convolution of a
// shifted lognormal and a gamma (estimate/testdata/reference/convolution.py; the
// command that made convolution.out is in its doc string).
func TestTauRuleSciPy(t *testing.T) {
	const sciTol = 1e-9 // relative; SciPy's nested quad asks 1e-12 to 1e-13
	want := readNamedValues(t, "testdata/reference/convolution.out")
	dsc := must(laws.NewLognormal(2*ms, 0.5, 0.5*ms))
	dca := must(laws.NewGamma(2, 1*ms, 0))
	const h, c = 8 * ms, 1 * ms
	l := servo(nil, c)
	s := Discretize(l.Plant.A, l.Plant.B, nil, h)
	nodes, err := tauRule(dsc, dca, h, c, chebDegree(s, c))
	if err != nil {
		t.Fatal(err)
	}
	for k := 0; k <= 2; k++ {
		got := 0.0
		for _, n := range nodes {
			got += n.Weight * math.Pow(n.Tau-c, float64(k))
		}
		w := want["moment"+strconv.Itoa(k)]
		if w == 0 || math.Abs(got-w) > sciTol*math.Abs(w) {
			t.Errorf("E[Sᵏ; S < 7ms], k=%d: rule %.15g, SciPy %.15g", k, got, w)
		}
	}
}

// readNamedValues reads a reference file's "name value" lines ("#"
// lines are comments).
func readNamedValues(t *testing.T, path string) map[string]float64 {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	want := map[string]float64{}
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		fs := strings.Fields(sc.Text())
		if len(fs) != 2 || strings.HasPrefix(fs[0], "#") {
			continue
		}
		v, err := strconv.ParseFloat(fs[1], 64)
		if err != nil {
			t.Fatalf("%s: %s: %v", path, fs[0], err)
		}
		want[fs[0]] = v
	}
	return want
}

// TestTauRuleManyAtoms checks the Chebyshev path for resampled
// measurements (more atom sums than maxDirectAtoms) against the plain sum
// over all pairs of atoms, for a smooth function of τ.
func TestTauRuleManyAtoms(t *testing.T) {
	const atomTol = 1e-12
	r := rand.New(rand.NewPCG(7, 11))
	draw := func(n int, mean float64) laws.Delay {
		x := make([]float64, n)
		for i := range x {
			x[i] = mean * r.ExpFloat64()
		}
		return must(laws.NewEmpirical(x, 0))
	}
	dsc, dca := draw(40, 2*ms), draw(30, 3*ms)
	const h, c = 10 * ms, 0.5 * ms
	l := servo(nil, c)
	s := Discretize(l.Plant.A, l.Plant.B, nil, h)
	nodes, err := tauRule(dsc, dca, h, c, chebDegree(s, c))
	if err != nil {
		t.Fatal(err)
	}
	f := func(tau float64) float64 { g0, _ := s.Split(tau); return g0.At(1, 0) * g0.At(0, 0) }
	got := 0.0
	for _, n := range nodes {
		got += n.Weight * f(n.Tau)
	}
	want := 0.0
	for _, a := range dsc.Atoms() {
		for _, b := range dca.Atoms() {
			if tau := a.At + b.At + c; tau < h {
				want += a.Mass * b.Mass * f(tau)
			}
		}
	}
	if math.Abs(got-want) > atomTol*math.Abs(want) {
		t.Errorf("E[Γ0₁Γ0₀; m2]: rule %.15g, pairwise sum %.15g", got, want)
	}
	if len(nodes) > 200 {
		t.Errorf("%d nodes: atoms should have gone into the moments", len(nodes))
	}
}

// TestStaleAndLateAtTheBoundary checks estimate/model.md §10: a delay of exactly h
// is stale (sensor) or late (command).
func TestStaleAndLateAtTheBoundary(t *testing.T) {
	const h = 10 * ms
	l := servo(profile(iidChannel(0, laws.Constant{Value: h}), nil), 0)
	md, err := Build(l, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if js := md.States[0]; js.P0 != 1 {
		t.Errorf("τsc = h: P(m0) = %g, want 1 (stale)", js.P0)
	}
	l = servo(profile(iidChannel(0, laws.Constant{Value: 4 * ms}), iidChannel(0, laws.Constant{Value: 5 * ms})), 1*ms)
	md, err = Build(l, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if js := md.States[0]; js.P1 != 1 || js.P2 != 0 {
		t.Errorf("τ = h: P(m1) = %g, P(m2) = %g, want 1, 0 (late)", js.P1, js.P2)
	}
}
