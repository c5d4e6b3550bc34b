package simstep

import (
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/mat"

	"rigwire/profiles"
)

// Factor returns L with L Lᵀ = cov for a symmetric positive semidefinite
// cov (nil: no noise, a nil L), from its eigendecomposition cov = U Λ Uᵀ,
// L = U Λ^{1/2}, negative rounding clipped to zero. A Cholesky factor
// would fail on the singular covariances that noise on only some states
// gives. Only the symmetric part of cov is used.
func Factor(cov *mat.Dense) *mat.Dense {
	if cov == nil {
		return nil
	}
	n, _ := cov.Dims()
	l := mat.NewDense(n, n, nil)
	sym := mat.NewSymDense(n, nil)
	zero := true
	for i := 0; i < n; i++ {
		for j := i; j < n; j++ {
			v := (cov.At(i, j) + cov.At(j, i)) / 2
			sym.SetSym(i, j, v)
			zero = zero && v == 0
		}
	}
	if zero {
		return l
	}
	var eig mat.EigenSym
	if !eig.Factorize(sym, true) {
		return l
	}
	var u mat.Dense
	eig.VectorsTo(&u)
	vals := eig.Values(nil)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			l.Set(i, j, u.At(i, j)*math.Sqrt(math.Max(0, vals[j])))
		}
	}
	return l
}

// MulVec sets out to a x, or adds a x to out when add is set. A nil a
// (an empty block, such as a static controller's state matrices) leaves
// out as it is.
func MulVec(out []float64, a *mat.Dense, x []float64, add bool) {
	if a == nil {
		return
	}
	r, c := a.Dims()
	for i := 0; i < r; i++ {
		s := 0.0
		for j := 0; j < c; j++ {
			s += a.At(i, j) * x[j]
		}
		if add {
			out[i] += s
		} else {
			out[i] = s
		}
	}
}

// Noise sets out to a draw of N(0, L Lᵀ): out = L z with z a fresh
// standard normal vector of len(out) entries taken from rng, in order,
// into the scratch z. A nil L gives zeros (the draws are still taken, so
// the stream does not depend on it).
func Noise(out []float64, l *mat.Dense, rng *rand.Rand, z []float64) {
	z = z[:len(out)]
	for i := range z {
		z[i] = rng.NormFloat64()
	}
	if l == nil {
		clear(out)
		return
	}
	MulVec(out, l, z, false)
}

// Plant sets xn to the plant's state after one step with the input
// terms still to come:
//
//	xn = Φ x + w,   w ~ N(0, W_d),   W_d = L Lᵀ
//
// (the zero-order-hold solution of the linear SDE over the step,
// Åström–Wittenmark, Computer-Controlled Systems, 3rd ed., §2.3 and
// §10.2). The caller adds Γ u for the input held over the step, or
// Γ1(τ) u_old + Γ0(τ) u_new when it changed at τ, with MulVec. z is
// scratch of at least len(xn) entries; xn must not be x.
func Plant(xn []float64, phi *mat.Dense, x []float64, l *mat.Dense, rng *rand.Rand, z []float64) {
	Noise(xn, l, rng, z)
	MulVec(xn, phi, x, true)
}

// Controller runs the loop's discrete controller on one error e
// (estimate/model.md §1 step 2):
//
//	u = Cc xc + Dc e,   xc ← Ac xc + Bc e.
//
// next is scratch of len(xc) entries. A static controller (nil Ac, Bc,
// Cc, no state) gives u = Dc e.
func Controller(c profiles.Controller, xc, next, e, u []float64) {
	MulVec(u, c.D, e, false)
	MulVec(u, c.C, xc, true)
	MulVec(next, c.A, xc, false)
	MulVec(next, c.B, e, true)
	copy(xc, next)
}
