package laws

import (
	"fmt"
	"math"
	"math/rand/v2"
)

// Pareto is the Pareto (type I) law with shape a and scale s:
// P(X > x) = (s/x)^a for x ≥ s, f(x) = a s^a / x^{a+1},
// mean a s/(a − 1) for a > 1 (else +Inf),
// variance s² a / ((a − 1)² (a − 2)) for a > 2 (else +Inf).
// Profile kind "pareto" (keys shape, scale; no shift).
type Pareto struct {
	Shape, Scale float64
}

// NewPareto returns Pareto(shape, scale), shape > 0, scale > 0.
func NewPareto(shape, scale float64) (Delay, error) {
	if !(shape > 0) || !(scale > 0) || math.IsInf(shape, 1) || math.IsInf(scale, 1) {
		return nil, fmt.Errorf("pareto delay: want shape > 0 and scale > 0, got shape %g, scale %g", shape, scale)
	}
	return Pareto{Shape: shape, Scale: scale}, nil
}

func (p Pareto) Kind() string { return "pareto" }

// Sample inverts the survival function: s·e^{E/a} with E ~ Exp(1)
// (= s·U^{−1/a}).
func (p Pareto) Sample(r *rand.Rand) float64 {
	return p.Scale * math.Exp(r.ExpFloat64()/p.Shape)
}

// CDF is 1 − (s/x)^a, computed as −expm1(a ln(s/x)).
func (p Pareto) CDF(x float64) float64 {
	if x <= p.Scale {
		return 0
	}
	return -math.Expm1(p.Shape * math.Log(p.Scale/x))
}

func (p Pareto) Density(x float64) float64 {
	if x < p.Scale {
		return 0
	}
	return p.Shape / x * math.Pow(p.Scale/x, p.Shape)
}

func (p Pareto) Atoms() []Atom             { return nil }
func (p Pareto) Support() (lo, hi float64) { return p.Scale, math.Inf(1) }

// Quantile is scale·(1 − q)^{−1/shape}.
func (p Pareto) Quantile(q float64) float64 {
	return p.Scale * math.Exp(-math.Log1p(-q)/p.Shape)
}

func (p Pareto) Mean() float64 {
	if p.Shape <= 1 {
		return math.Inf(1)
	}
	return p.Shape * p.Scale / (p.Shape - 1)
}

func (p Pareto) Variance() float64 {
	if p.Shape <= 2 {
		return math.Inf(1)
	}
	a1 := p.Shape - 1
	return p.Scale * p.Scale * p.Shape / (a1 * a1 * (p.Shape - 2))
}

func (p Pareto) String() string {
	return fmt.Sprintf("pareto shape %s scale %s", fmtNum(p.Shape), FormatSeconds(p.Scale))
}
