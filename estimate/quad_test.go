package estimate

import (
	"math"
	"testing"
)

// TestKronrodExactness checks the 7–15 Gauss–Kronrod table written from
// QUADPACK's qk15: the Kronrod rule integrates xᵏ exactly on [−1, 1] for
// k ≤ 22 (3·7 + 1) and the Gauss rule for k ≤ 13 (2·7 − 1); these are the
// defining properties of the pair (Piessens et al. 1983, §2.2.1).
func TestKronrodExactness(t *testing.T) {
	const exactTol = 1e-15
	exact := func(k int) float64 {
		if k%2 == 1 {
			return 0
		}
		return 2 / float64(k+1)
	}
	for k := 0; k <= 22; k++ {
		kr := kronrodW[7] * math.Pow(0, float64(k))
		g := gaussW[3] * math.Pow(0, float64(k))
		for i := 0; i < 7; i++ {
			x := kronrodX[i]
			v := math.Pow(x, float64(k)) + math.Pow(-x, float64(k))
			kr += kronrodW[i] * v
			if i%2 == 1 {
				g += gaussW[i/2] * v
			}
		}
		if math.Abs(kr-exact(k)) > exactTol {
			t.Errorf("Kronrod ∫x^%d = %.17g, want %.17g", k, kr, exact(k))
		}
		if k <= 13 && math.Abs(g-exact(k)) > exactTol {
			t.Errorf("Gauss ∫x^%d = %.17g, want %.17g", k, g, exact(k))
		}
	}
}

// TestIntegrate checks the adaptive integrator on integrals with known
// values, including a jump (split at a break point), an integrable
// endpoint singularity and a vector integrand.
func TestIntegrate(t *testing.T) {
	const integTol = 1e-11
	cases := []struct {
		name   string
		f      func(x float64) float64
		a, b   float64
		breaks []float64
		want   float64
		source string
	}{
		{"exp", math.Exp, 0, 1, nil, math.E - 1, "calculus"},
		{"1/sqrt", func(x float64) float64 { return 1 / math.Sqrt(x) }, 0, 1, nil, 2, "calculus"},
		{"step", func(x float64) float64 {
			if x < 0.3 {
				return 1
			}
			return 3
		}, 0, 1, []float64{0.3}, 0.3 + 3*0.7, "calculus"},
		{"step unsplit", func(x float64) float64 {
			if x < 0.3 {
				return 1
			}
			return 3
		}, 0, 1, nil, 0.3 + 3*0.7, "calculus"},
		{"cos 20x", func(x float64) float64 { return math.Cos(20 * x) }, 0, math.Pi, nil, 0, "calculus"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			q := newIntegrator(2)
			out := make([]float64, 2)
			q.integrate(func(x float64, o []float64) { o[0] = tc.f(x); o[1] = 2 * tc.f(x) }, tc.a, tc.b, tc.breaks, out)
			if math.Abs(out[0]-tc.want) > integTol*math.Max(1, math.Abs(tc.want)) || math.Abs(out[1]-2*tc.want) > 2*integTol*math.Max(1, math.Abs(tc.want)) {
				t.Errorf("got %.15g, %.15g; want %.15g (%s)", out[0], out[1], tc.want, tc.source)
			}
		})
	}
}
