package laws

import (
	"fmt"
	"math"
	"math/rand/v2"
)

// Constant is the delay that is always Value seconds: a single atom of mass
// 1. The zero value is "no delay". Profile kind "constant" (key value; no
// shift).
type Constant struct {
	Value float64
}

// NewConstant returns Constant{value}, checking that value is a finite
// delay ≥ 0.
func NewConstant(value float64) (Delay, error) {
	if !(value >= 0) || math.IsInf(value, 1) {
		return nil, fmt.Errorf("constant delay: want a value ≥ 0, got %g", value)
	}
	return Constant{Value: value}, nil
}

func (c Constant) Kind() string              { return "constant" }
func (c Constant) Sample(*rand.Rand) float64 { return c.Value }
func (c Constant) Density(float64) float64   { return 0 }
func (c Constant) Mean() float64             { return c.Value }
func (c Constant) Variance() float64         { return 0 }
func (c Constant) Support() (lo, hi float64) { return c.Value, c.Value }
func (c Constant) String() string            { return "constant " + FormatSeconds(c.Value) }
func (c Constant) Atoms() []Atom             { return []Atom{{At: c.Value, Mass: 1}} }

// CDF is 1 from Value on, 0 below.
func (c Constant) CDF(x float64) float64 {
	if x >= c.Value {
		return 1
	}
	return 0
}
