package estimate

import (
	"gonum.org/v1/gonum/mat"
)

// Symmetric matrices as vectors: svec(X) lists the upper triangle row by
// row, X_00, X_01, …, X_0(n−1), X_11, …, each off-diagonal entry once.
// The second-moment operator maps symmetric matrices to symmetric
// matrices, so it is represented on this n(n+1)/2-dimensional space; its
// spectral radius is that of E[F ⊗ F] on all n×n matrices (it is a
// positive map, whose spectral radius is attained on the positive
// semidefinite cone: Costa–Fragoso–Marques 2005, §2.3 and §3.3).

// svecIndex is the position of X_ab (a ≤ b) in svec(X) for n×n X.
func svecIndex(n, a, b int) int {
	if a > b {
		a, b = b, a
	}
	return a*n - a*(a-1)/2 + (b - a)
}

func svec(x mat.Matrix, out []float64) {
	n, _ := x.Dims()
	k := 0
	for a := 0; a < n; a++ {
		for b := a; b < n; b++ {
			out[k] = x.At(a, b)
			k++
		}
	}
}

func unsvec(v []float64, n int) *mat.SymDense {
	s := mat.NewSymDense(n, nil)
	k := 0
	for a := 0; a < n; a++ {
		for b := a; b < n; b++ {
			s.SetSym(a, b, v[k])
			k++
		}
	}
	return s
}

// addSymOp adds w times the matrix of X ↦ F X Fᵀ on svec coordinates to
// op: (F X Fᵀ)_ab = Σ_cd F_ac X_cd F_bd, and with X_cd = X_dc stored once,
// the coefficient of X_cd is F_ac F_bd + F_ad F_bc for c < d and F_ac F_bc
// for c = d.
func addSymOp(op *mat.Dense, f *mat.Dense, w float64) {
	if w == 0 {
		return
	}
	n, _ := f.Dims()
	raw := f.RawMatrix()
	o := op.RawMatrix()
	row := 0
	for a := 0; a < n; a++ {
		fa := raw.Data[a*raw.Stride : a*raw.Stride+n]
		for b := a; b < n; b++ {
			fb := raw.Data[b*raw.Stride : b*raw.Stride+n]
			dst := o.Data[row*o.Stride : row*o.Stride+o.Cols]
			col := 0
			for c := 0; c < n; c++ {
				fac, fbc := w*fa[c], fb[c]
				dst[col] += fac * fbc
				col++
				for d := c + 1; d < n; d++ {
					dst[col] += fac*fb[d] + w*fa[d]*fbc
					col++
				}
			}
			row++
		}
	}
}
