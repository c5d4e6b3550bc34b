package simstep

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"

	"rigwire/profiles"
)

// TestFactor checks Factor against its definition, L Lᵀ = cov, on a
// positive definite covariance, a singular one (noise on one state of two,
// where a Cholesky factor fails), a rank-one one with correlation, zero,
// and a slightly asymmetric input (only its symmetric part counts).
func TestFactor(t *testing.T) {
	const tol = 1e-12 // relative to the largest entry; eigendecomposition rounding
	cases := []struct {
		name string
		cov  []float64 // 2×2, row-major
		want []float64 // L Lᵀ
	}{
		{"positive definite", []float64{2, 0.5, 0.5, 1}, []float64{2, 0.5, 0.5, 1}},
		{"noise on the second state only", []float64{0, 0, 0, 0.04}, []float64{0, 0, 0, 0.04}},
		{"rank one, correlated", []float64{1, 2, 2, 4}, []float64{1, 2, 2, 4}},
		{"zero", []float64{0, 0, 0, 0}, []float64{0, 0, 0, 0}},
		{"asymmetric rounding", []float64{1, 0.3 + 1e-15, 0.3 - 1e-15, 1}, []float64{1, 0.3, 0.3, 1}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			l := Factor(mat.NewDense(2, 2, tc.cov))
			var llt mat.Dense
			llt.Mul(l, l.T())
			scale := 1.0
			for _, v := range tc.want {
				scale = math.Max(scale, math.Abs(v))
			}
			for i := 0; i < 2; i++ {
				for j := 0; j < 2; j++ {
					if d := math.Abs(llt.At(i, j) - tc.want[2*i+j]); d > tol*scale {
						t.Errorf("(L Lᵀ)[%d][%d] = %.17g, want %.17g", i, j, llt.At(i, j), tc.want[2*i+j])
					}
				}
			}
		})
	}
	if Factor(nil) != nil {
		t.Error("Factor(nil) is not nil")
	}
}

// TestController checks one update of a dynamic controller, worked by
// hand: Ac = [[0.5]], Bc = [[1]], Cc = [[2]], Dc = [[3]], xc = 0.25,
// e = 0.1 give u = 2·0.25 + 3·0.1 = 0.8 and xc' = 0.5·0.25 + 0.1 = 0.225;
// a static controller (nil Ac, Bc, Cc) gives u = Dc e and has no state.
func TestController(t *testing.T) {
	const tol = 1e-15
	d := func(v float64) *mat.Dense { return mat.NewDense(1, 1, []float64{v}) }
	cases := []struct {
		name   string
		c      profiles.Controller
		xc     []float64
		e      float64
		wantU  float64
		wantXC []float64
	}{
		{"dynamic", profiles.Controller{A: d(0.5), B: d(1), C: d(2), D: d(3)}, []float64{0.25}, 0.1, 0.8, []float64{0.225}},
		{"static", profiles.Controller{D: d(-1.5)}, nil, 0.4, -0.6, nil},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			u := []float64{math.NaN()}
			Controller(tc.c, tc.xc, make([]float64, len(tc.xc)), []float64{tc.e}, u)
			if math.Abs(u[0]-tc.wantU) > tol {
				t.Errorf("u = %.17g, want %.17g", u[0], tc.wantU)
			}
			for i := range tc.wantXC {
				if math.Abs(tc.xc[i]-tc.wantXC[i]) > tol {
					t.Errorf("xc[%d] = %.17g, want %.17g", i, tc.xc[i], tc.wantXC[i])
				}
			}
		})
	}
}

// TestNoiseStream checks that a nil factor gives zeros and takes the same
// draws from the stream as a real one, so a later draw does not depend on
// whether a noise was zero.
func TestNoiseStream(t *testing.T) {
	z := make([]float64, 2)
	out := []float64{7, 7}
	a, b := rand.New(rand.NewPCG(1, 2)), rand.New(rand.NewPCG(1, 2))
	Noise(out, nil, a, z)
	Noise(make([]float64, 2), mat.NewDense(2, 2, []float64{1, 0, 0, 1}), b, z)
	if out[0] != 0 || out[1] != 0 {
		t.Errorf("nil factor gave %v, want zeros", out)
	}
	if x, y := a.Uint64(), b.Uint64(); x != y {
		t.Errorf("streams differ after the draw: %d vs %d", x, y)
	}
}
