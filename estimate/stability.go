package estimate

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// Mean-square stability and the spectral radius ρ of the second-moment
// operator ℒ (moments.go): the loop is mean-square stable iff ρ(ℒ) < 1
// (O. L. V. Costa, M. D. Fragoso, R. P. Marques, Discrete-Time Markov
// Jump Linear Systems, Springer 2005, Theorem 3.9 — from memory); the
// verdict it leads to is estimate/model.md §6.
//
// # The test at s
//
// ℒ maps positive semidefinite matrices (one per joint network state) to
// positive semidefinite ones. For s > 0 let X_s solve
//
//	X − ℒ(X)/s = I   (I in every state).
//
// If s > ρ, X_s = Σ_k (ℒ/s)^k(I) ⪰ I: every eigenvalue of every block is
// at least 1. If s ≤ ρ, X_s cannot be positive definite, for X ≻ 0 with
// ℒ(X) = s(X − I) ≺ sX would give ρ < s (a Collatz–Wielandt bound for
// cone-preserving maps; A. Berman, R. J. Plemmons, Nonnegative Matrices
// in the Mathematical Sciences, SIAM 1994, ch. 1 — from memory): some
// block then has an eigenvalue ≤ 0. So the smallest eigenvalue λ of the
// blocks of X_s is ≥ 1 above ρ and ≤ 0 at or below it, and a computed
// X̂_s decides s against ρ whenever its error is below ½: λ(X̂_s) ≥ ½
// means s > ρ, below ½ means s ≤ ρ.
//
// The linear system A x = b (A = I − L/s on svec coordinates, b = svec(I)
// stacked) is solved by LU and iterative refinement with residuals in
// double-double arithmetic (refine), which estimates the error left in
// x̂. A block's spectral norm is at most nz times its largest entry, so
// the test is decided when nz times that estimate is below ½. Otherwise
// — s is so close to ρ that I − L/s is singular to working precision —
// the test says "undecided" rather than guess. No determinant is ever
// taken.
//
// # The spectral radius and its error
//
// ρ is bracketed by such tests: [lo, hi] with lo ≤ ρ < hi, both ends
// certified, hi starting at ‖L‖∞ (any induced norm bounds ρ). Each test
// above ρ leaves an LU factorisation of I − L/s, and inverse iteration
// with it (y ← (I − L/s)⁻¹ y, normalised) converges to the dominant
// eigenvalue s/(s − ρ) of the inverse, since for s > ρ the real
// eigenvalue ρ is strictly the nearest to s (G. H. Golub, C. F. Van Loan,
// Matrix Computations, 4th ed., 2013, §7.6.1 — from memory); its estimate
// ρ̂ = s(1 − 1/μ) guides the next test just above it, then one just below
// it. When a second eigenvalue λ₂ lies close to ρ, inverse iteration
// converges only at the ratio (s − ρ)/(s − λ₂); Arnoldi's process on the
// same inverse (arnoldi.go) separates the two and gives ρ̂ to rounding from
// one factorisation, so the search then tests at ρ̂(1 ± 1e-12) at once.
// It runs first on operators of arnoldiFirst coordinates or more, and on
// smaller ones when inverse iteration does not converge (estimate).
//
// The reported SpectralRadius is ρ̂ (accurate to rounding for a simple
// dominant eigenvalue) and RadiusError = max(hi − ρ̂, ρ̂ − lo, 1e-10·ρ̂):
// the bracket, as good as the tests' error estimates (about 1e-12
// relative for a well separated ρ, more when ρ is a multiple or
// defective eigenvalue), and not below radiusFloor·ρ̂, for the operator's
// own entries carry the τ quadrature's error (tauRelTol).
//
// # The verdict
//
// Stable when the bracket lies below 1 or the test at 1 says "above"
// (a checked positive definite solution of X − ℒ(X) = I: a Lyapunov
// certificate); unstable when the bracket lies at or above 1 or the test
// at 1 says "below"; marginal when the test at 1 is undecided or ρ̂ lies
// within RadiusError of 1: the loop is then not called stable.

// side is where a test point s lies against ρ.
type side int

const (
	undecided side = iota // s within the arithmetic's resolution of ρ
	aboveRho              // s > ρ, certified
	belowRho              // s ≤ ρ, certified
)

// Parameters of the search for ρ.
const (
	// radiusDelta is the first relative distance from ρ̂ at which the
	// bracket's ends are tested; it grows tenfold whenever a test there
	// is undecided.
	radiusDelta = 1e-12
	// maxRadiusTests bounds the number of factorisations of one search.
	maxRadiusTests = 40
	// inverseSteps bounds the inverse-iteration steps after a test.
	inverseSteps = 60
	// radiusFloor is the least relative error reported for ρ: the
	// operator is built from τ-expectations accurate to about tauRelTol,
	// with margin for a moderately conditioned eigenvalue.
	radiusFloor = 1e-10
)

// lyapunov holds the operator and the scratch of the tests.
type lyapunov struct {
	op         *mat.Dense // ℒ on stacked svec coordinates
	n          int        // its side
	nz, states int
	norm       float64    // ‖L‖∞
	a          *mat.Dense // I − L/s, then its LU factors in place
	lu         denseLU
	b, x, r, y *mat.VecDense
	luAt       float64 // the s of the factorisation held, 0 if none
}

func newLyapunov(op *mat.Dense, nz, states int) *lyapunov {
	n, _ := op.Dims()
	ly := &lyapunov{op: op, n: n, nz: nz, states: states, norm: mat.Norm(op, math.Inf(1)),
		a: mat.NewDense(n, n, nil), b: mat.NewVecDense(n, nil), x: mat.NewVecDense(n, nil),
		r: mat.NewVecDense(n, nil), y: mat.NewVecDense(n, nil)}
	d := nz * (nz + 1) / 2
	for j := 0; j < states; j++ {
		for k := 0; k < nz; k++ {
			ly.b.SetVec(j*d+svecIndex(nz, k, k), 1)
		}
	}
	return ly
}

// test decides s against ρ (see the package notes above).
func (ly *lyapunov) test(s float64) side {
	ly.luAt = 0
	if !(s > 0) || math.IsInf(s, 0) {
		return undecided
	}
	ly.a.Scale(-1/s, ly.op)
	for i := 0; i < ly.n; i++ {
		ly.a.Set(i, i, ly.a.At(i, i)+1)
	}
	if !ly.lu.factorize(ly.a.RawMatrix()) {
		return undecided
	}
	ly.lu.solve(ly.x.RawVector().Data, ly.b.RawVector().Data)
	ly.luAt = s
	errX, ok := ly.refine(s)
	if !ok || !(float64(ly.nz)*errX < 0.5) {
		return undecided
	}
	xs := ly.x.RawVector().Data
	d := ly.nz * (ly.nz + 1) / 2
	lam := math.Inf(1)
	for j := 0; j < ly.states; j++ {
		var es mat.EigenSym
		if !es.Factorize(unsvec(xs[j*d:(j+1)*d], ly.nz), false) {
			return undecided
		}
		for _, v := range es.Values(nil) {
			lam = math.Min(lam, v)
		}
	}
	if lam >= 0.5 {
		return aboveRho
	}
	return belowRho
}

// Iterative refinement of the tests' solutions.
const (
	maxRefineSteps = 6
	// refineRatio is the largest ratio of successive corrections taken as
	// convergence (Demmel et al. 2006 use 0.5).
	refineRatio = 0.5
)

// refine improves ly.x, the solution of (I − L/s) x = b from the LU of the
// rounded matrix, by iterative refinement with residuals computed in
// double-double arithmetic against the exact I − L/s (L as stored, s as
// given): the LU only preconditions, and the refined x̂ solves the
// exact system to about ε‖x̂‖ whenever κ ε is well below 1 (J. Demmel,
// Y. Hida, W. Kahan, X. S. Li, S. Mukherjee, E. J. Riedy, "Error bounds
// from extra-precise iterative refinement", ACM TOMS 32(2), 2006 — from
// memory). It returns an estimate of ‖x − x̂‖∞: the last correction,
// extrapolated geometrically from the ratio of the last two, plus 2ε‖x̂‖∞;
// ok is false when the corrections stop shrinking (the system is too
// close to singular to solve).
func (ly *lyapunov) refine(s float64) (errX float64, ok bool) {
	prev := math.Inf(1)
	for step := 0; step < maxRefineSteps; step++ {
		ly.residual(s)
		ly.lu.solve(ly.y.RawVector().Data, ly.r.RawVector().Data)
		ly.x.AddVec(ly.x, ly.y)
		nd := mat.Norm(ly.y, math.Inf(1))
		nx := mat.Norm(ly.x, math.Inf(1))
		if math.IsNaN(nd) || math.IsNaN(nx) || math.IsInf(nx, 0) {
			return math.Inf(1), false
		}
		floor := 2 * epsilon * nx
		if nd <= floor {
			return nd + floor, true
		}
		if ratio := nd / prev; step > 0 && ratio > refineRatio {
			return math.Inf(1), false
		} else if step > 0 && step == maxRefineSteps-1 {
			return nd*ratio/(1-ratio) + floor, true
		}
		prev = nd
	}
	return prev, true
}

// residual sets ly.r = b − (I − L/s) x̂ with each row's dot product
// L_i·x̂ accumulated in double-double (T. Ogita, S. M. Rump, S. Oishi,
// "Accurate sum and dot product", SIAM J. Sci. Comput. 26(6), 2005,
// Algorithm Dot2), the division by s and the last sums compensated.
func (ly *lyapunov) residual(s float64) {
	raw := ly.op.RawMatrix()
	x := ly.x.RawVector().Data
	for i := 0; i < ly.n; i++ {
		row := raw.Data[i*raw.Stride : i*raw.Stride+ly.n]
		hi, lo := dot2(row, x)
		q1 := hi / s
		q2 := (math.FMA(-q1, s, hi) + lo) / s
		t, e1 := twoSum(ly.b.AtVec(i), -x[i])
		t2, e2 := twoSum(t, q1)
		ly.r.SetVec(i, t2+(e1+e2+q2))
	}
}

// twoSum is Knuth's error-free sum: a + b = s + e exactly.
func twoSum(a, b float64) (s, e float64) {
	s = a + b
	bb := s - a
	e = (a - (s - bb)) + (b - bb)
	return s, e
}

// dot2 is Σ a_i b_i as hi + lo, the products' and sums' rounding errors
// gathered in lo (Ogita–Rump–Oishi 2005, Algorithm Dot2, with the FMA for
// the products' errors).
func dot2(a, b []float64) (hi, lo float64) {
	for i := range a {
		p := a[i] * b[i]
		pe := math.FMA(a[i], b[i], -p)
		var se float64
		hi, se = twoSum(hi, p)
		lo += se + pe
	}
	return hi, lo
}

// inverseIterate estimates ρ with the factorisation of the last test,
// which must have found its s above ρ: power iteration on (I − L/s)⁻¹
// from its solution X_s, whose dominant eigenvalue is μ = s/(s − ρ).
func (ly *lyapunov) inverseIterate() (est float64, converged bool) {
	s := ly.luAt
	ly.y.CopyVec(ly.x)
	est = math.NaN()
	var d1, d2 float64 // the last two changes of the estimate
	for k := 0; k < inverseSteps; k++ {
		ny := mat.Norm(ly.y, math.Inf(1))
		if !(ny > 0) || math.IsInf(ny, 0) {
			break
		}
		ly.y.ScaleVec(1/ny, ly.y)
		ly.lu.solve(ly.r.RawVector().Data, ly.y.RawVector().Data)
		mu := mat.Norm(ly.r, math.Inf(1))
		if !(mu > 0) || math.IsInf(mu, 0) {
			break
		}
		next := s - s/mu
		ly.y.CopyVec(ly.r)
		if math.Abs(next-est) <= 4*epsilon*s {
			return next, true
		}
		d2, d1 = d1, next-est
		// Slow geometric convergence (the shift far from ρ, or a second
		// eigenvalue close to it): after a dozen steps return Aitken's
		// extrapolation of the sequence. The estimate only places the
		// next test point, whose side of ρ that test certifies.
		if k >= 12 && d2 != 0 && !math.IsNaN(d1) {
			if r := d1 / d2; r > 0.5 && r < 1 {
				return next + d1*r/(1-r), false
			}
		}
		est = next
	}
	return est, false
}

// arnoldiFirst is the operator size from which the search estimates ρ by
// Arnoldi's process on the inverse first: there a solve costs far more
// than the small eigenproblems the process adds, which dominate below it.
const arnoldiFirst = 200

// estimate estimates ρ after a test above it and returns a scale of the
// estimate's error (+Inf when unknown): by inverse iteration on a small
// operator, by Arnoldi's process on the inverse (shiftInvertEstimate) on a
// large one or when inverse iteration does not converge.
func (ly *lyapunov) estimate() (est, errEst float64) {
	if ly.n < arnoldiFirst {
		if e, conv := ly.inverseIterate(); conv {
			return e, math.Inf(1)
		}
	}
	if a, ae, ok := ly.shiftInvertEstimate(); ok {
		return a, ae
	}
	e, _ := ly.inverseIterate()
	return e, math.Inf(1)
}

// Radius is ρ with its certified bracket.
type Radius struct {
	Value     float64 // ρ̂
	Low, High float64 // Low ≤ ρ ≤ High, certified
	Error     float64 // max(High − Value, Value − Low)
	Stability string  // StabilityStable, StabilityMarginal or StabilityUnstable
}

// radius brackets ρ of ly's operator and decides the stability verdict.
func (ly *lyapunov) radius() Radius {
	if ly.norm == 0 {
		return Radius{Stability: StabilityStable}
	}
	lo, hi := 0.0, ly.norm
	est := math.NaN()
	dUp, dDown := radiusDelta, radiusDelta
	estErr := math.Inf(1) // a scale of est's error, +Inf when unknown
	keep := func(v, e float64) {
		if v >= lo && v <= hi {
			est, estErr = v, e
		}
	}
	s := ly.norm * (1 + 1e-6)
	for tests := 0; tests < maxRadiusTests; tests++ {
		switch ly.test(s) {
		case aboveRho:
			hi = math.Min(hi, s)
			keep(ly.estimate())
		case belowRho:
			lo = math.Max(lo, s)
		case undecided:
			if !math.IsNaN(est) && s > est {
				dUp *= 10
			} else {
				dDown *= 10
			}
		}
		if !(est >= lo && est <= hi) {
			est = math.NaN()
		}
		// Next point: tighten from above towards ρ̂, then certify just
		// below it; without an estimate, bisect.
		switch {
		case !math.IsNaN(est) && est == 0:
			// ρ̂ = 0: shrink hi geometrically.
			if hi <= 1e-15*ly.norm {
				return ly.verdict(0, lo, hi)
			}
			s = hi / 1e3
		case !math.IsNaN(est) && hi-est > 1.5*dUp*est:
			// Above ρ̂, by steps that grow tenfold while the tests stay
			// undecided, up to hi: a defective ρ (ill-conditioned
			// tests near it, and a ρ̂ with a small residual far from it)
			// is then still bracketed from above well below ‖L‖∞.
			s = est + math.Max((hi-est)*1e-3, dUp*est)
			if 10*estErr <= dUp*est {
				// ρ̂ is good to well within the step: test just above it.
				s = est + dUp*est
			}
		case !math.IsNaN(est) && est-lo > 1.5*dDown*est && dDown < 0.5:
			s = est * (1 - dDown)
		case !math.IsNaN(est):
			return ly.verdict(est, lo, hi)
		default:
			if hi-lo <= 1e-6*hi {
				return ly.verdict((lo+hi)/2, lo, hi)
			}
			s = (lo + hi) / 2
			if lo > 0 && hi/lo > 4 {
				s = math.Sqrt(lo * hi)
			} else if lo == 0 {
				s = hi / 4
			}
		}
	}
	if math.IsNaN(est) {
		est = (lo + hi) / 2
	}
	return ly.verdict(est, lo, hi)
}

// verdict decides stability from the bracket [lo, hi] of ρ, testing s = 1
// when the bracket holds it, and returns the radius with its error.
func (ly *lyapunov) verdict(est, lo, hi float64) Radius {
	st := StabilityMarginal
	switch {
	case hi < 1:
		st = StabilityStable
	case lo >= 1:
		st = StabilityUnstable
	default:
		switch ly.test(1) {
		case aboveRho:
			st, hi = StabilityStable, 1
		case belowRho:
			st, lo = StabilityUnstable, 1
		}
	}
	est = math.Max(lo, math.Min(hi, est))
	e := math.Max(math.Max(hi-est, est-lo), radiusFloor*est)
	if math.Abs(est-1) <= e {
		// Within its error of 1: the operator's own accuracy cannot tell.
		st = StabilityMarginal
	}
	return Radius{Value: est, Low: lo, High: hi, Error: e, Stability: st}
}

// Radius returns ρ of the second-moment operator with its certified
// bracket and the stability verdict.
func (md *Model) Radius() Radius {
	return newLyapunov(md.SecondMomentOperator(), md.lm.nz, md.nStates()).radius()
}

// SpectralRadius is Radius().Value.
func (md *Model) SpectralRadius() float64 { return md.Radius().Value }

// certifies reports whether x (the stacked svec(X_j) of a solution at
// another operating point) is a Lyapunov certificate for this operator:
// every block X_j and every block of X − ℒ(X) positive definite beyond
// the rounding of computing them. For a positive operator such an X
// proves ρ(ℒ) < 1 (Costa, Fragoso and Marques 2005, Theorem 3.9, from
// memory), the same certificate the test at s = 1 finds (X − ℒ(X) = I,
// X ≽ I), only not solved for. ℒ(X) is summed in double-double, as the
// residual is (Ogita, Rump and Oishi's Dot2): entry i of X − ℒ(X) is off
// by at most 4ε(|x_i| + |ℒ(X)_i|) + nε²Σ_k|ℒ_ik x_k|, and a block's
// smallest eigenvalue by at most the Frobenius norm of its entries'
// errors (Weyl) plus the eigensolver's own nz·ε·‖block‖; the test asks
// for twice that.
func (ly *lyapunov) certifies(x []float64) bool {
	if len(x) != ly.n {
		return false
	}
	raw := ly.op.RawMatrix()
	r := make([]float64, ly.n)
	bound := make([]float64, ly.n)
	for i := 0; i < ly.n; i++ {
		row := raw.Data[i*raw.Stride : i*raw.Stride+ly.n]
		hi, lo := dot2(row, x)
		r[i] = (x[i] - hi) - lo
		abs := 0.0
		for k, v := range row {
			abs += math.Abs(v * x[k])
		}
		bound[i] = 4*epsilon*(math.Abs(x[i])+math.Abs(hi)) + float64(ly.n)*epsilon*epsilon*abs
		if math.IsNaN(r[i]) || math.IsInf(r[i], 0) {
			return false
		}
	}
	d := ly.nz * (ly.nz + 1) / 2
	var es mat.EigenSym
	for j := 0; j < ly.states; j++ {
		errF := 0.0
		for _, b := range bound[j*d : (j+1)*d] {
			errF += 2 * b * b // an off-diagonal entry appears twice
		}
		for k, blk := range [][]float64{x[j*d : (j+1)*d], r[j*d : (j+1)*d]} {
			m := unsvec(blk, ly.nz)
			if !es.Factorize(m, false) {
				return false
			}
			v := es.Values(nil)
			tol := float64(ly.nz) * epsilon * math.Max(math.Abs(v[0]), math.Abs(v[len(v)-1]))
			if k == 1 {
				tol += math.Sqrt(errF)
			}
			if !(v[0] > 2*tol) {
				return false
			}
		}
	}
	return true
}

// meanSquareStableFrom is MeanSquareStable trying prev, a certificate
// found at a nearby operating point, before solving for one; it returns
// the certificate that decided (nil when none: not stable, or ‖ℒ‖∞ < 1).
func (md *Model) meanSquareStableFrom(prev []float64) (bool, []float64) {
	if md.buildErr != nil {
		return false, nil
	}
	ly := newLyapunov(md.SecondMomentOperator(), md.lm.nz, md.nStates())
	if ly.norm < 1 {
		return true, nil
	}
	if prev != nil && ly.certifies(prev) {
		return true, prev
	}
	if ly.test(1) == aboveRho {
		return true, append([]float64(nil), ly.x.RawVector().Data...)
	}
	return false, nil
}

// MeanSquareStable reports whether the loop is certified mean-square
// stable: ‖L‖∞ < 1, or the test at s = 1 finds a positive definite
// solution of X − ℒ(X) = I within its error bound (a Lyapunov
// certificate). A marginal loop, where the test cannot decide, is not.
// One LU factorisation, far cheaper than the radius, so the loss-margin
// scan uses it.
func (md *Model) MeanSquareStable() bool {
	if md.buildErr != nil {
		return false
	}
	ly := newLyapunov(md.SecondMomentOperator(), md.lm.nz, md.nStates())
	if ly.norm < 1 {
		return true
	}
	return ly.test(1) == aboveRho
}
