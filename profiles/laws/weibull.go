package laws

import (
	"fmt"
	"math"
	"math/rand/v2"
)

// Weibull is the Weibull law with shape k and scale λ:
// F(x) = 1 − exp(−(x/λ)^k) (computed as −expm1), f(x) = (k/λ)(x/λ)^{k−1}
// exp(−(x/λ)^k), mean λΓ(1 + 1/k), variance λ²(Γ(1 + 2/k) − Γ(1 + 1/k)²).
// Profile kind "weibull" (keys shape, scale, shift).
type Weibull struct {
	Shape, Scale float64
}

// NewWeibull returns shift + Weibull(shape, scale), shape > 0, scale > 0.
func NewWeibull(shape, scale, shift float64) (Delay, error) {
	if !(shape > 0) || !(scale > 0) || math.IsInf(shape, 1) || math.IsInf(scale, 1) {
		return nil, fmt.Errorf("weibull delay: want shape > 0 and scale > 0, got shape %g, scale %g", shape, scale)
	}
	return Shift(Weibull{Shape: shape, Scale: scale}, shift)
}

func (w Weibull) Kind() string { return "weibull" }

// Sample inverts the CDF: λ E^{1/k} with E ~ Exp(1).
func (w Weibull) Sample(r *rand.Rand) float64 {
	return w.Scale * math.Pow(r.ExpFloat64(), 1/w.Shape)
}

func (w Weibull) CDF(x float64) float64 {
	if x <= 0 {
		return 0
	}
	return -math.Expm1(-math.Pow(x/w.Scale, w.Shape))
}

func (w Weibull) Density(x float64) float64 {
	switch {
	case x < 0:
		return 0
	case x == 0:
		switch {
		case w.Shape < 1:
			return math.Inf(1)
		case w.Shape == 1:
			return 1 / w.Scale
		}
		return 0
	}
	y := x / w.Scale
	yk := math.Pow(y, w.Shape)
	return w.Shape / w.Scale * yk / y * math.Exp(-yk)
}

func (w Weibull) Atoms() []Atom             { return nil }
func (w Weibull) Mean() float64             { return w.Scale * math.Gamma(1+1/w.Shape) }
func (w Weibull) Support() (lo, hi float64) { return 0, math.Inf(1) }

// Quantile is scale·(−ln(1 − p))^{1/shape}.
func (w Weibull) Quantile(p float64) float64 {
	return w.Scale * math.Pow(-math.Log1p(-p), 1/w.Shape)
}

func (w Weibull) Variance() float64 {
	g1 := math.Gamma(1 + 1/w.Shape)
	return w.Scale * w.Scale * (math.Gamma(1+2/w.Shape) - g1*g1)
}

func (w Weibull) String() string {
	return fmt.Sprintf("weibull shape %s scale %s", fmtNum(w.Shape), FormatSeconds(w.Scale))
}
