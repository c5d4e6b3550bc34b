package estimate

import (
	"fmt"
	"math"
	"sort"

	"rigwire/profiles/laws"
)

// The law of a command's total age on arrival, for the long-delay model
// (estimate/model.md §13): τ = τsc + c + τca given that its sample was
// used (τsc < h), as a CDF on [0, Na·h] that the period's integrals can
// evaluate anywhere at the cost of a polynomial.

// totalLaw is the law of τ = τsc + c + τca conditioned on τsc < h, for one
// joint network state.
type totalLaw struct {
	sc, ca lawParts
	h, c   float64
	top    float64 // Na·h: commands at or beyond it are late
	onTime float64 // P(τsc < h)
	q      *tanhSinh
	feat   []float64 // where the CDF may jump or kink, sorted, in [0, top]
	pieces []chebPiece
}

// chebPiece interpolates the CDF on (lo, hi), an interval free of jumps,
// from its values at the Chebyshev points of the first kind.
type chebPiece struct {
	lo, hi float64
	coef   []float64
}

// Resolution of the CDF's interpolant (estimate/model.md §13): pieces of
// chebPoints points, bisected until the last chebTail coefficients are
// below cdfTol, at most maxCDFPieces pieces.
const (
	chebPoints   = 16
	chebTail     = 3
	cdfTol       = 1e-11
	maxCDFPieces = 4000
	minPieceRel  = 1e-12 // a piece narrower than this (relative to h) is taken as resolved
)

// newTotalLaw splits both laws and builds the interpolant of the CDF on
// [0, top].
func newTotalLaw(sc, ca lawParts, h, c, top, onTime float64) (*totalLaw, error) {
	tl := &totalLaw{sc: sc, ca: ca, h: h, c: c, top: top, onTime: onTime, q: newTauIntegrator(1)}
	if !(onTime > 0) {
		return tl, nil
	}
	// Features: sums of a sensor feature below h (and h itself, where the
	// sensor law is cut) with c and a command feature.
	scf := []float64{0}
	for _, x := range sc.features() {
		if x < h {
			scf = append(scf, x)
		}
	}
	scf = append(scf, h)
	caf := append([]float64{0}, ca.features()...)
	set := map[float64]bool{0: true, top: true}
	for _, a := range scf {
		for _, b := range caf {
			if x := a + c + b; x > 0 && x < top {
				set[x] = true
			}
		}
	}
	// The period boundaries: the integrals split there.
	for k := 1; float64(k)*h < top; k++ {
		set[float64(k)*h] = true
	}
	for x := range set {
		tl.feat = append(tl.feat, x)
	}
	sort.Float64s(tl.feat)
	var ok bool
	if tl.pieces, ok = interpolateCDF(func(x float64) float64 { return tl.cdf(x, false) }, tl.feat, h); !ok {
		return nil, fmt.Errorf("the law of the total delay τsc + c + τca cannot be resolved to %.0e in %d pieces on [0, %s]", cdfTol, maxCDFPieces, laws.FormatSeconds(top))
	}
	return tl, nil
}

// interpolateCDF interpolates a CDF between consecutive features (where
// it may jump or kink): Chebyshev pieces of chebPoints points, bisected
// until their last chebTail coefficients sum below cdfTol or they are
// narrower than minPieceRel·scale; false when that takes more than
// maxCDFPieces pieces. The pieces come back in increasing order.
func interpolateCDF(f func(float64) float64, feat []float64, scale float64) ([]chebPiece, bool) {
	var work, done []chebPiece
	for i := 0; i+1 < len(feat); i++ {
		if feat[i+1] > feat[i] {
			work = append(work, chebPiece{lo: feat[i], hi: feat[i+1]})
		}
	}
	for len(work) > 0 {
		p := work[len(work)-1]
		work = work[:len(work)-1]
		p.coef = chebFit(f, p.lo, p.hi, chebPoints)
		tail := 0.0
		for _, v := range p.coef[chebPoints-chebTail:] {
			tail += math.Abs(v)
		}
		if tail > cdfTol && p.hi-p.lo > minPieceRel*scale {
			mid := (p.lo + p.hi) / 2
			work = append(work, chebPiece{lo: p.lo, hi: mid}, chebPiece{lo: mid, hi: p.hi})
			if len(done)+len(work) > maxCDFPieces {
				return nil, false
			}
			continue
		}
		done = append(done, p)
	}
	sort.Slice(done, func(i, j int) bool { return done[i].lo < done[j].lo })
	return done, true
}

// cdf is P(τ ≤ x | τsc < h), or P(τ < x | τsc < h) when strict, computed
// from the laws' parts: over the sensor law's parts below h, the command
// law's CDF at x − c − τsc, integrated in the sensor pieces' probability
// scale (lawparts.go) and split where the argument meets a feature of the
// command law.
func (tl *totalLaw) cdf(x float64, strict bool) float64 {
	if !(tl.onTime > 0) {
		return 0
	}
	caCDF := func(y float64) float64 {
		s := 0.0
		for _, a := range tl.ca.atoms {
			if a.At < y || (!strict && a.At == y) {
				s += a.Mass
			}
		}
		for _, p := range tl.ca.pieces {
			s += p.w * p.cdf(y)
		}
		return s
	}
	total := 0.0
	for _, a := range tl.sc.atoms {
		if a.At < tl.h {
			total += a.Mass * caCDF(x-tl.c-a.At)
		}
	}
	feat := tl.ca.features()
	for _, r := range tl.sc.pieces {
		top := r.cdf(tl.h)
		if !(top > 0) {
			continue
		}
		var breaks []float64
		for _, f := range feat {
			if v := r.cdf(x - tl.c - f); v > 0 && v < top {
				breaks = append(breaks, v)
			}
		}
		out := []float64{0}
		tl.q.integrateU(func(v float64, o []float64) {
			o[0] = caCDF(x - tl.c - r.quantile(v))
		}, top, breaks, out)
		total += r.w * out[0]
	}
	return math.Max(0, math.Min(1, total/tl.onTime))
}

// at is the interpolated P(τ ≤ x | τsc < h) for x inside a piece (not at
// a feature, where only a limit is defined); beyond top it is the mass
// that arrives in time.
func (tl *totalLaw) at(x float64) float64 {
	i := sort.Search(len(tl.pieces), func(i int) bool { return tl.pieces[i].hi > x })
	if i == len(tl.pieces) {
		return tl.cdf(tl.top, true)
	}
	p := tl.pieces[i]
	return math.Max(0, math.Min(1, chebEval(p.coef, 2*(x-p.lo)/(p.hi-p.lo)-1)))
}

// chebNodes returns the n Chebyshev points of the first kind on [−1, 1],
// in increasing order.
func chebNodes(n int) []float64 {
	t := make([]float64, n)
	for k := 0; k < n; k++ {
		t[k] = -math.Cos(math.Pi * (float64(k) + 0.5) / float64(n))
	}
	return t
}

// chebFit returns the Chebyshev coefficients (c₀ halved, so f ≈ Σ c_j
// T_j) of the interpolant of f on (lo, hi) at n first-kind points.
func chebFit(f func(float64) float64, lo, hi float64, n int) []float64 {
	t := chebNodes(n)
	vals := make([]float64, n)
	for k, tk := range t {
		vals[k] = f(lo + (tk+1)*(hi-lo)/2)
	}
	return chebCoef(vals)
}

// chebCoef turns values at chebNodes(n) into Chebyshev coefficients.
func chebCoef(vals []float64) []float64 {
	n := len(vals)
	coef := make([]float64, n)
	for j := 0; j < n; j++ {
		s := 0.0
		for k := 0; k < n; k++ {
			// chebNodes lists −cos(θ_k) = cos(π − θ_k): T_j there is (−1)^j cos(j θ_k).
			s += vals[k] * math.Cos(float64(j)*math.Pi*(float64(k)+0.5)/float64(n))
		}
		if j%2 == 1 {
			s = -s
		}
		coef[j] = 2 * s / float64(n)
	}
	coef[0] /= 2
	return coef
}

// chebEval is Σ c_j T_j(t) by Clenshaw's recurrence.
func chebEval(c []float64, t float64) float64 {
	var b1, b2 float64
	for j := len(c) - 1; j >= 1; j-- {
		b1, b2 = 2*t*b1-b2+c[j], b1
	}
	return t*b1 - b2 + c[0]
}

// chebCumulative returns the n×n matrix that maps the values of f at
// chebNodes(n) to ∫_{−1}^{t_i} p(t) dt at the same nodes, p the
// interpolant, and the weights of ∫_{−1}^{1} p: product integration
// against the interpolant (Mason and Handscomb, Chebyshev Polynomials,
// §2.4.4 for ∫T_j, §6.2 for the interpolant).
func chebCumulative(n int) (cum [][]float64, w []float64) {
	t := chebNodes(n)
	cum = make([][]float64, n)
	for i := range cum {
		cum[i] = make([]float64, n)
	}
	w = make([]float64, n)
	for k := 0; k < n; k++ {
		e := make([]float64, n)
		e[k] = 1
		c := chebCoef(e)
		// Antiderivative coefficients: ∫T_0 = T_1, ∫T_1 = T_2/4,
		// ∫T_j = T_{j+1}/(2(j+1)) − T_{j−1}/(2(j−1)).
		a := make([]float64, n+1)
		for j, cj := range c {
			switch j {
			case 0:
				a[1] += cj
			case 1:
				a[2] += cj / 4
				a[0] -= cj / 4 // T_2/4 − 1/4 keeps the constant free below
			default:
				a[j+1] += cj / (2 * float64(j+1))
				a[j-1] -= cj / (2 * float64(j-1))
			}
		}
		at := func(x float64) float64 { return chebEval(a, x) }
		base := at(-1)
		for i, ti := range t {
			cum[i][k] = at(ti) - base
		}
		w[k] = at(1) - base
	}
	return cum, w
}
