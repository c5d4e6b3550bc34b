package engine

import (
	"math"
	"math/rand/v2"
	"rigwire/estimate/online"
	"testing"
)

// ar1 fills es with a scalar Gaussian AR(1) error e_k = φ e_{k−1} +
// σ√(1−φ²) w_k started from its stationary law N(0, σ²), so that every
// e_k is N(0, σ²) and the true E[eᵀe] is σ² at every sample (the
// stationary variance of an AR(1), σ_w²/(1−φ²); Box & Jenkins, Time Series
// Analysis, §3.2.4, section from memory). x_k = e_k² then has
// autocorrelation φ^{2h} (Isserlis' theorem, common practice).
func ar1(rng *rand.Rand, es []float64, phi, sigma float64) {
	e := sigma * rng.NormFloat64()
	g := sigma * math.Sqrt(1-phi*phi)
	for k := range es {
		es[k] = e
		e = phi*e + g*rng.NormFloat64()
	}
}

// The verdict's rates over seeded simulated runs of ar1 (σ² = 0.04, the
// truth), judged by the run's rule (judgeInterval, DefaultMinSamples) with
// tolerance 0.1. Each case states the rates it accepts; with R runs the
// binomial standard deviation of a rate p is √(p(1−p)/R), and the bands
// are 3 of them (or exact where the rule decides by count):
//
//   - enough data (φ = 0.8, 4000 samples; x's correlation time about 4.6
//     samples), prediction = truth: the widened interval misses the
//     truth (above or below) in at most 5 % + 3·0.0109 (the nominal 95 %
//     coverage over 400 runs); agree in at least 90 %;
//   - too few samples (300 < 400): inconclusive in every run;
//   - batches short for the correlation time (φ = 0.995: x's correlation
//     time about 200 samples; 2000 samples in batches of 64, or 128 once
//     merged): a false above or below in at most 5 % + 3·0.0109, and no
//     agreement claimed in most runs — inconclusive in at least 80 %;
//   - the same short batches with a prediction 50 times too low: above in
//     at least 90 % (a gross disagreement holds even against the
//     worst-case interval);
//   - a prediction off by the discrimination factor (2·truth, or
//     truth/2), enough data: disagreement (below, resp. above) in at
//     least 95 % of the runs.
func TestVerdictRates(t *testing.T) {
	const (
		sigma = 0.2
		truth = sigma * sigma
		runs  = 400
		tol   = 0.1
		band  = 3 * 0.0109 // 3 binomial standard deviations at p = 0.05, 400 runs
	)
	cases := []struct {
		name  string
		phi   float64
		n     int
		pred  float64
		check func(t *testing.T, rate map[string]float64)
	}{
		{"enough data, right prediction", 0.8, 4000, truth, func(t *testing.T, r map[string]float64) {
			if r[VerdictAbove]+r[VerdictBelow] > 0.05+band || r[VerdictAgree] < 0.90 {
				t.Errorf("rates %v: want above+below ≤ %.3f, agree ≥ 0.90", r, 0.05+band)
			}
		}},
		{"too few samples", 0.8, 300, truth, func(t *testing.T, r map[string]float64) {
			if r[VerdictInconclusive] != 1 {
				t.Errorf("rates %v: want all inconclusive", r)
			}
		}},
		{"batches short for the correlation time", 0.995, 2000, truth, func(t *testing.T, r map[string]float64) {
			if r[VerdictAbove]+r[VerdictBelow] > 0.05+band || r[VerdictInconclusive] < 0.80 {
				t.Errorf("rates %v: want above+below ≤ %.3f, inconclusive ≥ 0.80", r, 0.05+band)
			}
		}},
		{"short batches, prediction 50 times too low", 0.995, 2000, truth / 50, func(t *testing.T, r map[string]float64) {
			if r[VerdictAbove] < 0.90 {
				t.Errorf("rates %v: want above ≥ 0.90", r)
			}
		}},
		{"prediction twice the truth", 0.8, 4000, 2 * truth, func(t *testing.T, r map[string]float64) {
			if r[VerdictBelow] < 0.95 {
				t.Errorf("rates %v: want below ≥ 0.95", r)
			}
		}},
		{"prediction half the truth", 0.8, 4000, truth / 2, func(t *testing.T, r map[string]float64) {
			if r[VerdictAbove] < 0.95 {
				t.Errorf("rates %v: want above ≥ 0.95", r)
			}
		}},
	}
	for ci, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(2026, uint64(ci)))
			es := make([]float64, c.n)
			counts := map[string]int{}
			for range runs {
				ar1(rng, es, c.phi, sigma)
				on, err := online.New(online.Options{Setpoint: []float64{0}})
				if err != nil {
					t.Fatal(err)
				}
				for _, e := range es {
					on.AddError([]float64{e})
				}
				v, _ := judgeInterval(on.Run(nil), c.pred, tol, "", DefaultMinSamples)
				counts[v]++
			}
			rate := map[string]float64{}
			for v, n := range counts {
				rate[v] = float64(n) / runs
			}
			t.Logf("%d runs: %v", runs, counts)
			c.check(t, rate)
		})
	}
}
