package profiles

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

// Quantile returns the smallest x with CDF(x) ≥ p, for 0 < p < 1, found by
// bisection on the CDF (so it is exact at atoms). It is meant for reports,
// not for the hot path.
func Quantile(d Delay, p float64) float64 {
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
