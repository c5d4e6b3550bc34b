package laws

import (
	"cmp"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
)

// Mixture draws one of its parts with probability Weights[i], then that
// part's delay. Its law is the weighted sum of the parts' laws:
// F = Σ wᵢ Fᵢ, f = Σ wᵢ fᵢ, atoms the parts' atoms weighted (merged where
// they coincide), E[X] = Σ wᵢ mᵢ and Var[X] = Σ wᵢ (vᵢ + (mᵢ − m)²) (law
// of total variance). Profile kind "mixture" (key parts, each with a
// weight; shift). Build it with [NewMixture].
type Mixture struct {
	Parts   []Delay
	Weights []float64 // normalised, each > 0
	cum     []float64 // cumulative weights, last = 1
	atoms   []Atom
}

// NewMixture returns the mixture of parts with the given weights (≥ 0, not
// all 0; normalised to sum 1). Parts of weight 0 are dropped; a single
// remaining part is returned as it is.
func NewMixture(weights []float64, parts []Delay) (Delay, error) {
	if len(weights) != len(parts) || len(parts) == 0 {
		return nil, fmt.Errorf("mixture delay: want one weight per part and at least one part, got %d weights, %d parts", len(weights), len(parts))
	}
	total := 0.0
	for i, w := range weights {
		if !(w >= 0) || math.IsInf(w, 1) {
			return nil, fmt.Errorf("mixture delay: part %d: want a weight ≥ 0, got %g", i, w)
		}
		if parts[i] == nil {
			return nil, fmt.Errorf("mixture delay: part %d: no law", i)
		}
		total += w
	}
	if !(total > 0) {
		return nil, fmt.Errorf("mixture delay: want weights not all 0")
	}
	m := &Mixture{}
	for i, w := range weights {
		if w > 0 {
			m.Parts = append(m.Parts, parts[i])
			m.Weights = append(m.Weights, w/total)
		}
	}
	if len(m.Parts) == 1 {
		return m.Parts[0], nil
	}
	c := 0.0
	for _, w := range m.Weights {
		c += w
		m.cum = append(m.cum, c)
	}
	m.cum[len(m.cum)-1] = 1
	for i, p := range m.Parts {
		for _, a := range p.Atoms() {
			m.atoms = append(m.atoms, Atom{At: a.At, Mass: m.Weights[i] * a.Mass})
		}
	}
	m.atoms = mergeAtoms(m.atoms)
	return m, nil
}

// mergeAtoms sorts atoms by position and adds the masses of equal ones.
func mergeAtoms(atoms []Atom) []Atom {
	if len(atoms) == 0 {
		return nil
	}
	// Atoms sit at finite delays, so cmp.Compare orders them as < does.
	slices.SortFunc(atoms, func(a, b Atom) int { return cmp.Compare(a.At, b.At) })
	out := atoms[:1]
	for _, a := range atoms[1:] {
		if last := &out[len(out)-1]; last.At == a.At {
			last.Mass += a.Mass
		} else {
			out = append(out, a)
		}
	}
	return out
}

func (m *Mixture) Kind() string { return "mixture" }

// Sample picks a part by its weight with one uniform draw, then samples it.
func (m *Mixture) Sample(r *rand.Rand) float64 {
	u := r.Float64()
	for i, c := range m.cum {
		if u < c {
			return m.Parts[i].Sample(r)
		}
	}
	return m.Parts[len(m.Parts)-1].Sample(r)
}

func (m *Mixture) CDF(x float64) float64 {
	s := 0.0
	for i, p := range m.Parts {
		s += m.Weights[i] * p.CDF(x)
	}
	return math.Min(1, s)
}

func (m *Mixture) Density(x float64) float64 {
	s := 0.0
	for i, p := range m.Parts {
		if d := p.Density(x); d != 0 {
			s += m.Weights[i] * d
		}
	}
	return s
}

// Atoms returns the weighted, merged atoms of the parts; the slice is
// shared, do not modify it.
func (m *Mixture) Atoms() []Atom { return m.atoms }

func (m *Mixture) Mean() float64 {
	s := 0.0
	for i, p := range m.Parts {
		s += m.Weights[i] * p.Mean()
	}
	return s
}

func (m *Mixture) Variance() float64 {
	mean := m.Mean()
	if math.IsInf(mean, 1) {
		return math.Inf(1)
	}
	s := 0.0
	for i, p := range m.Parts {
		d := p.Mean() - mean
		s += m.Weights[i] * (p.Variance() + d*d)
	}
	return s
}

func (m *Mixture) Support() (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, p := range m.Parts {
		l, h := p.Support()
		lo, hi = math.Min(lo, l), math.Max(hi, h)
	}
	return lo, hi
}

func (m *Mixture) String() string {
	var b strings.Builder
	b.WriteString("mixture of ")
	for i, p := range m.Parts {
		if i > 0 {
			b.WriteString(", ")
		}
		fmt.Fprintf(&b, "%s%% %s", fmtNum(100*m.Weights[i]), Describe(p))
	}
	return b.String()
}
