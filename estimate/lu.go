package estimate

import (
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack/lapack64"
)

// denseLU is the LU factorisation with partial pivoting of a square
// matrix, factorised in place (LAPACK's Getrf) and solved one right-hand
// side at a time by two triangular solves (BLAS Trsv). mat.LU solves a
// vector as an n×1 matrix (Trsm), one scalar update per entry, about five
// times slower at the sizes of the second-moment operator, and always
// estimates the condition number (Gecon), which the radius tests do not
// need: they judge their solutions by iterative refinement.
type denseLU struct {
	a    blas64.General // L (unit lower) and U (upper) in place
	ipiv []int
}

// factorize factorises a (n×n, row-major, overwritten by its factors) and
// reports whether U is nonsingular with finite entries on its diagonal.
func (f *denseLU) factorize(a blas64.General) bool {
	f.a = a
	if cap(f.ipiv) < a.Rows {
		f.ipiv = make([]int, a.Rows)
	}
	f.ipiv = f.ipiv[:a.Rows]
	if !lapack64.Getrf(a, f.ipiv) {
		return false
	}
	for i := range a.Rows {
		if d := a.Data[i*a.Stride+i]; math.IsNaN(d) || math.IsInf(d, 0) {
			return false
		}
	}
	return true
}

// solve sets x = A⁻¹ b (x and b may be the same slice).
func (f *denseLU) solve(x, b []float64) {
	if &x[0] != &b[0] {
		copy(x, b)
	}
	for i, p := range f.ipiv {
		if p != i {
			x[i], x[p] = x[p], x[i]
		}
	}
	n := f.a.Rows
	v := blas64.Vector{N: n, Inc: 1, Data: x}
	blas64.Trsv(blas.NoTrans, blas64.Triangular{Uplo: blas.Lower, Diag: blas.Unit, N: n, Stride: f.a.Stride, Data: f.a.Data}, v)
	blas64.Trsv(blas.NoTrans, blas64.Triangular{Uplo: blas.Upper, Diag: blas.NonUnit, N: n, Stride: f.a.Stride, Data: f.a.Data}, v)
}
