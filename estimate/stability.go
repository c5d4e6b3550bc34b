package estimate

import (
	"math"
	"math/cmplx"

	"gonum.org/v1/gonum/mat"
)

// SpectralRadius returns ρ of the second-moment operator (MODEL.md §4):
// the loop is mean-square stable iff it is below 1 (Costa–Fragoso–Marques
// 2005, Theorem 3.9 — from memory: MSS ⇔ r_σ(𝒯) < 1). It is the largest
// eigenvalue modulus of the operator's matrix on svec coordinates, from
// gonum's nonsymmetric eigensolver; should that fail to converge, it is
// found by bisection on the Lyapunov test below.
func (md *Model) SpectralRadius() float64 {
	big := md.SecondMomentOperator()
	var eig mat.Eigen
	if eig.Factorize(big, mat.EigenNone) {
		rho := 0.0
		for _, v := range eig.Values(nil) {
			rho = math.Max(rho, cmplx.Abs(v))
		}
		return rho
	}
	return radiusByBisection(big, md.lm.nz, len(md.States))
}

// MeanSquareStable reports whether the loop is mean-square stable, by the
// Lyapunov test of Costa–Fragoso–Marques 2005, Theorem 3.9 (from memory):
// ρ(ℒ) < 1 iff the solution X of X − ℒ(X) = I (I in every joint state) is
// positive definite in every state. One LU solve and N Cholesky
// factorizations, far cheaper than the eigenvalues, so the loss-margin
// scan uses it.
func (md *Model) MeanSquareStable() bool {
	return lyapunovTest(md.SecondMomentOperator(), md.lm.nz, len(md.States), 1)
}

// lyapunovTest reports whether ρ(op) < s: it solves X − op(X)/s = I and
// checks that every block of X is positive definite.
func lyapunovTest(op *mat.Dense, nz, states int, s float64) bool {
	d := nz * (nz + 1) / 2
	var a mat.Dense
	a.Scale(-1/s, op)
	n, _ := a.Dims()
	for i := 0; i < n; i++ {
		a.Set(i, i, a.At(i, i)+1)
	}
	b := mat.NewVecDense(n, nil)
	for j := 0; j < states; j++ {
		for k := 0; k < nz; k++ {
			b.SetVec(j*d+svecIndex(nz, k, k), 1)
		}
	}
	var lu mat.LU
	lu.Factorize(&a)
	if lu.Det() == 0 {
		return false
	}
	var x mat.VecDense
	if err := lu.SolveVecTo(&x, false, b); err != nil {
		return false
	}
	for j := 0; j < states; j++ {
		blk := unsvec(x.RawVector().Data[j*d:(j+1)*d], nz)
		var ch mat.Cholesky
		if !ch.Factorize(blk) {
			return false
		}
		for _, v := range x.RawVector().Data[j*d : (j+1)*d] {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return false
			}
		}
	}
	return true
}

// radiusByBisection finds ρ(op) to about 1e-12 relative by bisection on
// lyapunovTest(op, s); the upper start is the max absolute row sum.
func radiusByBisection(op *mat.Dense, nz, states int) float64 {
	hi := mat.Norm(op, math.Inf(1)) * (1 + 1e-12)
	if hi == 0 {
		return 0
	}
	lo := 0.0
	for hi-lo > 1e-12*hi {
		mid := (lo + hi) / 2
		if lyapunovTest(op, nz, states, mid) {
			hi = mid
		} else {
			lo = mid
		}
	}
	return hi
}

// Loss-margin search parameters (MODEL.md §5–§6).
const (
	marginScanStep  = 0.01 // grid step of the scan over q
	marginTolerance = 1e-4 // bisection stops when the bracket is this narrow
)

// LossMargin returns the smallest extra loss q ∈ [0, 1] at which the loop
// is no longer mean-square stable (MODEL.md §5), 1 when it stays stable
// for every q < 1, 0 when it is not stable as it is. ρ(q) need not be
// monotone (MODEL.md §6), so q is scanned on a grid of step 0.01 from 0
// and the first grid interval where stability is lost is bisected to
// 1e-4; the value returned is the bracket's upper end (unstable side).
// The extra loss only rescales the mode probabilities, so the modes are
// reused. The model's own extra loss is restored on return.
func (md *Model) LossMargin() float64 {
	saved := md.opts.ExtraLoss
	defer md.setLoss(saved)
	base := saved
	stableAt := func(q float64) bool {
		// Compose the model's extra loss with q: 1 − (1−q0)(1−q).
		md.setLoss(1 - (1-base)*(1-q))
		return md.MeanSquareStable()
	}
	if !stableAt(0) {
		return 0
	}
	prev := 0.0
	steps := int(math.Round(1 / marginScanStep))
	for k := 1; k <= steps; k++ {
		q := float64(k) * marginScanStep
		if k == steps {
			q = 1 - marginTolerance/2 // q = 1 itself never converges (MODEL.md §6)
		}
		if stableAt(q) {
			prev = q
			continue
		}
		lo, hi := prev, q
		for hi-lo > marginTolerance/2 {
			mid := (lo + hi) / 2
			if stableAt(mid) {
				lo = mid
			} else {
				hi = mid
			}
		}
		return hi
	}
	return 1
}
