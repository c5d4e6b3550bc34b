package laws

import (
	"fmt"
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/mathext"
)

// Normal is the normal law N(Mu, Sigma²) truncated to [0, ∞): the profile
// kind "normal" (keys mean, std, shift), whose draws are redrawn while
// negative (estimate/model.md §10). Build it with [NewNormal]; Mu and Sigma are the
// parameters of the untruncated normal, so Mean() is not Mu.
//
// With α = −Mu/Sigma, Z = 1 − Φ(α) the mass kept, φ and Φ the standard
// normal density and CDF, and z = (x − Mu)/Sigma, for x ≥ 0
//
//	F(x) = (Φ(z) − Φ(α)) / Z,   f(x) = φ(z) / (Sigma Z),
//	E[X] = Mu + Sigma λ,   Var[X] = Sigma² (1 + αλ − λ²),   λ = φ(α)/Z,
//
// the truncated normal of N. L. Johnson, S. Kotz, N. Balakrishnan,
// Continuous Univariate Distributions, vol. 1, 2nd ed., 1994, §10.1
// (section number from memory). Φ is computed through math.Erfc on the
// side of the tail, so that the upper tail keeps its relative accuracy.
type Normal struct {
	Mu, Sigma float64
	alpha     float64 // −Mu/Sigma
	kept      float64 // Z = 1 − Φ(α)
	lambda    float64 // φ(α)/Z
	below     float64 // Φ(α), the mass redrawn
	robert    float64 // optimal rate of Robert's proposal, for α > 0
}

// MaxNormalAlpha bounds the truncation point α = −mean/std: beyond it the
// law is all but an exponential tail and 1 − Φ(α) approaches underflow.
const MaxNormalAlpha = 25

// NewNormal returns the normal law with the given mean and std, truncated
// to [0, ∞) (redrawn while negative), then shifted by shift ≥ 0. The mean
// may be negative, down to −25·std.
func NewNormal(mean, std, shift float64) (Delay, error) {
	if !(std > 0) || math.IsInf(std, 1) || math.IsNaN(mean) || math.IsInf(mean, 0) {
		return nil, fmt.Errorf("normal delay: want std > 0 and a finite mean, got mean %g, std %g", mean, std)
	}
	alpha := -mean / std
	if alpha > MaxNormalAlpha {
		return nil, fmt.Errorf("normal delay: want mean ≥ −%d·std (almost all of the law would be redrawn), got mean %g, std %g", MaxNormalAlpha, mean, std)
	}
	n := &Normal{Mu: mean, Sigma: std, alpha: alpha, kept: stdNormalSurvival(alpha), below: stdNormalCDF(alpha)}
	n.lambda = stdNormalDensity(alpha) / n.kept
	n.robert = (alpha + math.Sqrt(alpha*alpha+4)) / 2
	return Shift(n, shift)
}

func stdNormalDensity(z float64) float64 { return math.Exp(-z*z/2) / math.Sqrt(2*math.Pi) }

// stdNormalCDF is Φ(z) = erfc(−z/√2)/2, accurate in the lower tail.
func stdNormalCDF(z float64) float64 { return math.Erfc(-z/math.Sqrt2) / 2 }

// stdNormalSurvival is 1 − Φ(z) = erfc(z/√2)/2, accurate in the upper tail.
func stdNormalSurvival(z float64) float64 { return math.Erfc(z/math.Sqrt2) / 2 }

func (n *Normal) Kind() string { return "normal" }

// Sample draws from the truncated law. When at least half of the normal is
// kept (Mu ≥ 0) it redraws Mu + Sigma·N(0, 1) while negative, as the
// profile format says. Otherwise it draws the same law faster with the
// exponential rejection sampler of C. P. Robert, "Simulation of truncated
// normal variables", Statistics and Computing 5 (1995) 121–125, §2.1:
// z = α + E/λ* with λ* = (α + √(α²+4))/2, accepted with probability
// exp(−(z − λ*)²/2).
func (n *Normal) Sample(r *rand.Rand) float64 {
	if n.alpha <= 0 {
		for {
			if x := n.Mu + n.Sigma*r.NormFloat64(); x >= 0 {
				return x
			}
		}
	}
	for {
		z := n.alpha + r.ExpFloat64()/n.robert
		d := z - n.robert
		if r.Float64() <= math.Exp(-d*d/2) {
			return math.Max(0, n.Mu+n.Sigma*z)
		}
	}
}

func (n *Normal) CDF(x float64) float64 {
	if x <= 0 {
		return 0
	}
	z := (x - n.Mu) / n.Sigma
	var p float64
	if n.alpha < 0 {
		p = (stdNormalCDF(z) - stdNormalCDF(n.alpha)) / n.kept
	} else {
		p = 1 - stdNormalSurvival(z)/n.kept
	}
	return math.Min(1, math.Max(0, p))
}

func (n *Normal) Density(x float64) float64 {
	if x < 0 {
		return 0
	}
	z := (x - n.Mu) / n.Sigma
	return stdNormalDensity(z) / (n.Sigma * n.kept)
}

func (n *Normal) Atoms() []Atom             { return nil }
func (n *Normal) Mean() float64             { return n.Mu + n.Sigma*n.lambda }
func (n *Normal) Support() (lo, hi float64) { return 0, math.Inf(1) }

// Quantile inverts the CDF of the normal law redrawn while negative: with
// Z = 1 − Φ(α) the mass kept, x = μ + σz where Φ(z) = Φ(α) + pZ. The
// lower form is used while Φ(α) + pZ ≤ ½ and the upper one,
// 1 − Φ(z) = (1 − p)Z, beyond, so that neither tail loses its digits
// (Φ⁻¹: gonum mathext.NormalQuantile).
func (n *Normal) Quantile(p float64) float64 {
	var z float64
	if n.alpha < 0 && n.below+p*n.kept <= 0.5 {
		z = mathext.NormalQuantile(n.below + p*n.kept)
	} else {
		z = -mathext.NormalQuantile((1 - p) * n.kept)
	}
	return math.Max(0, n.Mu+n.Sigma*z)
}

func (n *Normal) Variance() float64 {
	return n.Sigma * n.Sigma * (1 + n.alpha*n.lambda - n.lambda*n.lambda)
}

func (n *Normal) String() string {
	return fmt.Sprintf("normal mean %s std %s (≥ 0)", FormatSeconds(n.Mu), FormatSeconds(n.Sigma))
}
