package estimate

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// The moment recursions of a Markov jump linear system (estimate/model.md §4;
// O. L. V. Costa, M. D. Fragoso, R. P. Marques, Discrete-Time Markov Jump
// Linear Systems, Springer 2005, §3.2, eqs. (3.3)–(3.4) in their notation),
// with q_i = E[z 1{θ=i}], Q_i = E[z zᵀ 1{θ=i}], π_i = P(θ = i) and E_i
// the expectation over the modes of state i:
//
//	q_j' = Σ_i P_ij E_i[F q_i + π_i g]
//	Q_j' = Σ_i P_ij E_i[F Q_i Fᵀ + F q_i gᵀ + g q_iᵀ Fᵀ + π_i (g gᵀ + H Ξ Hᵀ)]

// ErrNotStable is returned by the steady-state moments of a loop that is
// not mean-square stable: they do not exist.
var ErrNotStable = errors.New("loop is not mean-square stable")

// weighted is a mode with its probability in one joint state.
type weighted struct {
	w float64
	mode
}

// modes lists state k's modes with their probabilities: m0, m1 and the
// nodes of the m2 rule.
func (md *Model) modes(k int) []weighted {
	js := &md.States[k]
	out := make([]weighted, 0, 2+len(js.m2))
	out = append(out, weighted{js.P0, md.f0}, weighted{js.P1, md.f1})
	for i, nd := range js.nodes {
		out = append(out, weighted{js.c2 * nd.Weight, js.m2[i]})
	}
	return out
}

// symDim is the dimension of svec space.
func (md *Model) symDim() int { return md.lm.nz * (md.lm.nz + 1) / 2 }

// stateOp returns K_k = E_k[F ⊗ F] on svec coordinates:
// P0 M(F0) + P1 M(F1) + (1−ps)(1−pa) Σ_nodes w M(F(τ)).
func (md *Model) stateOp(k int, m0, m1 *mat.Dense) *mat.Dense {
	js := &md.States[k]
	d := md.symDim()
	op := mat.NewDense(d, d, nil)
	op.Scale(js.P0, m0)
	op.Add(op, scaledCopy(m1, js.P1))
	op.Add(op, scaledCopy(js.opM2, js.c2))
	return op
}

func (md *Model) baseOps() (m0, m1 *mat.Dense) {
	d := md.symDim()
	m0 = mat.NewDense(d, d, nil)
	m1 = mat.NewDense(d, d, nil)
	addSymOp(m0, md.f0.F, 1)
	addSymOp(m1, md.f1.F, 1)
	return m0, m1
}

// SecondMomentOperator returns the matrix of the second-moment operator
// Q ↦ (Σ_i P_ij E_i[F Q_i Fᵀ])_j (estimate/model.md §4) on the stacked svec(Q_j),
// a square matrix of side N·nz(nz+1)/2 for N joint states.
func (md *Model) SecondMomentOperator() *mat.Dense {
	if md.long != nil {
		return md.longSecondOp()
	}
	m0, m1 := md.baseOps()
	N, d := len(md.States), md.symDim()
	big := mat.NewDense(N*d, N*d, nil)
	for i := 0; i < N; i++ {
		k := md.stateOp(i, m0, m1)
		for j := 0; j < N; j++ {
			pij := md.P.At(i, j)
			if pij == 0 {
				continue
			}
			blk := big.Slice(j*d, (j+1)*d, i*d, (i+1)*d).(*mat.Dense)
			blk.Scale(pij, k)
		}
	}
	return big
}

// FirstMomentOperator returns the matrix of q ↦ (Σ_i P_ij E_i[F] q_i)_j
// on the stacked q_j (side N·nz).
func (md *Model) FirstMomentOperator() *mat.Dense {
	if md.long != nil {
		return md.longFirstOp()
	}
	N, nz := len(md.States), md.lm.nz
	big := mat.NewDense(N*nz, N*nz, nil)
	for i := 0; i < N; i++ {
		ef := md.meanF(i)
		for j := 0; j < N; j++ {
			pij := md.P.At(i, j)
			if pij == 0 {
				continue
			}
			blk := big.Slice(j*nz, (j+1)*nz, i*nz, (i+1)*nz).(*mat.Dense)
			blk.Scale(pij, ef)
		}
	}
	return big
}

func (md *Model) meanF(i int) *mat.Dense {
	js := &md.States[i]
	var ef mat.Dense
	ef.Scale(js.P0, md.f0.F)
	ef.Add(&ef, scaledCopy(md.f1.F, js.P1))
	ef.Add(&ef, scaledCopy(js.meanF2, js.c2))
	return &ef
}

func (md *Model) meanG(i int) []float64 {
	js := &md.States[i]
	nz := md.lm.nz
	out := make([]float64, nz)
	for a := 0; a < nz; a++ {
		out[a] = js.P0*md.f0.G.AtVec(a) + js.P1*md.f1.G.AtVec(a) + js.c2*js.sumG2.At(a, 0)
	}
	return out
}

// constTerm returns E_i[F q gᵀ + g qᵀ Fᵀ + π (g gᵀ + H Ξ Hᵀ)] for state i
// with first moment q and probability pi.
func (md *Model) constTerm(i int, q []float64, pi float64) *mat.Dense {
	return constTermOf(md.modes(i), md.lm.nz, q, pi)
}

// Moments are first and second moments of the loop state z = [x; u; xc]
// at a sampling instant, summed over the joint network states.
type Moments struct {
	Mean   []float64     // E[z]
	Second *mat.SymDense // E[z zᵀ]
	// PerState are q_i and Q_i, for each joint state i.
	PerStateMean   [][]float64
	PerStateSecond []*mat.SymDense
}

// Steady returns the stationary moments, by solving the two fixed-point
// linear systems (I − 𝒜) q = b₁ and then (I − ℒ) svec(Q) = b₂ (estimate/model.md
// §4; Costa–Fragoso–Marques 2005, Proposition 3.37 for their existence
// under mean-square stability — from memory). It returns ErrNotStable when
// the loop is not mean-square stable.
func (md *Model) Steady() (*Moments, error) {
	if !md.MeanSquareStable() {
		return nil, ErrNotStable
	}
	if md.long != nil {
		return md.longSteady()
	}
	N, nz, d := len(md.States), md.lm.nz, md.symDim()
	// First moments.
	a1 := md.FirstMomentOperator()
	lhs := identityMinus(a1)
	b1 := mat.NewVecDense(N*nz, nil)
	for i := 0; i < N; i++ {
		g := md.meanG(i)
		for j := 0; j < N; j++ {
			pij := md.P.At(i, j)
			for a := 0; a < nz; a++ {
				b1.SetVec(j*nz+a, b1.AtVec(j*nz+a)+pij*md.Pi[i]*g[a])
			}
		}
	}
	var q mat.VecDense
	if err := q.SolveVec(lhs, b1); err != nil {
		return nil, fmt.Errorf("first moments: %w", err)
	}
	qs := make([][]float64, N)
	for i := range qs {
		qs[i] = make([]float64, nz)
		for a := range qs[i] {
			qs[i][a] = q.AtVec(i*nz + a)
		}
	}
	// Second moments.
	big := md.SecondMomentOperator()
	lhs2 := identityMinus(big)
	b2 := mat.NewVecDense(N*d, nil)
	tmp := make([]float64, d)
	for i := 0; i < N; i++ {
		c := md.constTerm(i, qs[i], md.Pi[i])
		svec(c, tmp)
		for j := 0; j < N; j++ {
			pij := md.P.At(i, j)
			for a := 0; a < d; a++ {
				b2.SetVec(j*d+a, b2.AtVec(j*d+a)+pij*tmp[a])
			}
		}
	}
	var x mat.VecDense
	if err := x.SolveVec(lhs2, b2); err != nil {
		return nil, fmt.Errorf("second moments: %w", err)
	}
	return md.collect(qs, x.RawVector().Data), nil
}

func (md *Model) collect(qs [][]float64, x []float64) *Moments {
	N, nz, d := md.nStates(), md.lm.nz, md.symDim()
	out := &Moments{Mean: make([]float64, nz), Second: mat.NewSymDense(nz, nil)}
	for i := 0; i < N; i++ {
		qi := append([]float64(nil), qs[i]...)
		Qi := unsvec(x[i*d:(i+1)*d], nz)
		out.PerStateMean = append(out.PerStateMean, qi)
		out.PerStateSecond = append(out.PerStateSecond, Qi)
		for a := 0; a < nz; a++ {
			out.Mean[a] += qi[a]
			for b := a; b < nz; b++ {
				out.Second.SetSym(a, b, out.Second.At(a, b)+Qi.At(a, b))
			}
		}
	}
	return out
}

func identityMinus(a *mat.Dense) *mat.Dense {
	n, _ := a.Dims()
	var out mat.Dense
	out.Scale(-1, a)
	for i := 0; i < n; i++ {
		out.Set(i, i, out.At(i, i)+1)
	}
	return &out
}

// ErrorStats are the moments of the tracking error e = r − C x − v at a
// sampling instant (estimate/model.md §4):
//
//	E[e] = r − C E[x],   E[eᵀe] = |r − C E[x]|² + tr(C Cov(x) Cᵀ) + tr(V).
type ErrorStats struct {
	Mean         []float64 // E[e], p entries
	SecondMoment float64   // E[eᵀe]
	Std          float64   // sqrt(E[eᵀe] − |E[e]|²)
	OutputStd    []float64 // per output, sqrt((C Cov(x) Cᵀ + V)_jj)
}

// Error returns the error moments that state moments imply.
func (md *Model) Error(mo *Moments) ErrorStats {
	n, p := md.lm.n, md.lm.p
	c := md.lm.c
	ex := mat.NewVecDense(n, mo.Mean[:n])
	cov := mat.NewDense(n, n, nil)
	for a := 0; a < n; a++ {
		for b := 0; b < n; b++ {
			cov.Set(a, b, mo.Second.At(a, b)-mo.Mean[a]*mo.Mean[b])
		}
	}
	var cex mat.VecDense
	cex.MulVec(c, ex)
	var ccov, cc mat.Dense
	ccov.Mul(c, cov)
	cc.Mul(&ccov, c.T())
	st := ErrorStats{Mean: make([]float64, p), OutputStd: make([]float64, p)}
	sq, tr := 0.0, 0.0
	for j := 0; j < p; j++ {
		st.Mean[j] = md.lm.r.AtVec(j) - cex.AtVec(j)
		sq += st.Mean[j] * st.Mean[j]
		vj := cc.At(j, j) + md.lm.xi.At(n+j, n+j)
		tr += vj
		st.OutputStd[j] = math.Sqrt(math.Max(0, vj))
	}
	st.SecondMoment = sq + tr
	st.Std = math.Sqrt(math.Max(0, tr))
	return st
}

// Step is the error at one sampling instant of a transient.
type Step struct {
	K     int     // period index, 0 at the step
	Time  float64 // K·h, seconds
	Error ErrorStats
}

// Transient returns the error moments for the first steps periods after
// the setpoint steps from 0 to the loop's setpoint with the loop at rest
// (z₀ = 0) and the network in its stationary law, by running the moment
// recursions of estimate/model.md §4 forward; step 0 is the instant of the step.
// It needs no stability: an unstable loop's moments grow.
func (md *Model) Transient(steps int) []Step {
	if md.long != nil {
		return md.longTransient(steps)
	}
	N, nz, d := len(md.States), md.lm.nz, md.symDim()
	m0, m1 := md.baseOps()
	ops := make([]*mat.Dense, N)
	efs := make([]*mat.Dense, N)
	egs := make([][]float64, N)
	for i := range ops {
		ops[i] = md.stateOp(i, m0, m1)
		efs[i] = md.meanF(i)
		egs[i] = md.meanG(i)
	}
	pi := append([]float64(nil), md.Pi...)
	qs := make([][]float64, N)
	xs := make([]float64, N*d)
	for i := range qs {
		qs[i] = make([]float64, nz)
	}
	var out []Step
	tmp := make([]float64, d)
	for k := 0; k <= steps; k++ {
		mo := md.collect(qs, xs)
		out = append(out, Step{K: k, Time: float64(k) * md.Loop.Period, Error: md.Error(mo)})
		if k == steps {
			break
		}
		nq := make([][]float64, N)
		nx := make([]float64, N*d)
		npi := make([]float64, N)
		for j := range nq {
			nq[j] = make([]float64, nz)
		}
		for i := 0; i < N; i++ {
			fi := mat.NewVecDense(nz, nil)
			fi.MulVec(efs[i], mat.NewVecDense(nz, qs[i]))
			ki := mat.NewVecDense(d, nil)
			ki.MulVec(ops[i], mat.NewVecDense(d, xs[i*d:(i+1)*d]))
			svec(md.constTerm(i, qs[i], pi[i]), tmp)
			for j := 0; j < N; j++ {
				pij := md.P.At(i, j)
				if pij == 0 {
					continue
				}
				npi[j] += pi[i] * pij
				for a := 0; a < nz; a++ {
					nq[j][a] += pij * (fi.AtVec(a) + pi[i]*egs[i][a])
				}
				for a := 0; a < d; a++ {
					nx[j*d+a] += pij * (ki.AtVec(a) + tmp[a])
				}
			}
		}
		qs, xs, pi = nq, nx, npi
	}
	return out
}
