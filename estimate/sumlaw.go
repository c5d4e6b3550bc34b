package estimate

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sort"

	"rigwire/profiles/laws"
)

// The law of a sum of two independent delays, for a compute delay that
// varies (estimate/model.md §14). Nothing in either model depends on the
// compute delay c and the command direction's delay τca apart from their
// sum: the controller judges a sample when it arrives, before computing,
// and the actuator judges a command by its total age τsc + c + τca. So
// the varying part of c is added to τca once, and both models run on
// that law unchanged; the constant part of c (its lowest value) stays the
// shift they already carry.

// maxSumAtoms bounds the point masses of a sum (each atom of one law with
// each of the other): two empirical laws of thousands of values each
// would make millions.
const maxSumAtoms = 4096

// sumLaw is the law of X + Y for independent X and Y, given by its parts
// (lawparts.go): sums of atoms, each atom of one law with each continuous
// piece of the other (a shifted piece, exact), and for each pair of
// continuous pieces a convolved piece whose CDF is interpolated
// (convPiece). It implements laws.Delay so that the models' checks of a
// law's parts against its CDF apply to it too.
type sumLaw struct {
	x, y   laws.Delay
	xShift float64
	parts  lawParts
}

// addLaws returns the law of (X + xShift) + Y. limit is where the
// prediction stops asking (the command horizon): the convolved pieces are
// interpolated up to it and computed directly beyond.
func addLaws(x laws.Delay, xShift float64, y laws.Delay, limit float64) (*sumLaw, error) {
	px, err := splitLaw(x)
	if err != nil {
		return nil, fmt.Errorf("compute delay %w", err)
	}
	py, err := splitLaw(y)
	if err != nil {
		return nil, err
	}
	for i := range px.atoms {
		px.atoms[i].At += xShift
	}
	for i := range px.pieces {
		px.pieces[i].shift += xShift
	}
	if n := len(px.atoms) * len(py.atoms); n > maxSumAtoms {
		return nil, fmt.Errorf("compute delay %s with %s: %d point masses in their sum, more than %d: fit a law to one of them (impair fit)",
			laws.Describe(x), laws.Describe(y), n, maxSumAtoms)
	}
	s := &sumLaw{x: x, y: y, xShift: xShift}
	for _, a := range px.atoms {
		for _, b := range py.atoms {
			s.parts.atoms = append(s.parts.atoms, laws.Atom{At: a.At + b.At, Mass: a.Mass * b.Mass})
		}
	}
	sort.Slice(s.parts.atoms, func(i, j int) bool { return s.parts.atoms[i].At < s.parts.atoms[j].At })
	var merged []laws.Atom
	for _, a := range s.parts.atoms {
		if n := len(merged); n > 0 && merged[n-1].At == a.At {
			merged[n-1].Mass += a.Mass
			continue
		}
		merged = append(merged, a)
	}
	s.parts.atoms = merged
	shiftPiece := func(p piece, a laws.Atom) piece {
		return piece{w: p.w * a.Mass, scale: p.scale, shift: p.shift + a.At, base: p.base}
	}
	for _, a := range px.atoms {
		for _, p := range py.pieces {
			s.parts.pieces = append(s.parts.pieces, shiftPiece(p, a))
		}
	}
	for _, b := range py.atoms {
		for _, p := range px.pieces {
			s.parts.pieces = append(s.parts.pieces, shiftPiece(p, b))
		}
	}
	for _, p := range px.pieces {
		for _, q := range py.pieces {
			c, err := newConvPiece(p, q, limit)
			if err != nil {
				return nil, fmt.Errorf("compute delay %s with %s: %w", laws.Describe(x), laws.Describe(y), err)
			}
			s.parts.pieces = append(s.parts.pieces, piece{w: p.w * q.w, scale: 1, base: c})
		}
	}
	return s, nil
}

func (s *sumLaw) Kind() string { return "sum" }
func (s *sumLaw) String() string {
	return fmt.Sprintf("(%s + %s) + %s", laws.Describe(s.x), laws.FormatSeconds(s.xShift), laws.Describe(s.y))
}
func (s *sumLaw) Sample(r *rand.Rand) float64 { return s.x.Sample(r) + s.xShift + s.y.Sample(r) }
func (s *sumLaw) CDF(x float64) float64       { return math.Min(1, s.parts.cdf(x)) }
func (s *sumLaw) Mean() float64               { return s.x.Mean() + s.xShift + s.y.Mean() }
func (s *sumLaw) Variance() float64           { return s.x.Variance() + s.y.Variance() }
func (s *sumLaw) Atoms() []laws.Atom          { return s.parts.atoms }

func (s *sumLaw) Density(x float64) float64 {
	d := 0.0
	for _, p := range s.parts.pieces {
		d += p.w * p.base.Density((x-p.shift)/p.scale) / p.scale
	}
	return d
}

func (s *sumLaw) Support() (lo, hi float64) {
	xl, xh := s.x.Support()
	yl, yh := s.y.Support()
	return xl + s.xShift + yl, xh + s.xShift + yh
}

// convPiece is the law of P + Q for two independent continuous pieces
// (P the narrower): F(x) = ∫₀¹ F_Q(x − P(u)) du, integrated in P's probability scale
// (lawparts.go) and split where x − P(u) meets an end of Q's support, so
// the integrand is bounded and smooth whatever the densities' shapes. It
// is interpolated by Chebyshev pieces on [lo, limit] to cdfTol (the
// method and resolution of the total-delay law, interpolateCDF) and computed
// directly beyond; its quantile inverts that CDF.
type convPiece struct {
	p, q     piece // P's quantile is evaluated, Q's CDF
	lo, hi   float64
	limit    float64 // the interpolant covers [lo, limit]
	q1       *tanhSinh
	pieces   []chebPiece
	cdfLimit float64
	kinks    []float64 // sums of the two supports' ends: where F may kink or be singular
}

// interior lists where the CDF may kink or be singular inside the
// support; lawParts.features adds them to the support's ends.
func (c *convPiece) interior() []float64 { return c.kinks }

func newConvPiece(p, q piece, limit float64) (*convPiece, error) {
	// The narrower piece goes through its quantile, the wider through its
	// CDF: the integrand F_Q(x − P(u)) then varies slowly in u. The other
	// way round, a narrow Q would make it a near-step that the quadrature
	// resolves only at great cost.
	if spread(p) > spread(q) {
		p, q = q, p
	}
	plo, phi := p.support()
	qlo, qhi := q.support()
	c := &convPiece{p: p, q: q, lo: plo + qlo, hi: phi + qhi, q1: newTauIntegrator(1)}
	c.limit = math.Min(c.hi, math.Max(limit, c.lo))
	feat := []float64{c.lo, c.limit}
	for _, a := range []float64{plo, phi} {
		for _, b := range []float64{qlo, qhi} {
			if x := a + b; x > c.lo && x < c.hi && !math.IsInf(x, 1) {
				c.kinks = append(c.kinks, x)
				if x < c.limit {
					feat = append(feat, x)
				}
			}
		}
	}
	sort.Float64s(feat)
	var ok bool
	if c.pieces, ok = interpolateCDF(c.direct, feat, math.Max(c.limit-c.lo, 1e-300)); !ok {
		return nil, fmt.Errorf("the law of their sum cannot be resolved to %.0e in %d pieces on [%s, %s]",
			cdfTol, maxCDFPieces, laws.FormatSeconds(c.lo), laws.FormatSeconds(c.limit))
	}
	c.cdfLimit = c.direct(c.limit)
	if math.IsNaN(c.cdfLimit) {
		return nil, fmt.Errorf("the CDF of their sum is not a number at %s", laws.FormatSeconds(c.limit))
	}
	return c, nil
}

// spread is a piece's interquartile range.
func spread(p piece) float64 { return p.quantile(0.75) - p.quantile(0.25) }

// direct is F(x) by quadrature.
func (c *convPiece) direct(x float64) float64 {
	if x <= c.lo {
		return 0
	}
	if x >= c.hi {
		return 1
	}
	qlo, qhi := c.q.support()
	top := c.p.cdf(x - qlo)
	if !(top > 0) {
		return 0
	}
	var breaks []float64
	if !math.IsInf(qhi, 1) {
		if v := c.p.cdf(x - qhi); v > 0 && v < top {
			breaks = append(breaks, v)
		}
	}
	out := []float64{0}
	c.q1.integrateU(func(u float64, o []float64) {
		o[0] = c.q.cdf(x - c.p.quantile(u))
	}, top, breaks, out)
	return math.Max(0, math.Min(1, out[0]))
}

func (c *convPiece) Kind() string { return "convolution" }
func (c *convPiece) String() string {
	return "convolution of " + laws.Describe(c.p.base) + " and " + laws.Describe(c.q.base)
}
func (c *convPiece) Sample(r *rand.Rand) float64 {
	return c.p.quantile(r.Float64()) + c.q.quantile(r.Float64())
}
func (c *convPiece) Atoms() []laws.Atom        { return nil }
func (c *convPiece) Support() (lo, hi float64) { return c.lo, c.hi }

func (c *convPiece) Mean() float64 {
	return c.p.shift + c.p.scale*c.p.base.Mean() + c.q.shift + c.q.scale*c.q.base.Mean()
}

func (c *convPiece) Variance() float64 {
	return c.p.scale*c.p.scale*c.p.base.Variance() + c.q.scale*c.q.scale*c.q.base.Variance()
}

// CDF is the interpolant on [lo, limit], the quadrature beyond.
func (c *convPiece) CDF(x float64) float64 {
	switch {
	case x <= c.lo:
		return 0
	case x >= c.limit:
		if x == c.limit {
			return c.cdfLimit
		}
		return c.direct(x)
	}
	i := sort.Search(len(c.pieces), func(i int) bool { return c.pieces[i].hi > x })
	if i == len(c.pieces) {
		return c.cdfLimit
	}
	w := c.pieces[i]
	return math.Max(0, math.Min(1, chebEval(w.coef, 2*(x-w.lo)/(w.hi-w.lo)-1)))
}

// Density is the CDF's central difference (for display; the models
// integrate in probability scale and never call it).
func (c *convPiece) Density(x float64) float64 {
	if x <= c.lo || x >= c.hi {
		return 0
	}
	d := 1e-6 * math.Max(c.limit-c.lo, 1e-9)
	a, b := math.Max(c.lo, x-d), x+d
	return math.Max(0, (c.CDF(b)-c.CDF(a))/(b-a))
}

// Quantile inverts the CDF by bisection: the smallest x with F(x) ≥ u to
// within a few ulps.
func (c *convPiece) Quantile(u float64) float64 {
	lo, hi := c.lo, c.limit
	if u > c.cdfLimit {
		lo, hi = c.limit, c.limit+math.Max(c.limit-c.lo, 1e-9)
		for c.CDF(hi) < u && !math.IsInf(hi, 1) {
			lo, hi = hi, hi+2*(hi-c.lo)
			if hi >= c.hi {
				hi = c.hi
				break
			}
		}
	}
	for k := 0; k < 200 && hi-lo > 4*math.Abs(hi)*0x1p-52; k++ {
		mid := lo + (hi-lo)/2
		if c.CDF(mid) >= u {
			hi = mid
		} else {
			lo = mid
		}
	}
	return hi
}
