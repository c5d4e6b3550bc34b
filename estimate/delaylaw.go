package estimate

import (
	"math"
	"math/rand/v2"
	"sort"

	"rigwire/profiles"
)

// probBelow is P(X < x) for a delay law: its CDF at x less any atom sitting
// exactly at x ("stale" and "late" mean a delay ≥ h, MODEL.md §6).
func probBelow(d profiles.Delay, x float64) float64 {
	p := d.CDF(x)
	for _, a := range d.Atoms() {
		if a.At == x {
			p -= a.Mass
		}
	}
	return math.Max(0, math.Min(1, p))
}

// tauNode is one point of the quadrature over the delivered-with-delay
// mode: the total delay τ and its weight, the mass that the rule gives to
// τ (for an atom of the law, the atom's own mass).
type tauNode struct {
	Tau    float64
	Weight float64
}

// maxDirectAtoms bounds the number of distinct atom sums evaluated at
// their own positions; beyond it (resampled measurements, say) the atoms
// join the Chebyshev moments like the densities do.
const maxDirectAtoms = 64

// tauRule returns a quadrature rule for the defective law of the total
// delay τ = τsc + τca + c on the event {τsc < h, τ < h} (MODEL.md §2,
// mode m2): nodes τ_k in [c, h] and weights w_k with
//
//	Σ_k w_k f(τ_k) ≈ E[f(τ); τsc < h, τ < h]
//
// for every smooth f. deg is the degree of polynomial that the
// Chebyshev part of the rule integrates exactly (see chebDegree).
//
// Method. The two delays are independent, each the sum of atoms and a
// density. Atoms × atoms give point masses at s_i + a_j + c (kept as
// nodes of their own when there are few, so they are integrated exactly).
// Every other part of the law enters through its Chebyshev moments
// μ_j = E[T_j(t(τ)); …], t mapping [c, h] onto [−1, 1], computed by
// adaptive Gauss–Kronrod quadrature of the convolution (atoms × density,
// density × atoms, density × density as an iterated integral over the
// triangle s + a < h − c, split at the support ends). The weights are
// then those of product integration against the interpolant of f at the
// Chebyshev points of the first kind (J. C. Mason, D. C. Handscomb,
// Chebyshev Polynomials, Chapman & Hall 2003, §6.2–§6.3: interpolation
// p = Σ'_j a_j T_j with a_j = (2/N) Σ_k f(t_k) T_j(t_k)), so that
// w_k = (2/N) Σ'_j μ_j T_j(t_k). The error is the interpolation error of
// f, which is analytic in τ, times the mass, plus the quadrature error of
// the moments (tolerance 1e-13 relative).
func tauRule(dsc, dca profiles.Delay, h, c float64, deg int) []tauNode {
	budget := h - c // τsc + τca must stay below it
	var nodes []tauNode
	if budget <= 0 {
		return nil
	}
	N := deg + 1
	lo, span := c, h-c
	tmap := func(tau float64) float64 { return (2*(tau-lo) - span) / span }
	mom := make([]float64, N)
	addCheb := func(t, w float64, out []float64) {
		// out[j] += w T_j(t), by the three-term recurrence.
		t0, t1 := 1.0, t
		out[0] += w
		if len(out) > 1 {
			out[1] += w * t
		}
		for j := 2; j < len(out); j++ {
			t0, t1 = t1, 2*t*t1-t0
			out[j] += w * t1
		}
	}
	hasMom := false

	// Atoms × atoms.
	asc, aca := dsc.Atoms(), dca.Atoms()
	type pt struct{ at, mass float64 }
	var pairs []pt
	for _, s := range asc {
		for _, a := range aca {
			if s.At+a.At < budget && s.At < h {
				pairs = append(pairs, pt{s.At + a.At + c, s.Mass * a.Mass})
			}
		}
	}
	sort.Slice(pairs, func(i, j int) bool { return pairs[i].at < pairs[j].at })
	var merged []pt
	for _, p := range pairs {
		if n := len(merged); n > 0 && merged[n-1].at == p.at {
			merged[n-1].mass += p.mass
			continue
		}
		merged = append(merged, p)
	}
	if len(merged) <= maxDirectAtoms {
		for _, p := range merged {
			nodes = append(nodes, tauNode{Tau: p.at, Weight: p.mass})
		}
	} else {
		for _, p := range merged {
			addCheb(tmap(p.at), p.mass, mom)
		}
		hasMom = true
	}

	scBreaks, caBreaks := breakpoints(dsc), breakpoints(dca)
	scDens := hasDensity(dsc)
	caDens := hasDensity(dca)
	inner := newIntegrator(N)
	outer := newIntegrator(N)

	// Atoms of τsc × density of τca.
	if caDens {
		for _, s := range asc {
			if s.At >= budget {
				continue
			}
			f := func(a float64, out []float64) {
				for j := range out {
					out[j] = 0
				}
				addCheb(tmap(s.At+a+c), dca.Density(a), out)
			}
			tmp := make([]float64, N)
			inner.integrate(f, 0, budget-s.At, caBreaks, tmp)
			for j := range mom {
				mom[j] += s.Mass * tmp[j]
			}
			hasMom = true
		}
	}
	// Density of τsc × atoms of τca.
	if scDens {
		for _, a := range aca {
			if a.At >= budget {
				continue
			}
			f := func(s float64, out []float64) {
				for j := range out {
					out[j] = 0
				}
				addCheb(tmap(s+a.At+c), dsc.Density(s), out)
			}
			tmp := make([]float64, N)
			inner.integrate(f, 0, budget-a.At, scBreaks, tmp)
			for j := range mom {
				mom[j] += a.Mass * tmp[j]
			}
			hasMom = true
		}
	}
	// Density × density: ∫ fsc(s) ∫_0^{budget−s} T(s+a+c) fca(a) da ds.
	if scDens && caDens {
		tmp := make([]float64, N)
		f := func(s float64, out []float64) {
			for j := range out {
				out[j] = 0
			}
			ds := dsc.Density(s)
			if ds == 0 {
				return
			}
			for j := range tmp {
				tmp[j] = 0
			}
			g := func(a float64, o []float64) {
				for j := range o {
					o[j] = 0
				}
				addCheb(tmap(s+a+c), dca.Density(a), o)
			}
			inner.integrate(g, 0, budget-s, caBreaks, tmp)
			for j := range out {
				out[j] = ds * tmp[j]
			}
		}
		// The inner integral kinks where budget − s crosses a break of τca.
		ob := append([]float64(nil), scBreaks...)
		for _, b := range caBreaks {
			ob = append(ob, budget-b)
		}
		outer.integrate(f, 0, budget, ob, mom)
		hasMom = true
	}

	if hasMom {
		for k := 0; k < N; k++ {
			tk := math.Cos(math.Pi * (float64(k) + 0.5) / float64(N))
			w := 0.0
			t0, t1 := 1.0, tk
			w += mom[0] / 2
			if N > 1 {
				w += mom[1] * tk
			}
			for j := 2; j < N; j++ {
				t0, t1 = t1, 2*tk*t1-t0
				w += mom[j] * t1
			}
			w *= 2 / float64(N)
			nodes = append(nodes, tauNode{Tau: lo + (tk+1)*span/2, Weight: w})
		}
	}
	return nodes
}

// breakpoints lists where a law's density may jump or kink: the ends of
// its support and, for a mixture or a shifted law, those of its parts.
func breakpoints(d profiles.Delay) []float64 {
	switch x := d.(type) {
	case *profiles.Shifted:
		var out []float64
		for _, b := range breakpoints(x.Base) {
			out = append(out, b+x.Shift)
		}
		return out
	case *profiles.Mixture:
		var out []float64
		for _, p := range x.Parts {
			out = append(out, breakpoints(p)...)
		}
		return out
	case scaled:
		var out []float64
		for _, b := range breakpoints(x.d) {
			out = append(out, b*x.s)
		}
		return out
	}
	lo, hi := d.Support()
	return []float64{lo, hi}
}

// hasDensity reports whether a law has an absolutely continuous part:
// its atoms do not carry all the mass.
func hasDensity(d profiles.Delay) bool {
	m := 0.0
	for _, a := range d.Atoms() {
		m += a.Mass
	}
	return m < 1-1e-12
}

// scaled is a delay law with every delay multiplied by S > 0 (the
// monitor's delay_scale): F(x) = F₀(x/S), f(x) = f₀(x/S)/S, atoms moved
// to S·x, E = S E₀, Var = S² Var₀.
type scaled struct {
	d profiles.Delay
	s float64
}

// scaleDelay returns d with every delay multiplied by s (d itself for s = 1).
func scaleDelay(d profiles.Delay, s float64) profiles.Delay {
	if s == 1 {
		return d
	}
	return scaled{d, s}
}

func (x scaled) Kind() string                { return x.d.Kind() }
func (x scaled) Sample(r *rand.Rand) float64 { return x.s * x.d.Sample(r) }
func (x scaled) CDF(t float64) float64       { return x.d.CDF(t / x.s) }
func (x scaled) Density(t float64) float64   { return x.d.Density(t/x.s) / x.s }
func (x scaled) Mean() float64               { return x.s * x.d.Mean() }
func (x scaled) Variance() float64           { return x.s * x.s * x.d.Variance() }
func (x scaled) Support() (lo, hi float64) {
	lo, hi = x.d.Support()
	return x.s * lo, x.s * hi
}
func (x scaled) Atoms() []profiles.Atom {
	a := x.d.Atoms()
	if a == nil {
		return nil
	}
	out := make([]profiles.Atom, len(a))
	for i, v := range a {
		out[i] = profiles.Atom{At: x.s * v.At, Mass: v.Mass}
	}
	return out
}
