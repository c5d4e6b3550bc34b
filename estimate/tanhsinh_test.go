package estimate

import (
	"math"
	"testing"
)

// TestTanhSinhClosedForms checks the quadrature against integrals known
// in closed form (elementary calculus; Γ(3/2) = √π/2), the kinds the
// τ-expectations meet: smooth, algebraic and logarithmic singularities at
// an end, a jump at a break point, and several components at once.
// tinyB is a variable, so that 1 + 1e-9 is rounded to float64 (as a
// constant it would be exact).
var tinyB = 1 + 1e-9

func TestTanhSinhClosedForms(t *testing.T) {
	const (
		relTol  = 1e-12 // asked of the integrator
		wantTol = 1e-10 // relative agreement demanded of the answer
	)
	cases := []struct {
		name   string
		f      func(x float64) float64
		a, b   float64
		breaks []float64
		want   float64
	}{
		{"polynomial x⁷", func(x float64) float64 { return math.Pow(x, 7) }, 0, 2, nil, 32},
		{"exp on a wide range", math.Exp, -3, 5, nil, math.Exp(5) - math.Exp(-3)},
		{"√(ln 1/u), a normal quantile's end", func(u float64) float64 { return math.Sqrt(-math.Log(u)) }, 0, 1, nil, math.Sqrt(math.Pi) / 2},
		{"u^{-1/2}, unbounded at 0", func(u float64) float64 { return 1 / math.Sqrt(u) }, 0, 1, nil, 2},
		{"u^5, a shape-0.2 quantile", func(u float64) float64 { return math.Pow(u, 5) }, 0, 1, nil, 1.0 / 6},
		{"(1−u)^{0.3}, an inner range closing", func(u float64) float64 { return math.Pow(1-u, 0.3) }, 0, 1, nil, 1 / 1.3},
		{"a jump at a break", func(x float64) float64 {
			if x < 0.37 {
				return 1
			}
			return 3
		}, 0, 1, []float64{0.37}, 0.37 + 3*0.63},
		// b − a of the floats themselves, not 1e-9.
		{"a tiny range", func(x float64) float64 { return x }, 1, tinyB, nil, (tinyB - 1) * (tinyB + 1) / 2},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			q := newTanhSinh(1, 1e-300, relTol)
			out := []float64{0}
			q.integrate(func(x float64, o []float64) { o[0] = tc.f(x) }, tc.a, tc.b, tc.breaks, out)
			if math.Abs(out[0]-tc.want) > wantTol*math.Abs(tc.want) {
				t.Errorf("got %.16g, want %.16g (rel err %.2g)", out[0], tc.want, math.Abs(out[0]-tc.want)/math.Abs(tc.want))
			}
		})
	}
	// Several components at once: ∫₀¹ T_j(2u−1) du = 1/(1−j²) for even j,
	// 0 for odd j (Chebyshev polynomials; Mason & Handscomb §2.4).
	const N = 12
	q := newTanhSinh(N, 1e-300, relTol)
	out := make([]float64, N)
	q.integrate(func(u float64, o []float64) {
		t := 2*u - 1
		for j := range o {
			o[j] = math.Cos(float64(j) * math.Acos(t))
		}
	}, 0, 1, nil, out)
	for j, v := range out {
		want := 0.0
		if j%2 == 0 {
			want = 1 / (1 - float64(j*j))
		}
		if math.Abs(v-want) > wantTol {
			t.Errorf("∫ T_%d: got %.16g, want %.16g", j, v, want)
		}
	}
}
