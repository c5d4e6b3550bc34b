package estimate

import (
	"math"
	"math/rand/v2"
	"strconv"
	"strings"
	"testing"
)

func TestRadius(t *testing.T) {
	cases := []struct {
		name    string
		rho, e  float64
		verdict string
		want    string
	}{
		{"stable, tiny error: five digits", 0.998988123, 2e-9, StabilityStable, "0.99899 ± 2e-09"},
		{"unstable, tiny error: five digits", 1.02131, 1e-9, StabilityUnstable, "1.0213 ± 1e-09"},
		{"marginal: digits down to the error", 1.0000000000000027, 1e-6, StabilityMarginal, "1 ± 1e-06"},
		{"marginal below 1", 0.9999993, 1e-6, StabilityMarginal, "0.999999 ± 1e-06"},
		{"stable next to 1: more digits", 0.99999996, 1e-9, StabilityStable, "0.99999996 ± 1e-09"},
		{"unstable next to 1: more digits", 1.0000003, 1e-9, StabilityUnstable, "1.0000003 ± 1e-09"},
		{"large error: fewer digits", 0.5123, 0.01, StabilityStable, "0.51 ± 0.01"},
		{"no error known", 0.998988123, 0, StabilityStable, "0.99899"},
		{"zero radius", 0, 1e-12, StabilityStable, "0 ± 1e-12"},
		{"not finite", math.Inf(1), 0, StabilityUnstable, "+Inf"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := RadiusText(c.rho, c.e, c.verdict); got != c.want {
				t.Errorf("RadiusText(%v, %v, %s) = %q, want %q", c.rho, c.e, c.verdict, got, c.want)
			}
		})
	}
}

// TestRadiusSide: whenever ρ ± e excludes 1, the printed ρ lies on the
// same side of 1 as ρ, and its last digit is no finer than the error's
// decade (seeded random cases).
func TestRadiusSide(t *testing.T) {
	rng := rand.New(rand.NewPCG(10, 5))
	for i := 0; i < 20000; i++ {
		e := math.Pow(10, -2-13*rng.Float64())
		d := e * (1 + math.Pow(10, 4*rng.Float64()-1)) // |ρ − 1| > e
		rho, verdict := 1+d, StabilityUnstable
		if rng.IntN(2) == 0 {
			rho, verdict = 1-d, StabilityStable
		}
		if rho <= 0 {
			continue
		}
		s := RadiusText(rho, e, verdict)
		num, _, _ := strings.Cut(s, " ± ")
		v, err := strconv.ParseFloat(num, 64)
		if err != nil {
			t.Fatalf("RadiusText(%v, %v) = %q: %v", rho, e, s, err)
		}
		if (v < 1) != (rho < 1) || v == 1 {
			t.Fatalf("RadiusText(%v, %v, %s) = %q: on the wrong side of 1", rho, e, verdict, s)
		}
		mantissa := strings.TrimLeft(strings.Replace(num, ".", "", 1), "0")
		allowed := int(math.Floor(math.Log10(rho))) - int(math.Floor(math.Log10(e))) + 1
		if len(mantissa) > allowed {
			t.Fatalf("RadiusText(%v, %v) = %q: %d digits, the error allows %d", rho, e, s, len(mantissa), allowed)
		}
	}
}

func TestValue(t *testing.T) {
	cases := []struct {
		name   string
		rho    float64
		digits int
		want   string
	}{
		{"enough digits", 0.998988123, 8, "0.99898812"},
		{"more digits next to 1", 0.9999999999, 8, "0.9999999999"},
		{"above 1", 1.0000000000000027, 8, "1.000000000000003"},
		{"exactly 1", 1, 8, "1"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := RhoText(c.rho, c.digits); got != c.want {
				t.Errorf("RhoText(%v, %d) = %q, want %q", c.rho, c.digits, got, c.want)
			}
		})
	}
}

func TestDescribe(t *testing.T) {
	cases := []struct {
		name string
		pr   Prediction
		want string
	}{
		{"stable", Prediction{MeanSquareStable: true, Stability: StabilityStable, SpectralRadius: 0.998988123, RadiusError: 2e-9},
			"mean-square stable (spectral radius 0.99899 ± 2e-09, below 1)"},
		{"unstable", Prediction{Stability: StabilityUnstable, SpectralRadius: 1.02131, RadiusError: 1e-9},
			"NOT mean-square stable (spectral radius 1.0213 ± 1e-09, at or above 1)"},
		{"marginal", Prediction{Stability: StabilityMarginal, SpectralRadius: 1.0000000000000027, RadiusError: 1e-6},
			"MARGINAL: the spectral radius 1 ± 1e-06 cannot be told apart from 1 at the accuracy of the computation; treated as not stable (no steady moments)"},
		{"no verdict, stable flag", Prediction{MeanSquareStable: true, SpectralRadius: 0.5},
			"mean-square stable (spectral radius 0.5, below 1)"},
		{"no verdict, unstable", Prediction{SpectralRadius: 1.5},
			"NOT mean-square stable (spectral radius 1.5, at or above 1)"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := DescribeStability(&c.pr); got != c.want {
				t.Errorf("got  %q\nwant %q", got, c.want)
			}
		})
	}
}
