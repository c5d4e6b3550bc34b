package laws

import (
	"fmt"
	"math"
	"math/rand/v2"
)

// Exponential is the exponential law with mean Scale (rate 1/Scale):
// F(x) = 1 − e^{−x/Scale}, f(x) = e^{−x/Scale}/Scale, mean Scale,
// variance Scale². Profile kind "exponential" (keys mean, shift).
type Exponential struct {
	Scale float64
}

// NewExponential returns shift + Exp with the given mean > 0.
func NewExponential(mean, shift float64) (Delay, error) {
	if !(mean > 0) || math.IsInf(mean, 1) {
		return nil, fmt.Errorf("exponential delay: want a mean > 0, got %g", mean)
	}
	return Shift(Exponential{Scale: mean}, shift)
}

func (e Exponential) Kind() string { return "exponential" }

// Sample uses the ziggurat of math/rand/v2's ExpFloat64.
func (e Exponential) Sample(r *rand.Rand) float64 { return e.Scale * r.ExpFloat64() }

// CDF is −expm1(−x/Scale), accurate for x ≪ Scale.
func (e Exponential) CDF(x float64) float64 {
	if x <= 0 {
		return 0
	}
	return -math.Expm1(-x / e.Scale)
}

func (e Exponential) Density(x float64) float64 {
	if x < 0 {
		return 0
	}
	return math.Exp(-x/e.Scale) / e.Scale
}

func (e Exponential) Atoms() []Atom             { return nil }
func (e Exponential) Mean() float64             { return e.Scale }
func (e Exponential) Variance() float64         { return e.Scale * e.Scale }
func (e Exponential) Support() (lo, hi float64) { return 0, math.Inf(1) }

// Quantile is −scale·ln(1 − p), by math.Log1p so that small p keep
// their digits.
func (e Exponential) Quantile(p float64) float64 { return -e.Scale * math.Log1p(-p) }
func (e Exponential) String() string             { return "exponential mean " + FormatSeconds(e.Scale) }
