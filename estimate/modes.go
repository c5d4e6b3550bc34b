package estimate

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// mode is one affine map of the closed loop over a period (estimate/model.md §3):
// z' = F z + g + H ξ, with z = [x; u_{k−1}; xc] and ξ = [w; v].
type mode struct {
	F   *mat.Dense    // nz×nz
	G   *mat.VecDense // nz
	HXH *mat.SymDense // H Ξ Hᵀ, Ξ = blkdiag(W_d, V)
}

// loopMatrices holds what the modes are built from.
type loopMatrices struct {
	n, m, p, nc, nz int
	samp            *Sampled
	c               *mat.Dense // plant C, p×n
	ac, bc, cc, dc  *mat.Dense // controller; ac, bc, cc nil when nc = 0
	r               *mat.VecDense
	xi              *mat.SymDense // blkdiag(W_d, V)
	zeroPolicy      bool
}

// build assembles F, g and H Ξ Hᵀ for one mode (estimate/model.md §3), with
// e_k = r − C x_k − v_k and u_k = Cc xc_k + Dc e_k:
//
//	m0:    x' = Φx + Γ u + w           u' = u     xc' = xc
//	m1:    x' = Φx + Γ u + w           u' = u     xc' = Ac xc + Bc e
//	m2(τ): x' = Φx + Γ1 u + Γ0 u_k + w u' = u_k   xc' = Ac xc + Bc e
//
// For the zero-unless-fresh actuator the input in force at t_k is always
// zero (every command expires at the end of its period), so Γ and Γ1 drop
// out and u' = 0 in every mode: m0 and m1 give x' = Φx + w, m2(τ) gives
// x' = Φx + Γ0(τ) u_k + w.
//
// kind is 0, 1 or 2; g0 is Γ0(τ) for m2 (nil otherwise).
func (lm *loopMatrices) build(kind int, g0 *mat.Dense) mode {
	n, m, p, nc, nz := lm.n, lm.m, lm.p, lm.nc, lm.nz
	F := mat.NewDense(nz, nz, nil)
	G := mat.NewVecDense(nz, nil)
	H := mat.NewDense(nz, n+p, nil) // ξ = [w; v]
	ux, cx := n, n+m                // block offsets of u and xc in z
	phi, gam := lm.samp.Phi, lm.samp.Gamma

	// Plant noise enters x in every mode.
	for i := 0; i < n; i++ {
		H.Set(i, i, 1)
	}
	setBlock(F, 0, 0, phi, 1)
	switch kind {
	case 0, 1:
		if !lm.zeroPolicy {
			setBlock(F, 0, ux, gam, 1)
			for i := 0; i < m; i++ {
				F.Set(ux+i, ux+i, 1)
			}
		}
		if kind == 0 {
			for i := 0; i < nc; i++ {
				F.Set(cx+i, cx+i, 1)
			}
		}
	case 2:
		g1 := mat.NewDense(n, m, nil)
		g1.Sub(gam, g0)
		// u_k = Cc xc + Dc r − Dc C x − Dc v
		dcC := mat.NewDense(m, n, nil)
		dcC.Mul(lm.dc, lm.c)
		g0dcC := mat.NewDense(n, n, nil)
		g0dcC.Mul(g0, dcC)
		setBlock(F, 0, 0, g0dcC, -1)
		if !lm.zeroPolicy {
			setBlock(F, 0, ux, g1, 1)
			setBlock(F, ux, 0, dcC, -1)
		}
		dcr := mat.NewVecDense(m, nil)
		dcr.MulVec(lm.dc, lm.r)
		g0dcr := mat.NewVecDense(n, nil)
		g0dcr.MulVec(g0, dcr)
		g0dc := mat.NewDense(n, p, nil)
		g0dc.Mul(g0, lm.dc)
		for i := 0; i < n; i++ {
			G.SetVec(i, g0dcr.AtVec(i))
			for j := 0; j < p; j++ {
				H.Set(i, n+j, -g0dc.At(i, j))
			}
		}
		if !lm.zeroPolicy {
			for i := 0; i < m; i++ {
				G.SetVec(ux+i, dcr.AtVec(i))
				for j := 0; j < p; j++ {
					H.Set(ux+i, n+j, -lm.dc.At(i, j))
				}
			}
		}
		if nc > 0 {
			g0cc := mat.NewDense(n, nc, nil)
			g0cc.Mul(g0, lm.cc)
			setBlock(F, 0, cx, g0cc, 1)
			if !lm.zeroPolicy {
				setBlock(F, ux, cx, lm.cc, 1)
			}
		}
	}
	if kind >= 1 && nc > 0 {
		// xc' = Ac xc + Bc (r − C x − v)
		bcC := mat.NewDense(nc, n, nil)
		bcC.Mul(lm.bc, lm.c)
		setBlock(F, cx, 0, bcC, -1)
		setBlock(F, cx, cx, lm.ac, 1)
		bcr := mat.NewVecDense(nc, nil)
		bcr.MulVec(lm.bc, lm.r)
		for i := 0; i < nc; i++ {
			G.SetVec(cx+i, bcr.AtVec(i))
			for j := 0; j < p; j++ {
				H.Set(cx+i, n+j, -lm.bc.At(i, j))
			}
		}
	}
	hx := mat.NewDense(nz, n+p, nil)
	hx.Mul(H, lm.xi)
	full := mat.NewDense(nz, nz, nil)
	full.Mul(hx, H.T())
	hxh := mat.NewSymDense(nz, nil)
	for i := 0; i < nz; i++ {
		for j := i; j < nz; j++ {
			hxh.SetSym(i, j, (full.At(i, j)+full.At(j, i))/2)
		}
	}
	return mode{F: F, G: G, HXH: hxh}
}

func setBlock(dst *mat.Dense, r0, c0 int, src mat.Matrix, scale float64) {
	r, c := src.Dims()
	for i := 0; i < r; i++ {
		for j := 0; j < c; j++ {
			dst.Set(r0+i, c0+j, dst.At(r0+i, c0+j)+scale*src.At(i, j))
		}
	}
}

// chebDegree returns the polynomial degree at which Γ0(τ) is resolved on
// [c, h] to about 1e-13 of its size (the matrix exponential's own rounding,
// about 1e-16 of its unit blocks, sets the floor): the smallest degree d past which its
// Chebyshev coefficients (on 2d points) stay negligible. The rule over τ
// uses twice that plus a margin, since the moment operators hold products
// of two Γ0 entries.
// chebTol is the relative size of Chebyshev coefficients of Γ0 taken as
// resolved.
const chebTol = 1e-13

func chebDegree(s *Sampled, c float64) int {
	h := s.H
	n, m := s.B.Dims()
	scale := 1e-300
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			scale = math.Max(scale, math.Abs(s.Gamma.At(i, j)))
		}
	}
	for N := 8; ; N *= 2 {
		coef := make([][]float64, N) // coef[j] over entries
		vals := make([][]float64, N)
		for k := 0; k < N; k++ {
			tk := math.Cos(math.Pi * (float64(k) + 0.5) / float64(N))
			tau := c + (tk+1)*(h-c)/2
			g0, _ := s.Split(tau)
			vals[k] = append([]float64(nil), g0.RawMatrix().Data...)
		}
		for j := 0; j < N; j++ {
			coef[j] = make([]float64, len(vals[0]))
			for k := 0; k < N; k++ {
				tk := math.Cos(math.Pi * (float64(k) + 0.5) / float64(N))
				tj := math.Cos(float64(j) * math.Acos(tk))
				for e := range vals[k] {
					coef[j][e] += 2 / float64(N) * vals[k][e] * tj
				}
			}
		}
		// The last degree with a coefficient above the tolerance.
		last := 0
		for j := 0; j < N; j++ {
			for _, v := range coef[j] {
				if math.Abs(v) > chebTol*scale {
					last = j
				}
			}
		}
		if last < N/2 || N >= 256 {
			return 2*last + 6
		}
	}
}
