package rig_test

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"

	"rigwire/emulate/rig"
	"rigwire/estimate"
	"rigwire/profiles"
)

func plantOf(a, b, c, w, v [][]float64) profiles.Plant {
	d := func(x [][]float64) *mat.Dense {
		m := mat.NewDense(len(x), len(x[0]), nil)
		for i := range x {
			for j := range x[i] {
				m.Set(i, j, x[i][j])
			}
		}
		return m
	}
	return profiles.Plant{A: d(a), B: d(b), C: d(c), W: d(w), V: d(v)}
}

// TestRigPlantFirstOrderStep checks the simulated plant, noise-free, against
// the closed-form solution of dx/dt = a x + b u with u held over δ:
//
//	x(δ) = e^{aδ} x₀ + (e^{aδ} − 1)/a · b u     (a ≠ 0),   x₀ + b u δ   (a = 0)
//
// (Åström–Wittenmark, Computer-Controlled Systems, 3rd ed., §2.3, the
// zero-order-hold sampling of a first-order system). The step is taken in
// several sub-intervals, as the node does when a command arrives within a
// period, and in one.
func TestRigPlantFirstOrderStep(t *testing.T) {
	const tol = 1e-12 // relative; the closed form is evaluated with math.Expm1
	cases := []struct {
		name  string
		a, b  float64
		x0, u float64
		subNs []int64 // sub-intervals, nanoseconds
	}{
		{"stable lag, one period", -2.5, 5, 0.3, 0.7, []int64{20e6}},
		{"stable lag, split 7.3 ms + 12.7 ms", -2.5, 5, 0.3, 0.7, []int64{7_300_000, 12_700_000}},
		{"unstable pole, three pieces", 1.5, 2, -0.4, 1.1, []int64{1e6, 3_250_000, 5_750_000}},
		{"free integrator", 0, 3, 0.2, -0.5, []int64{4e6, 6e6}},
		{"fast pole, long step", -40, 1, 1, 0, []int64{100e6}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			pl := plantOf([][]float64{{tc.a}}, [][]float64{{tc.b}}, [][]float64{{1}}, [][]float64{{0}}, [][]float64{{0}})
			p := rig.NewPlant(pl, rand.New(rand.NewPCG(1, 2)))
			p.SetState([]float64{tc.x0})
			total := int64(0)
			for _, d := range tc.subNs {
				p.Advance(d, []float64{tc.u})
				total += d
			}
			delta := float64(total) * 1e-9
			want := tc.x0 + tc.b*tc.u*delta
			if tc.a != 0 {
				want = math.Exp(tc.a*delta)*tc.x0 + math.Expm1(tc.a*delta)/tc.a*tc.b*tc.u
			}
			got := p.State()[0]
			if math.Abs(got-want) > tol*math.Max(1, math.Abs(want)) {
				t.Errorf("x(%gs) = %.17g, want %.17g (closed form)", delta, got, want)
			}
		})
	}
}

// TestRigPlantInputChangeMidPeriod checks that a command applied τ into a
// period gives x(t_{k+1}) = Φ x + Γ1(τ) u_old + Γ0(τ) u_new, the sampled
// model with a fractional input delay (Åström–Wittenmark, 3rd ed., §2.3;
// estimate/model.md §3), with Φ, Γ0, Γ1 from estimate.Discretize and Split.
func TestRigPlantInputChangeMidPeriod(t *testing.T) {
	const tol = 1e-12
	// The pick arm's joint: position and speed, a motor with friction.
	pl := plantOf([][]float64{{0, 1}, {0, -2}}, [][]float64{{0}, {3}}, [][]float64{{1, 0}},
		[][]float64{{0, 0}, {0, 0}}, [][]float64{{0}})
	const hNs = 10_000_000
	x0 := []float64{0.12, -0.7}
	uOld, uNew := []float64{0.4}, []float64{-1.3}
	for _, tauNs := range []int64{0, 1, 250_000, 3_141_593, 9_999_000, hNs} {
		p := rig.NewPlant(pl, rand.New(rand.NewPCG(3, 4)))
		p.SetState(x0)
		p.Advance(tauNs, uOld)
		p.Advance(hNs-tauNs, uNew)
		got := p.State()

		s := estimate.Discretize(pl.A, pl.B, nil, hNs*1e-9)
		g0, g1 := s.Split(float64(tauNs) * 1e-9)
		var want, tmp mat.VecDense
		want.MulVec(s.Phi, mat.NewVecDense(2, x0))
		tmp.MulVec(g1, mat.NewVecDense(1, uOld))
		want.AddVec(&want, &tmp)
		tmp.MulVec(g0, mat.NewVecDense(1, uNew))
		want.AddVec(&want, &tmp)
		for i := range got {
			if d := math.Abs(got[i] - want.AtVec(i)); d > tol {
				t.Errorf("τ = %dns: x[%d] = %.17g, want %.17g (Φx + Γ1 u_old + Γ0 u_new)", tauNs, i, got[i], want.AtVec(i))
			}
		}
	}
}

// TestRigPlantProcessNoise checks the process noise over a period split in
// two sub-intervals against the covariance of the sampled noise: for a
// scalar plant the closed form W_d(h) = W (e^{2ah} − 1)/(2a)
// (Åström–Wittenmark, 3rd ed., §10.2, the sampled Wiener process), for a
// two-state plant estimate.Discretize's Van Loan W_d. Each trial starts
// at x = 0 with u = 0, so x(h) ~ N(0, W_d(h)) exactly.
//
// The sample covariance of N Gaussian draws has entries with standard error
// sqrt((σ_ii σ_jj + σ_ij²)/N) (the Wishart law; Anderson, An Introduction
// to Multivariate Statistical Analysis, §3.3 — from memory); the test
// allows 4.5 of them (two-sided level about 7e-6 per entry). The sensor
// noise is checked the same way against V.
func TestRigPlantProcessNoise(t *testing.T) {
	const (
		trials = 40000
		zTol   = 4.5
	)
	cases := []struct {
		name  string
		plant profiles.Plant
		hNs   int64
		split int64
		want  func(pl profiles.Plant, h float64) *mat.Dense
	}{
		{"scalar lag, closed form", plantOf([][]float64{{-2.5}}, [][]float64{{5}}, [][]float64{{1}}, [][]float64{{0.01}}, [][]float64{{1e-4}}),
			20_000_000, 6_500_000, func(pl profiles.Plant, h float64) *mat.Dense {
				a, w := pl.A.At(0, 0), pl.W.At(0, 0)
				return mat.NewDense(1, 1, []float64{w * math.Expm1(2*a*h) / (2 * a)})
			}},
		{"two-state arm, Van Loan", plantOf([][]float64{{0, 1}, {0, -2}}, [][]float64{{0}, {3}}, [][]float64{{1, 0}}, [][]float64{{0, 0}, {0, 0.04}}, [][]float64{{1e-6}}),
			10_000_000, 2_700_000, func(pl profiles.Plant, h float64) *mat.Dense {
				return estimate.Discretize(pl.A, pl.B, pl.W, h).Wd
			}},
	}
	for ci, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			n, m := tc.plant.B.Dims()
			want := tc.want(tc.plant, float64(tc.hNs)*1e-9)
			p := rig.NewPlant(tc.plant, rand.New(rand.NewPCG(uint64(ci)+10, 99)))
			zero := make([]float64, n)
			u := make([]float64, m)
			y := make([]float64, 1)
			sum := mat.NewDense(n, n, nil)
			var yy float64
			for range trials {
				p.SetState(zero)
				p.Advance(tc.split, u)
				p.Advance(tc.hNs-tc.split, u)
				x := p.State()
				for i := 0; i < n; i++ {
					for j := 0; j < n; j++ {
						sum.Set(i, j, sum.At(i, j)+x[i]*x[j])
					}
				}
				p.SetState(zero)
				p.Sample(y)
				yy += y[0] * y[0]
			}
			for i := 0; i < n; i++ {
				for j := 0; j < n; j++ {
					got := sum.At(i, j) / trials
					w := want.At(i, j)
					se := math.Sqrt((want.At(i, i)*want.At(j, j) + w*w) / trials)
					if se == 0 {
						if got != 0 {
							t.Errorf("cov[%d][%d] = %g, want 0", i, j, got)
						}
						continue
					}
					if z := (got - w) / se; math.Abs(z) > zTol {
						t.Errorf("cov[%d][%d] = %.6g, want %.6g (z = %.2f, SE %.3g)", i, j, got, w, z, se)
					}
				}
			}
			v := tc.plant.V.At(0, 0)
			se := math.Sqrt(2 * v * v / trials)
			if z := (yy/trials - v) / se; math.Abs(z) > zTol {
				t.Errorf("sensor noise variance %.6g, want V = %.6g (z = %.2f)", yy/trials, v, z)
			}
		})
	}
}
