package laws

import (
	"fmt"
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/mathext"
)

// Lognormal is exp(N(Mu, Sigma²)), Mu = ln median:
// F(x) = erfc(−(ln x − Mu)/(Sigma√2))/2,
// f(x) = exp(−(ln x − Mu)²/(2Sigma²)) / (x Sigma √(2π)),
// mean e^{Mu + Sigma²/2}, variance (e^{Sigma²} − 1) e^{2Mu + Sigma²}
// (computed with Expm1). Profile kind "lognormal" (keys median, sigma,
// shift).
type Lognormal struct {
	Mu, Sigma float64
}

// NewLognormal returns shift + exp(N(ln median, sigma²)), median > 0,
// sigma > 0.
func NewLognormal(median, sigma, shift float64) (Delay, error) {
	if !(median > 0) || !(sigma > 0) || math.IsInf(median, 1) || math.IsInf(sigma, 1) {
		return nil, fmt.Errorf("lognormal delay: want median > 0 and sigma > 0, got median %g, sigma %g", median, sigma)
	}
	return Shift(Lognormal{Mu: math.Log(median), Sigma: sigma}, shift)
}

func (l Lognormal) Kind() string                { return "lognormal" }
func (l Lognormal) Sample(r *rand.Rand) float64 { return math.Exp(l.Mu + l.Sigma*r.NormFloat64()) }

func (l Lognormal) CDF(x float64) float64 {
	if x <= 0 {
		return 0
	}
	return math.Erfc(-(math.Log(x)-l.Mu)/(l.Sigma*math.Sqrt2)) / 2
}

func (l Lognormal) Density(x float64) float64 {
	if x <= 0 {
		return 0
	}
	z := (math.Log(x) - l.Mu) / l.Sigma
	return math.Exp(-z*z/2) / (x * l.Sigma * math.Sqrt(2*math.Pi))
}

func (l Lognormal) Atoms() []Atom             { return nil }
func (l Lognormal) Mean() float64             { return math.Exp(l.Mu + l.Sigma*l.Sigma/2) }
func (l Lognormal) Support() (lo, hi float64) { return 0, math.Inf(1) }

// Quantile is exp(μ + σ Φ⁻¹(p)), Φ⁻¹ the standard normal quantile
// (gonum mathext.NormalQuantile).
func (l Lognormal) Quantile(p float64) float64 {
	return math.Exp(l.Mu + l.Sigma*mathext.NormalQuantile(p))
}

func (l Lognormal) Variance() float64 {
	s2 := l.Sigma * l.Sigma
	return math.Expm1(s2) * math.Exp(2*l.Mu+s2)
}

func (l Lognormal) String() string {
	return fmt.Sprintf("lognormal median %s sigma %s", FormatSeconds(math.Exp(l.Mu)), fmtNum(l.Sigma))
}
