package estimate

import (
	"fmt"
	"math"
	"sort"

	"rigwire/profiles/laws"
	"rigwire/profiles/trace"
)

// lawParts is a delay law split for integration (delaylaw.go): its point
// masses, and continuous pieces each given by a weight and a quantile
// function, so that for any bounded g
//
//	E[g(X)] = Σ_atoms m g(a) + Σ_pieces w ∫₀¹ g(Q(u)) du.
//
// Integrating in u = F(x) rather than in x against the density removes
// every difficulty of the density's shape: a density singular at its start
// (gamma or Weibull with shape < 1) becomes a smooth Q near u = 0, a peak
// far narrower than the period is spread over the whole of [0, 1], and a
// heavy tail is cut where the period ends (substitution x = F⁻¹(u), the
// probability integral transform; common practice).
type lawParts struct {
	atoms  []laws.Atom // merged, in increasing order
	pieces []piece
}

// piece is one continuous part: X = shift + scale·Y, Y drawn from base
// (a law without atoms), with mass w in the whole law.
type piece struct {
	w, scale, shift float64
	base            laws.Delay
}

// quantile is the piece's own quantile function, for 0 < u < 1.
func (p piece) quantile(u float64) float64 {
	return p.shift + p.scale*laws.Quantile(p.base, u)
}

// cdf is the piece's own P(X ≤ x).
func (p piece) cdf(x float64) float64 { return p.base.CDF((x - p.shift) / p.scale) }

// support is the piece's [lo, hi].
func (p piece) support() (lo, hi float64) {
	lo, hi = p.base.Support()
	return p.shift + p.scale*lo, p.shift + p.scale*hi
}

// splitLaw decomposes d into atoms and continuous pieces: shifts and the
// delay scale are carried along, mixtures split by weight, trace replays
// and empirical laws are their atoms. A law of a kind it does not know
// that has both atoms and a density is refused.
func splitLaw(d laws.Delay) (lawParts, error) {
	var lp lawParts
	if err := lp.add(d, 1, 1, 0); err != nil {
		return lawParts{}, err
	}
	sort.Slice(lp.atoms, func(i, j int) bool { return lp.atoms[i].At < lp.atoms[j].At })
	var merged []laws.Atom
	for _, a := range lp.atoms {
		if n := len(merged); n > 0 && merged[n-1].At == a.At {
			merged[n-1].Mass += a.Mass
			continue
		}
		merged = append(merged, a)
	}
	lp.atoms = merged
	total := 0.0
	for _, a := range lp.atoms {
		total += a.Mass
	}
	for _, p := range lp.pieces {
		total += p.w
	}
	if math.Abs(total-1) > 1e-9 {
		return lawParts{}, fmt.Errorf("%s: its parts carry mass %.12g, want 1", laws.Describe(d), total)
	}
	return lp, nil
}

func (lp *lawParts) add(d laws.Delay, w, scale, shift float64) error {
	switch x := d.(type) {
	case *laws.Shifted:
		return lp.add(x.Base, w, scale, shift+scale*x.Shift)
	case *laws.Mixture:
		for i, part := range x.Parts {
			if err := lp.add(part, w*x.Weights[i], scale, shift); err != nil {
				return err
			}
		}
		return nil
	case scaled:
		return lp.add(x.d, w, scale*x.s, shift)
	case *trace.Replay:
		return lp.add(x.Delay, w, scale, shift)
	case *sumLaw:
		for _, a := range x.parts.atoms {
			lp.atoms = append(lp.atoms, laws.Atom{At: shift + scale*a.At, Mass: w * a.Mass})
		}
		for _, p := range x.parts.pieces {
			lp.pieces = append(lp.pieces, piece{w: w * p.w, scale: scale * p.scale, shift: shift + scale*p.shift, base: p.base})
		}
		return nil
	}
	atoms := d.Atoms()
	mass := 0.0
	for _, a := range atoms {
		lp.atoms = append(lp.atoms, laws.Atom{At: shift + scale*a.At, Mass: w * a.Mass})
		mass += a.Mass
	}
	switch {
	case mass >= 1-1e-12:
		return nil
	case len(atoms) > 0:
		return fmt.Errorf("%s: a law with both atoms and a density must be a mixture of its parts", laws.Describe(d))
	}
	lp.pieces = append(lp.pieces, piece{w: w, scale: scale, shift: shift, base: d})
	return nil
}

// cdf is Σ_{atoms ≤ x} m + Σ w F_piece(x): the law's CDF rebuilt from its
// parts, to check them against the law's own.
func (lp *lawParts) cdf(x float64) float64 {
	s := 0.0
	for _, a := range lp.atoms {
		if a.At <= x {
			s += a.Mass
		}
	}
	for _, p := range lp.pieces {
		s += p.w * p.cdf(x)
	}
	return s
}

// probSumBelow is P(X + y < b): atoms compared as a + y < b (the same
// rounding as the atom pairs of tauRule), pieces through their CDF at
// b − y.
func (lp *lawParts) probSumBelow(y, b float64) float64 {
	s := 0.0
	for _, a := range lp.atoms {
		if a.At+y < b {
			s += a.Mass
		}
	}
	for _, p := range lp.pieces {
		s += p.w * p.cdf(b-y)
	}
	return s
}

// interiorFeatures is a piece's law with points inside its support where
// its CDF may kink or be singular (a convolution: sumlaw.go).
type interiorFeatures interface{ interior() []float64 }

// features lists where the law's parts begin and end, their interior
// kinks and its atoms: the points where an integrand built on its CDF may
// kink or jump.
func (lp *lawParts) features() []float64 {
	var out []float64
	for _, a := range lp.atoms {
		out = append(out, a.At)
	}
	for _, p := range lp.pieces {
		lo, hi := p.support()
		out = append(out, lo)
		if !math.IsInf(hi, 1) {
			out = append(out, hi)
		}
		if k, ok := p.base.(interiorFeatures); ok {
			for _, x := range k.interior() {
				out = append(out, p.shift+p.scale*x)
			}
		}
	}
	return out
}
