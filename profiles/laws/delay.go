package laws

import (
	"math"
	"math/rand/v2"
)

// Delay is the law of a one-way delay, in seconds. Every delay kind of the
// profile format implements it; the relay calls Sample on its hot path and
// the prediction integrates over CDF, Density and Atoms.
//
// A law may have a density part and point masses at once (a mixture of a
// constant and a lognormal, say). The total mass is
// ∫ Density + Σ Atoms = 1, and CDF includes both.
type Delay interface {
	// Kind is the profile's name for the law ("lognormal", …).
	Kind() string
	// Sample draws one delay ≥ 0. It must not allocate.
	Sample(r *rand.Rand) float64
	// CDF is P(X ≤ x), atoms included.
	CDF(x float64) float64
	// Density is the density of the absolutely continuous part at x;
	// atoms are excluded (0 for a purely atomic law).
	Density(x float64) float64
	// Atoms lists the point masses in increasing order of position; nil
	// when the law has none.
	Atoms() []Atom
	// Mean is E[X].
	Mean() float64
	// Variance is Var[X]; +Inf where it does not exist.
	Variance() float64
	// Support is the smallest interval [lo, hi] that holds all the mass;
	// hi may be +Inf.
	Support() (lo, hi float64)
}

// Atom is a point mass of a delay law.
type Atom struct {
	At   float64 // position, seconds
	Mass float64 // probability
}

// Quantiler is a law without atoms that knows its own quantile function
// F⁻¹(p) for 0 < p < 1. The prediction integrates over a law through it
// (E[g(X)] = ∫₀¹ g(F⁻¹(u)) du), which stays well behaved where the density
// is singular, very narrow or heavy-tailed.
type Quantiler interface {
	Quantile(p float64) float64
}

// Quantile returns the smallest x with CDF(x) ≥ p, for 0 < p < 1: the
// law's own quantile function where it has one (a shifted law adds its
// shift), else bisection on the CDF (exact at atoms).
func Quantile(d Delay, p float64) float64 {
	if s, ok := d.(*Shifted); ok {
		return s.Shift + Quantile(s.Base, p)
	}
	if q, ok := d.(Quantiler); ok && p > 0 && p < 1 {
		return q.Quantile(p)
	}
	return quantileBisect(d, p)
}

// ProbBelow is P(X < x): the CDF at x less any atom sitting exactly at x.
// "Stale" and "late" mean a delay at or above the limit, so the prediction
// and `impair check` both count in-time datagrams with it.
func ProbBelow(d Delay, x float64) float64 {
	p := d.CDF(x)
	for _, a := range d.Atoms() {
		if a.At == x {
			p -= a.Mass
		}
	}
	return math.Max(0, math.Min(1, p))
}

// quantileNewton refines x0, an approximate p-quantile of a law with a
// density, by Newton steps on CDF(x) − p kept inside a bracket that every
// evaluation narrows: a step that would leave the bracket bisects it (or,
// while the bracket is open above, doubles x). Safeguarded Newton, common
// practice. A NaN or infinite x0 starts from the support.
func quantileNewton(d Delay, p, x0 float64) float64 {
	lo, hi := d.Support()
	x := x0
	if !(x > lo && x < hi) {
		x = lo + 1e-6
		if !math.IsInf(hi, 1) {
			x = lo + (hi-lo)/2
		}
	}
	for range 200 {
		f := d.CDF(x) - p
		if f == 0 {
			return x
		}
		if f > 0 {
			hi = x
		} else {
			lo = x
		}
		next := x - f/d.Density(x)
		if !(next > lo && next < hi) {
			if math.IsInf(hi, 1) {
				next = 2*x + 1e-12
			} else {
				next = lo + (hi-lo)/2
			}
		}
		if next == x || math.Abs(next-x) <= 2e-16*math.Abs(x) || next <= lo || next >= hi {
			return next
		}
		x = next
	}
	return x
}

// quantileBisect is the smallest x with CDF(x) ≥ p, by bisection on the
// CDF.
func quantileBisect(d Delay, p float64) float64 {
	lo, hi := d.Support()
	if p <= 0 {
		return lo
	}
	if math.IsInf(hi, 1) {
		hi = math.Max(lo, 1e-6)
		for d.CDF(hi) < p {
			hi = lo + 2*(hi-lo) + 1e-6
			if hi > 1e9 {
				return math.Inf(1)
			}
		}
	}
	if d.CDF(lo) >= p {
		return lo
	}
	for range 200 {
		mid := lo + (hi-lo)/2
		if mid <= lo || mid >= hi {
			break
		}
		if d.CDF(mid) >= p {
			hi = mid
		} else {
			lo = mid
		}
	}
	return hi
}

// MaxDelay bounds every time parameter of a delay law and every delay of
// an empirical sample, in seconds (1 h): far outside what a network does,
// and small enough that no draw or matrix exponential overflows.
const MaxDelay = 3600.0
