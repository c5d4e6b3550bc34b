package laws

import (
	"fmt"
	"math"
	"math/rand/v2"
)

// Shifted is a delay law moved right by a fixed Shift: X = Shift + Y with Y
// drawn from Base. It is how every kind that takes the profile key `shift`
// applies it. Its law follows from Base's by translation:
// F(x) = F_Y(x − Shift), f(x) = f_Y(x − Shift), atoms moved by Shift,
// E[X] = Shift + E[Y], Var[X] = Var[Y].
type Shifted struct {
	Base  Delay
	Shift float64
	atoms []Atom
}

// Shift returns base moved right by shift ≥ 0; shift 0 returns base itself,
// and a shifted Shifted folds the two shifts into one.
func Shift(base Delay, shift float64) (Delay, error) {
	if !(shift >= 0) || math.IsInf(shift, 1) {
		return nil, fmt.Errorf("shift: want a duration ≥ 0, got %g", shift)
	}
	if base == nil {
		return nil, fmt.Errorf("shift: no law to shift")
	}
	if shift == 0 {
		return base, nil
	}
	if s, ok := base.(*Shifted); ok {
		base, shift = s.Base, s.Shift+shift
	}
	if c, ok := base.(Constant); ok {
		return Constant{Value: c.Value + shift}, nil
	}
	var atoms []Atom
	for _, a := range base.Atoms() {
		atoms = append(atoms, Atom{At: a.At + shift, Mass: a.Mass})
	}
	return &Shifted{Base: base, Shift: shift, atoms: atoms}, nil
}

func (s *Shifted) Kind() string                { return s.Base.Kind() }
func (s *Shifted) Sample(r *rand.Rand) float64 { return s.Shift + s.Base.Sample(r) }
func (s *Shifted) CDF(x float64) float64       { return s.Base.CDF(x - s.Shift) }
func (s *Shifted) Density(x float64) float64   { return s.Base.Density(x - s.Shift) }
func (s *Shifted) Mean() float64               { return s.Shift + s.Base.Mean() }
func (s *Shifted) Variance() float64           { return s.Base.Variance() }
func (s *Shifted) String() string              { return Describe(s.Base) + " + " + FormatSeconds(s.Shift) }

// Atoms returns Base's atoms moved by Shift; the slice is shared, do not
// modify it.
func (s *Shifted) Atoms() []Atom { return s.atoms }

func (s *Shifted) Support() (lo, hi float64) {
	lo, hi = s.Base.Support()
	return lo + s.Shift, hi + s.Shift
}

// Describe is a one-line description of a law for people ("lognormal
// median 3ms sigma 0.4 + 1ms"): its String method if it has one, else its
// kind.
func Describe(d Delay) string {
	if s, ok := d.(fmt.Stringer); ok {
		return s.String()
	}
	return d.Kind()
}
