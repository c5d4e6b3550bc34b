package fit

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// seTol is how many standard errors a fitted parameter may sit from the
// one the sample was drawn with: 3.5 standard errors, about 5e-4 two-sided
// for a normal estimator, over the 15 parameters of the table below
// (asymptotic normality of the MLE; the draws are seeded, so a pass is
// reproducible).
const seTol = 3.5

// TestFitDelaysRecovers draws samples with gonum's distuv samplers (a
// reference sampler, independent of profiles' own) plus a known shift,
// fits them, and checks that the sampling kind has the smallest AIC and
// that each parameter is back within seTol of its standard errors
// (observed Fisher information).
func TestFitDelaysRecovers(t *testing.T) {
	const n = 4000
	type param struct {
		name string
		want float64
	}
	cases := []struct {
		name   string
		kind   string
		draw   func(src rand.Source) func() float64
		shift  float64
		params []param
	}{
		{"exponential mean 2ms + 1ms", "exponential",
			func(src rand.Source) func() float64 { return distuv.Exponential{Rate: 500, Src: src}.Rand }, 1e-3,
			[]param{{"mean", 2e-3}}},
		{"gamma shape 4 scale 1ms + 2ms", "gamma",
			func(src rand.Source) func() float64 { return distuv.Gamma{Alpha: 4, Beta: 1000, Src: src}.Rand }, 2e-3,
			[]param{{"shape", 4}, {"scale", 1e-3}, {"shift", 2e-3}}},
		{"lognormal median 3ms sigma 0.4 + 1ms", "lognormal",
			func(src rand.Source) func() float64 {
				return distuv.LogNormal{Mu: math.Log(3e-3), Sigma: 0.4, Src: src}.Rand
			}, 1e-3,
			[]param{{"median", 3e-3}, {"sigma", 0.4}, {"shift", 1e-3}}},
		{"weibull shape 3 scale 4ms + 0.5ms", "weibull",
			func(src rand.Source) func() float64 { return distuv.Weibull{K: 3, Lambda: 4e-3, Src: src}.Rand }, 0.5e-3,
			[]param{{"shape", 3}, {"scale", 4e-3}, {"shift", 0.5e-3}}},
		{"normal mean 20ms std 2ms", "normal",
			func(src rand.Source) func() float64 { return distuv.Normal{Mu: 20e-3, Sigma: 2e-3, Src: src}.Rand }, 0,
			[]param{{"mean", 20e-3}, {"std", 2e-3}}},
	}
	for i, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			draw := c.draw(rand.NewPCG(2026, uint64(i)))
			xs := make([]float64, n)
			for j := range xs {
				xs[j] = c.shift + draw()
			}
			fits, err := Delays(xs)
			if err != nil {
				t.Fatal(err)
			}
			var got *DelayFit
			for j := range fits {
				if fits[j].Kind == c.kind {
					got = &fits[j]
				}
			}
			if got == nil {
				t.Fatalf("no %s fit among %d", c.kind, len(fits))
			}
			if fits[0].Kind != c.kind {
				// AIC may prefer a close neighbour (gamma and lognormal are near
				// alike at some shapes); then the chosen one must be almost as good.
				if fits[0].AIC < got.AIC-10 {
					t.Errorf("AIC chose %s (%.1f), %s has %.1f", fits[0].Kind, fits[0].AIC, c.kind, got.AIC)
				}
			}
			for _, p := range c.params {
				est, se, ok := got.Param(p.name)
				if !ok {
					t.Fatalf("no parameter %s", p.name)
				}
				if math.IsNaN(se) {
					if p.name == "shift" && c.kind == "exponential" {
						continue
					}
					t.Errorf("%s: no standard error", p.name)
					continue
				}
				if math.Abs(est-p.want) > seTol*se {
					t.Errorf("%s = %.6g ± %.3g, want %.6g (off by %.1f SE)", p.name, est, se, p.want, math.Abs(est-p.want)/se)
				}
			}
			if got.KSP < 1e-3 {
				t.Errorf("KS p-value %.3g for the sampling kind", got.KSP)
			}
		})
	}
}

// TestFitDelaysExponentialShift: for the exponential the shift's MLE is
// the minimum; ours sits a gap (x̄ − x₍₁₎)/n below it, and the minimum of
// n exponentials exceeds the shift by Exp(mean/n) (order statistics,
// common practice), so the shift is within a few mean/n of the truth.
func TestFitDelaysExponentialShift(t *testing.T) {
	const n, mean, shift = 4000, 2e-3, 1e-3
	src := rand.NewPCG(7, 7)
	d := distuv.Exponential{Rate: 1 / mean, Src: src}
	xs := make([]float64, n)
	for i := range xs {
		xs[i] = shift + d.Rand()
	}
	fits, err := Delays(xs)
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range fits {
		if f.Kind != "exponential" {
			continue
		}
		s, _, _ := f.Param("shift")
		if tol := 8 * mean / n; math.Abs(s-shift) > tol {
			t.Errorf("shift %g, want %g ± %g", s, shift, tol)
		}
	}
}

func TestFitDelaysRejects(t *testing.T) {
	cases := []struct {
		name string
		xs   []float64
	}{
		{"too few", []float64{1, 2, 3}},
		{"constant", []float64{1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1}},
		{"negative", []float64{-1, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if _, err := Delays(c.xs); err == nil {
				t.Error("want an error")
			}
		})
	}
}

// TestFitLossRecoversGilbert simulates a known simplified Gilbert chain
// (per-step p, r) with a seeded source and checks that the estimator gives
// p and r back within seTol standard errors, prefers the burst model, and
// that an i.i.d. sequence is not taken for bursts.
func TestFitLossRecoversGilbert(t *testing.T) {
	const n = 100000
	cases := []struct {
		name      string
		p, r      float64
		wantBurst bool
	}{
		{"bursty p 0.02 r 0.3", 0.02, 0.3, true},
		{"long bursts p 0.005 r 0.1", 0.005, 0.1, true},
		{"i.i.d. 5 %", 0.05, 0.95, false}, // p + r = 1: memoryless
	}
	for i, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(11, uint64(i)))
			lost := make([]bool, n)
			bad := false
			for j := range lost {
				if bad {
					bad = rng.Float64() >= c.r
				} else {
					bad = rng.Float64() < c.p
				}
				lost[j] = bad
			}
			f, err := Loss(lost)
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(f.P-c.p) > seTol*f.PSE {
				t.Errorf("p = %.4g ± %.2g, want %g", f.P, f.PSE, c.p)
			}
			if math.Abs(f.R-c.r) > seTol*f.RSE {
				t.Errorf("r = %.4g ± %.2g, want %g", f.R, f.RSE, c.r)
			}
			if f.Burst != c.wantBurst {
				t.Errorf("burst chosen %v, want %v (AIC iid %.1f, burst %.1f)", f.Burst, c.wantBurst, f.AICIID, f.AICBurst)
			}
			if c.wantBurst {
				// long-run loss p/(p+r): Gilbert (1960); its standard error by
				// the delta method from those of p and r (common practice).
				s := f.P + f.R
				se := math.Hypot(f.R*f.PSE, f.P*f.RSE) / (s * s)
				if want := c.p / (c.p + c.r); math.Abs(f.LongRunLoss-want) > seTol*se {
					t.Errorf("long-run loss %g ± %.2g, want %g", f.LongRunLoss, se, want)
				}
			}
		})
	}
}

// TestDwellRoundTrip: Dwell and GilbertStep are inverse to each other.
func TestDwellRoundTrip(t *testing.T) {
	const h, tol = 0.002, 1e-12
	f := LossFit{P: 0.02, R: 0.3}
	good, bad, err := f.Dwell(h)
	if err != nil {
		t.Fatal(err)
	}
	p, r := GilbertStep(good, bad, h)
	if math.Abs(p-f.P) > tol || math.Abs(r-f.R) > tol {
		t.Errorf("round trip gives p %g r %g, want %g %g", p, r, f.P, f.R)
	}
}
