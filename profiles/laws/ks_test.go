package laws

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// TestKolmogorovSurvival compares Q_K with SciPy's scipy.special.kolmogorov
// (SciPy 1.10.1, Debian python3-scipy), produced by
//
//	python3 -c "from scipy.special import kolmogorov; print(repr(float(kolmogorov(t))))"
//
// t = 1.2238, 1.3581, 1.6276, 1.9495 are also the classic asymptotic
// critical values for α = 0.10, 0.05, 0.01, 0.001 (Smirnov 1948 table,
// as reproduced in Massey 1951; from memory).
func TestKolmogorovSurvival(t *testing.T) {
	const tol = 1e-12 // relative; both sides sum the same series
	tests := []struct {
		name string
		t, q float64
	}{
		{"t=0.5", 0.5, 0.9639452436648751},
		{"t=0.8", 0.8, 0.5441424115741981},
		{"t=1", 1.0, 0.26999967167735456},
		{"alpha 0.10", 1.2238, 0.10002342783567782},
		{"alpha 0.05", 1.3581, 0.0499996304316674},
		{"alpha 0.01", 1.6276, 0.010001537333060776},
		{"alpha 0.001", 1.9495, 0.0009998019790258981},
		{"t=2.5", 2.5, 7.453306344157342e-06},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := KolmogorovSurvival(tt.t); math.Abs(got-tt.q) > tol*tt.q {
				t.Errorf("Q_K(%v) = %.16g, want %.16g (scipy)", tt.t, got, tt.q)
			}
		})
	}
	// The two series meet at t = 1 without a jump.
	if a, b := KolmogorovSurvival(math.Nextafter(1, 0)), KolmogorovSurvival(1); math.Abs(a-b) > 1e-12 {
		t.Errorf("series disagree at t = 1: %v vs %v", a, b)
	}
}

// TestKSPValue checks Stephens' approximation against the exact finite-n
// law of D_n, SciPy's scipy.stats.kstwo (SciPy 1.10.1):
//
//	python3 -c "from scipy.stats import kstwo; print(repr(float(kstwo.isf(a, n))))"
//	python3 -c "from scipy.stats import kstwo; print(repr(float(kstwo.sf(d, n))))"
//
// The critical values agree with Massey's (1951) Table 1 to its printed
// digits (n = 5: 0.565, n = 10: 0.41 and 0.49, n = 20: 0.29, n = 30: 0.29;
// from memory). Stephens (1970) claims his modification holds the
// significance level to about 1 % of its value in the upper tail; the
// tolerance below is 5 % of the p-value.
func TestKSPValue(t *testing.T) {
	const relTol = 0.05
	tests := []struct {
		name string
		n    int
		d, p float64
	}{
		{"massey n=5 a=.05", 5, 0.5632751983660635, 0.05},
		{"massey n=10 a=.05", 10, 0.40924608477750496, 0.05},
		{"massey n=10 a=.01", 10, 0.48893165941109124, 0.01},
		{"massey n=20 a=.05", 20, 0.2940753144343289, 0.05},
		{"massey n=20 a=.20", 20, 0.23151862314131635, 0.20},
		{"massey n=30 a=.01", 30, 0.2898639065419554, 0.01},
		{"n=100 a=.05", 100, 0.13402791648569568, 0.05},
		{"n=20000 a=.001", 20000, 0.013776321982664116, 0.001},
		{"n=50 sf", 50, 0.15, 0.19026366518248072},
		{"n=100 sf", 100, 0.1, 0.2526927570063874},
		{"n=20000 sf", 20000, 0.0137, 0.0010875624323608425},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := KSPValue(tt.d, tt.n); math.Abs(got-tt.p) > relTol*tt.p {
				t.Errorf("KSPValue(%v, %d) = %.6g, want %.6g (scipy kstwo) within %v relative", tt.d, tt.n, got, tt.p, relTol)
			}
		})
	}
}

// TestKSStatistic checks D on small hand-worked cases: against U(0, 1) the
// sample {0.1, 0.5, 0.9} has D = max(1/3 − 0.1, 0.5 − 1/3, 0.9 − 2/3,
// 1 − 0.9, …) = 0.2333…; against a point mass at 0.5, a sample of copies of
// 0.5 has D = 0 (ties and atoms handled), and one of 0.4 has D = 1.
func TestKSStatistic(t *testing.T) {
	const tol = 1e-15
	uniform := func(x float64) float64 { return math.Max(0, math.Min(1, x)) }
	atom := func(x float64) float64 {
		if x >= 0.5 {
			return 1
		}
		return 0
	}
	tests := []struct {
		name   string
		sample []float64
		cdf    func(float64) float64
		want   float64
	}{
		{"uniform three", []float64{0.1, 0.5, 0.9}, uniform, 0.9 - 2.0/3},
		{"uniform one", []float64{0.25}, uniform, 0.75},
		{"atom exact", []float64{0.5, 0.5, 0.5}, atom, 0},
		{"atom missed", []float64{0.4, 0.4}, atom, 1},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := KSStatistic(tt.sample, tt.cdf); math.Abs(got-tt.want) > tol {
				t.Errorf("D = %v, want %v", got, tt.want)
			}
		})
	}
}

// TestKSUniformLevel draws seeded uniform samples and checks that the test
// at α = 0.01 rejects about 1 % of them (binomial: 400 trials, expected 4;
// more than 14 rejections has probability < 1e-4 under a correct test).
func TestKSUniformLevel(t *testing.T) {
	r := rand.New(rand.NewPCG(1, 2))
	const trials, n = 400, 200
	rejected := 0
	x := make([]float64, n)
	for range trials {
		for i := range x {
			x[i] = r.Float64()
		}
		slices.Sort(x)
		if KSPValue(KSStatistic(x, func(v float64) float64 { return v }), n) < 0.01 {
			rejected++
		}
	}
	if rejected > 14 {
		t.Errorf("rejected %d of %d uniform samples at α = 0.01", rejected, trials)
	}
}
