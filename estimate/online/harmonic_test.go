package online

import (
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"
)

// TestHarmonicFitCoverage: y_k = c + Re(Y e^{jθ_k}) + n_k with n an AR(1)
// process (coefficient 0.9: correlated samples, stationary variance
// σ²/(1 − 0.81)) at 0.7 cycles per 100 samples. Over 300 independent runs
// the 95 % intervals of the gain, the phase and the variance must cover
// the truth at a rate whose binomial 99.9 % band around 0.95 holds it
// (about 0.91 … 0.98 for 300 runs, the normal approximation to the
// binomial law, common practice); the point estimates must be unbiased
// within their standard error over the runs.
func TestHarmonicFitCoverage(t *testing.T) {
	for _, c := range []struct {
		name       string
		rho, cycle float64
	}{
		{"cycles long against the noise's correlation time", 0.9, 100 / 0.7},
		// Batches of one 20-sample cycle against a correlation time of
		// about 100 samples: each batch's own fit would absorb the slow
		// noise; the spread's interval must not get narrow for it.
		{"cycles short against the noise's correlation time", 0.98, 20},
	} {
		t.Run(c.name, func(t *testing.T) { harmonicCoverage(t, c.rho, c.cycle) })
	}
}

func harmonicCoverage(t *testing.T, rho, cycle float64) {
	const runs, n = 300, 40000
	const sigma = 0.1
	Y := complex(0.3, -0.4)
	R := complex(0, -1) // a unit sine
	wantVar := sigma * sigma / (1 - rho*rho)
	wantGain := cmplx.Abs(Y / R)
	wantPhase := cmplx.Phase(Y/R) * 180 / math.Pi
	cover := [3]int{}
	var sumGain, sumVar float64
	for r := range runs {
		rng := rand.New(rand.NewPCG(42, uint64(r)))
		f, err := NewHarmonicFit(HarmonicOptions{Outputs: 1, Center: []float64{2}, CycleSamples: cycle})
		if err != nil {
			t.Fatal(err)
		}
		noise := rng.NormFloat64() * math.Sqrt(wantVar)
		y := []float64{0}
		for k := range n {
			theta := 2 * math.Pi * math.Mod(float64(k)/cycle, 1)
			noise = rho*noise + sigma*rng.NormFloat64()
			y[0] = 2.5 + real(Y*cmplx.Rect(1, theta)) + noise
			f.Add(y, theta)
		}
		e := f.Result()
		if e.Batches < MinFitBatches {
			t.Fatalf("%d batches of %d", e.Batches, e.BatchSize)
		}
		g, glo, ghi := e.Gain(0, R)
		ph, plo, phi := e.Phase(0, R)
		sumGain += g
		sumVar += e.Spread
		if glo <= wantGain && wantGain <= ghi {
			cover[0]++
		}
		if plo <= wantPhase && wantPhase <= phi {
			cover[1]++
		}
		if e.SpreadLow <= wantVar && wantVar <= e.SpreadHigh {
			cover[2]++
		}
		// The mean of n samples of AR(1) noise has variance about
		// σ²/(1−ρ²)·(1+ρ)/(1−ρ)/n; five of its standard deviations.
		if math.Abs(e.Offset[0]-2.5) > 5*math.Sqrt(wantVar*(1+rho)/(1-rho)/n) {
			t.Errorf("run %d: offset %.4f, want 2.5", r, e.Offset[0])
		}
		_ = ph
	}
	band := 3.29 * math.Sqrt(0.95*0.05/runs)
	for i, name := range []string{"gain", "phase", "variance"} {
		rate := float64(cover[i]) / runs
		t.Logf("%s: coverage %.3f", name, rate)
		if math.Abs(rate-0.95) > band {
			t.Errorf("%s: the 95 %% interval covered the truth in %.3f of %d runs, want within ±%.3f of 0.95", name, rate, runs, band)
		}
	}
	if g := sumGain / runs; math.Abs(g-wantGain) > 0.01 {
		t.Errorf("mean gain %.5f, want %.5f", g, wantGain)
	}
	if v := sumVar / runs; math.Abs(v-wantVar)/wantVar > 0.02 {
		t.Errorf("mean variance %.6g, want %.6g", v, wantVar)
	}
}

// TestHarmonicFitShortAndBad: too few samples or batches give NaN
// bounds, never a confident interval; a constant phase (no cycle) does
// not determine the fit; NewHarmonicFit refuses bad options.
func TestHarmonicFitShortAndBad(t *testing.T) {
	f, _ := NewHarmonicFit(HarmonicOptions{Outputs: 2, CycleSamples: 50})
	if e := f.Result(); !math.IsNaN(e.Spread) || !math.IsNaN(real(e.Phasor[0])) {
		t.Errorf("empty fit: %+v", e)
	}
	for k := range 200 {
		th := 2 * math.Pi * float64(k) / 50
		f.Add([]float64{math.Sin(th), 1}, th)
	}
	e := f.Result()
	if e.Batches != 4 || !math.IsNaN(e.SpreadLow) || !math.IsNaN(e.T) {
		t.Errorf("4 batches: want no interval, got %+v", e)
	}
	if _, lo, hi := e.Gain(0, complex(0, -1)); !math.IsNaN(lo) || !math.IsNaN(hi) {
		t.Errorf("gain bounds %g %g with 4 batches", lo, hi)
	}
	if g, _, _ := e.Gain(0, complex(0, -1)); math.Abs(g-1) > 1e-9 {
		t.Errorf("noise-free unit sine: gain %g", g)
	}
	c, _ := NewHarmonicFit(HarmonicOptions{Outputs: 1, CycleSamples: 10})
	for range 100 {
		c.Add([]float64{1}, 0.3)
	}
	if e := c.Result(); !math.IsNaN(e.Spread) {
		t.Errorf("constant phase: want no fit, got spread %g", e.Spread)
	}
	for _, o := range []HarmonicOptions{{Outputs: 0, CycleSamples: 10}, {Outputs: 1, CycleSamples: 0.5}, {Outputs: 1, CycleSamples: math.Inf(1)},
		{Outputs: 1, CycleSamples: 10, MinBatches: 5}, {Outputs: 1, CycleSamples: 10, Level: 1}, {Outputs: 2, Center: []float64{1}, CycleSamples: 10}} {
		if _, err := NewHarmonicFit(o); err == nil {
			t.Errorf("%+v: accepted", o)
		}
	}
	y := []float64{0.1, 0.2}
	if got := testing.AllocsPerRun(1000, func() { f.Add(y, 0.5) }); got > 0 {
		t.Errorf("Add allocates %.0f times", got)
	}
}

// TestHarmonicFitMergesCorrelatedBatches: batches whose spreads follow a
// noise level that wanders slower than a batch (four batches loud, four
// quiet) fail von Neumann's test and are merged in pairs (Merged, half
// as many batches, twice as long); batches of white noise are not.
// Seeded: the white-noise case's z is one draw of a statistic that
// exceeds the limit 1 % of the time.
func TestHarmonicFitMergesCorrelatedBatches(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for _, c := range []struct {
		name   string
		level  func(k int) float64
		merged bool
	}{
		{"wandering level", func(k int) float64 { return 0.2 + 0.8*float64((k/160)%2) }, true},
		{"white noise", func(int) float64 { return 0.5 }, false},
	} {
		f, err := NewHarmonicFit(HarmonicOptions{Outputs: 1, CycleSamples: 40})
		if err != nil {
			t.Fatal(err)
		}
		for k := range 1200 { // 30 batches of 40
			th := 2 * math.Pi * float64(k) / 40
			f.Add([]float64{math.Sin(th) + c.level(k)*rng.NormFloat64()}, th)
		}
		e := f.Result()
		t.Logf("%s: merged %v, %d batches of %d, z %.2f", c.name, e.Merged, e.Batches, e.BatchSize, e.BatchCorrelationZ)
		wantB, wantS := 30, int64(40)
		if c.merged {
			wantB, wantS = 15, 80
		}
		if e.Merged != c.merged || e.Batches != wantB || e.BatchSize != wantS {
			t.Errorf("%s: merged %v, %d batches of %d (z %.2f); want merged %v, %d of %d", c.name, e.Merged, e.Batches, e.BatchSize, e.BatchCorrelationZ, c.merged, wantB, wantS)
		}
	}
}
