package estimate

import (
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/mat"
)

// Arnoldi's process for the radius search.
const (
	// arnoldiSteps bounds the Krylov space's dimension.
	arnoldiSteps = 30
	// arnoldiTol is the relative residual at which the dominant Ritz
	// value is taken as converged.
	arnoldiTol = 1e-14
)

// arnoldiDominant estimates the largest real eigenvalue of a linear map
// on ℝⁿ (apply sets dst = A src) from Arnoldi's process started at start,
// with classical Gram–Schmidt applied twice for orthogonality (Y. Saad,
// Numerical Methods for Large Eigenvalue Problems, 2nd ed., SIAM 2011,
// §6.2–6.3 — from memory). It stops when that Ritz value θ's residual
// ‖Ax − θx‖ = h_{k+1,k}·|e_kᵀy|/‖y‖ (y its eigenvector of the Hessenberg
// matrix) falls below arnoldiTol·|θ|, or after m steps; res is the last
// residual over |θ|. A non-normal map may put θ further from the
// eigenvalue than res says: the radius search uses θ only to place the
// tests that certify ρ's bracket. ok is false when no Ritz value is real.
func arnoldiDominant(apply func(dst, src []float64), start []float64, m int) (theta, res float64, ok bool) {
	n := len(start)
	m = min(m, n)
	basis := make([]float64, (m+1)*n) // row j: the j-th basis vector
	h := mat.NewDense(m+1, m, nil)
	coef := make([]float64, m+1)
	v0 := blas64.Vector{N: n, Inc: 1, Data: basis[:n]}
	copy(v0.Data, start)
	nrm := blas64.Nrm2(v0)
	if !(nrm > 0) || math.IsInf(nrm, 0) {
		return 0, 0, false
	}
	blas64.Scal(1/nrm, v0)
	var eig mat.Eigen
	for j := 0; j < m; j++ {
		w := blas64.Vector{N: n, Inc: 1, Data: basis[(j+1)*n : (j+2)*n]}
		apply(w.Data, basis[j*n:(j+1)*n])
		q := blas64.General{Rows: j + 1, Cols: n, Stride: n, Data: basis[:(j+1)*n]}
		c := blas64.Vector{N: j + 1, Inc: 1, Data: coef[:j+1]}
		for range 2 {
			blas64.Gemv(blas.NoTrans, 1, q, w, 0, c) // c = Qᵀw (the basis in q's rows)
			blas64.Gemv(blas.Trans, -1, q, c, 1, w)  // w −= Q c
			for i := 0; i <= j; i++ {
				h.Set(i, j, h.At(i, j)+coef[i])
			}
		}
		beta := blas64.Nrm2(w)
		if math.IsNaN(beta) || math.IsInf(beta, 0) {
			return 0, 0, false
		}
		h.Set(j+1, j, beta)
		k := j + 1
		if (k < 4 || (k < 12 && k%2 == 1) || (k >= 12 && k%3 != 0)) && k < m && beta > 0 {
			// The Ritz values are checked at k = 4, 6, 8, 10, then every
			// third step: each check factorises the Hessenberg matrix.
			blas64.Scal(1/beta, w)
			continue
		}
		if !eig.Factorize(h.Slice(0, k, 0, k), mat.EigenRight) {
			return 0, 0, false
		}
		vals := eig.Values(nil)
		best := -1
		for i, v := range vals {
			if imag(v) == 0 && (best < 0 || real(v) > real(vals[best])) {
				best = i
			}
		}
		if best < 0 {
			if beta > 0 && k < m {
				blas64.Scal(1/beta, w)
				continue
			}
			return 0, 0, false
		}
		theta = real(vals[best])
		var vecs mat.CDense
		eig.VectorsTo(&vecs)
		ny, last := 0.0, 0.0
		for i := 0; i < k; i++ {
			y := real(vecs.At(i, best))
			ny += y * y
			last = y
		}
		res = beta * math.Abs(last) / math.Sqrt(ny) / math.Abs(theta)
		if !(res > arnoldiTol) || k == m {
			return theta, res, !math.IsNaN(theta)
		}
		blas64.Scal(1/beta, w)
	}
	return theta, res, false
}

// shiftInvertEstimate estimates ρ with the factorisation of the last test,
// which must have found its s above ρ: Arnoldi's process on
// (I − L/s)⁻¹ from that test's solution X_s. The inverse's dominant
// eigenvalue is μ = s/(s − ρ) (for s > ρ, every other eigenvalue λ of L
// has |s − λ| ≥ s − Re λ ≥ s − ρ), and the map spreads the eigenvalues of
// L near ρ apart, so a few dozen steps find it to rounding where inverse
// iteration crawls at the ratio (s − ρ)/(s − λ₂) when a second eigenvalue
// λ₂ lies close to ρ. It returns ρ̂ = s(1 − 1/μ̂) and a scale of its
// error; ok is false when the process found no real Ritz value.
func (ly *lyapunov) shiftInvertEstimate() (est, errEst float64, ok bool) {
	s := ly.luAt
	mu, res, ok := arnoldiDominant(func(dst, src []float64) { ly.lu.solve(dst, src) }, ly.x.RawVector().Data, arnoldiSteps)
	if !ok || !(mu > 1) {
		return 0, 0, false
	}
	// dρ = s dμ/μ², with |dμ| ≈ res·μ.
	return s - s/mu, s * res / mu, true
}
