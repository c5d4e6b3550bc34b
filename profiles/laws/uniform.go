package laws

import (
	"fmt"
	"math"
	"math/rand/v2"
)

// Uniform is the uniform law on [Min, Max], Min < Max. Profile kind
// "uniform" (keys min, max; no shift).
type Uniform struct {
	Min, Max float64
}

// NewUniform returns the uniform law on [min, max], 0 ≤ min ≤ max; min =
// max gives the Constant min.
func NewUniform(min, max float64) (Delay, error) {
	if !(min >= 0) || math.IsInf(max, 0) || !(max >= min) {
		return nil, fmt.Errorf("uniform delay: want 0 ≤ min ≤ max, got min %g, max %g", min, max)
	}
	if min == max {
		return Constant{Value: min}, nil
	}
	return Uniform{Min: min, Max: max}, nil
}

func (u Uniform) Kind() string { return "uniform" }

// Sample is Min + (Max−Min)·U with U uniform on [0, 1).
func (u Uniform) Sample(r *rand.Rand) float64 { return u.Min + (u.Max-u.Min)*r.Float64() }

// CDF is (x−Min)/(Max−Min) clamped to [0, 1].
func (u Uniform) CDF(x float64) float64 {
	switch {
	case x <= u.Min:
		return 0
	case x >= u.Max:
		return 1
	}
	return (x - u.Min) / (u.Max - u.Min)
}

// Density is 1/(Max−Min) on [Min, Max].
func (u Uniform) Density(x float64) float64 {
	if x < u.Min || x > u.Max {
		return 0
	}
	return 1 / (u.Max - u.Min)
}

func (u Uniform) Atoms() []Atom             { return nil }
func (u Uniform) Mean() float64             { return (u.Min + u.Max) / 2 }
func (u Uniform) Support() (lo, hi float64) { return u.Min, u.Max }

// Quantile is min + p·(max − min).
func (u Uniform) Quantile(p float64) float64 { return u.Min + p*(u.Max-u.Min) }

// Variance is (Max−Min)²/12.
func (u Uniform) Variance() float64 { w := u.Max - u.Min; return w * w / 12 }

func (u Uniform) String() string {
	return fmt.Sprintf("uniform %s…%s", FormatSeconds(u.Min), FormatSeconds(u.Max))
}
