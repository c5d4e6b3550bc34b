package online

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// ar1Errors is a recorded sample set for the estimator checks: two
// outputs, each an AR(1) process y_k = r + a (y_{k−1} − r) + σ ε_k
// (seeded; a = phi for the first, 0.5 for the second), so that the
// samples are autocorrelated and the error has a nonzero mean once an
// offset is added. Invented data.
func ar1Errors(n int, seed uint64, phi float64) [][]float64 {
	rng := rand.New(rand.NewPCG(seed, 1))
	out := make([][]float64, n)
	s := []float64{0, 0}
	for k := range out {
		s[0] = phi*s[0] + 0.1*rng.NormFloat64()
		s[1] = 0.5*s[1] + 0.3*rng.NormFloat64()
		out[k] = []float64{0.05 + s[0], -0.02 + s[1]}
	}
	return out
}

// direct is the slow, obviously correct reference: the sums over a slice
// of samples.
func direct(es [][]float64) (mean []float64, second, std float64) {
	mean = make([]float64, len(es[0]))
	for _, e := range es {
		for i, v := range e {
			mean[i] += v
			second += v * v
		}
	}
	n := float64(len(es))
	ee := 0.0
	for i := range mean {
		mean[i] /= n
		ee += mean[i] * mean[i]
	}
	second /= n
	return mean, second, math.Sqrt(second - ee)
}

// batchCI is the log-scale batch-means interval of Estimator's doc
// comment, computed directly from the samples: k batches of b samples
// from the start (when whole, merged in pairs once when they are short —
// von Neumann z-score above Φ⁻¹(0.99) or fewer than 3 effective samples
// per batch, with varX the run's sample variance of x — and k/2 ≥ 10, as
// Run does), centred on the mean of all samples given; it returns the
// bounds, the batches used and the lag-1 serial correlation of their
// means.
func batchCI(es [][]float64, k, b int, centre, level float64, whole bool, varX float64) (lo, hi float64, kk, bb int, c float64) {
	means := func(k, b int) []float64 {
		m := make([]float64, k)
		for j := 0; j < k; j++ {
			for _, e := range es[j*b : (j+1)*b] {
				for _, v := range e {
					m[j] += v * v
				}
			}
			m[j] /= float64(b)
		}
		return m
	}
	spread := func(bm []float64) float64 {
		m := 0.0
		for _, v := range bm {
			m += v
		}
		m /= float64(len(bm))
		ss := 0.0
		for _, v := range bm {
			ss += (v - m) * (v - m)
		}
		return ss / float64(len(bm)-1)
	}
	bm := means(k, b)
	c, z := vonNeumann(bm)
	if whole && (z > 2.3263478740408408 || varX*float64(k)/spread(bm) < 3*float64(k)) && k/2 >= 10 {
		k, b = k/2, 2*b
		bm = means(k, b)
		c, _ = vonNeumann(bm)
	}
	t := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(k - 1)}.Quantile(1 - (1-level)/2)
	w := t * math.Sqrt(spread(bm)/float64(k)) / centre
	return centre / math.Exp(w), centre * math.Exp(w), k, b, c
}

// sampleVariance is the sample variance of x = eᵀe over es.
func sampleVariance(es [][]float64) float64 {
	xs := make([]float64, len(es))
	m := 0.0
	for i, e := range es {
		for _, v := range e {
			xs[i] += v * v
		}
		m += xs[i]
	}
	m /= float64(len(xs))
	ss := 0.0
	for _, x := range xs {
		ss += (x - m) * (x - m)
	}
	return ss / float64(len(xs)-1)
}

// vonNeumann is von Neumann's ratio of the mean square successive
// difference to the variance, VN = Σ(d_{j+1} − d_j)²/Σ(d_j − d̄)², as the
// serial correlation C = 1 − VN/2 and its z-score (VN − 2)/σ_VN with
// σ_VN² = 4(k−2)/((k+1)(k−1)) (the large-sample law of VN for independent
// normal values: von Neumann 1941, as quoted by R's DescTools
// VonNeumannTest documentation).
func vonNeumann(d []float64) (c, z float64) {
	k := float64(len(d))
	m := 0.0
	for _, v := range d {
		m += v
	}
	m /= k
	num, den := 0.0, 0.0
	for j := range d {
		den += (d[j] - m) * (d[j] - m)
		if j+1 < len(d) {
			num += (d[j+1] - d[j]) * (d[j+1] - d[j])
		}
	}
	vn := num / den
	return 1 - vn/2, -(vn - 2) / math.Sqrt(4*(k-2)/((k+1)*(k-1)))
}

// Relative tolerance for sums of 10⁴–10⁵ terms in a different order:
// rounding only.
const sumTol = 1e-11

func near(a, b, tol float64) bool { return math.Abs(a-b) <= tol*math.Max(1, math.Abs(b)) }

func TestOnlineAgainstDirectComputation(t *testing.T) {
	cases := []struct {
		name    string
		n       int
		windows []int
		phi     float64
		merged  bool // the run's batches merged for their correlation
	}{
		{"short", 7, []int{3}, 0.9, false},
		{"exact batch boundary", 40 * 64, []int{100, 6000}, 0.9, false},
		{"long, partial batch", 100_003, []int{6000, 60_000, 1_000_000}, 0.9, false},
		// x = e² of an AR(1) with a = 0.999 stays correlated over
		// hundreds of samples: batches of 128 are short.
		{"correlated batches, merged", 4000, []int{1000}, 0.999, true},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			es := ar1Errors(c.n, 7, c.phi)
			r := []float64{1, 2}
			on, err := New(Options{Setpoint: r, Windows: c.windows})
			if err != nil {
				t.Fatal(err)
			}
			y := make([]float64, 2)
			for _, e := range es {
				y[0], y[1] = r[0]-e[0], r[1]-e[1] // e = r − y recovers e
				on.Add(y)
			}
			st := on.Run(nil)
			mean, second, std := direct(es)
			if st.Samples != int64(c.n) || !near(st.SecondMoment, second, sumTol) || !near(st.Std, std, 1e-9) ||
				!near(st.Mean[0], mean[0], 1e-9) || !near(st.Mean[1], mean[1], 1e-9) {
				t.Errorf("run: got n=%d mean=%v E[eᵀe]=%v std=%v, direct n=%d mean=%v E[eᵀe]=%v std=%v",
					st.Samples, st.Mean, st.SecondMoment, st.Std, c.n, mean, second, std)
			}
			// Batches: 20…39 complete ones of the reported size (10…19
			// when merged), covering the start of the run.
			lowest, highest := 20, 39
			if st.Merged {
				lowest, highest = 10, 19
			}
			if c.n >= 40 && (st.Batches < lowest || st.Batches > highest || int64(st.Batches)*st.BatchSize > int64(c.n) ||
				int64(st.Batches+1)*st.BatchSize <= int64(c.n)-st.BatchSize) {
				t.Errorf("batches %d of %d for %d samples", st.Batches, st.BatchSize, c.n)
			}
			if st.Batches >= 2 {
				k, b := st.Batches, int(st.BatchSize)
				if st.Merged { // the stored batches, before merging
					b /= 2
					k = c.n / b
				}
				if st.Merged != c.merged {
					t.Errorf("merged %v, want %v (batch correlation z %.3g)", st.Merged, c.merged, st.BatchCorrelationZ)
				}
				lo, hi, kk, bb, corr := batchCI(es, k, b, second, 0.95, true, sampleVariance(es))
				if !near(st.CILow, lo, 1e-9) || !near(st.CIHigh, hi, 1e-9) || kk != st.Batches || int64(bb) != st.BatchSize {
					t.Errorf("run CI [%v, %v] from %d×%d, direct [%v, %v] from %d×%d",
						st.CILow, st.CIHigh, st.Batches, st.BatchSize, lo, hi, kk, bb)
				}
				if st.Batches >= 3 && !near(st.BatchCorrelation, corr, 1e-9) {
					t.Errorf("run batch correlation %v, direct %v", st.BatchCorrelation, corr)
				}
			}
			for i, w := range c.windows {
				ws := on.Window(i, nil)
				if ws.Samples > int64(w) || ws.Samples > int64(c.n) {
					t.Fatalf("window %d holds %d samples", w, ws.Samples)
				}
				if min(c.n, w) > 60 && float64(ws.Samples) < 0.9*float64(min(c.n, w)) {
					t.Errorf("window %d holds only %d of %d samples", w, ws.Samples, c.n)
				}
				last := es[c.n-int(ws.Samples):]
				wm, wsec, wstd := direct(last)
				if !near(ws.SecondMoment, wsec, sumTol) || !near(ws.Mean[0], wm[0], 1e-9) || !near(ws.Std, wstd, 1e-9) {
					t.Errorf("window %d: got mean=%v E[eᵀe]=%v std=%v, direct over the last %d: %v %v %v",
						w, ws.Mean, ws.SecondMoment, ws.Std, ws.Samples, wm, wsec, wstd)
				}
				if ws.Batches >= 2 {
					full := es[c.n-int(ws.Samples) : c.n-int(ws.Samples)+ws.Batches*int(ws.BatchSize)] // oldest first
					lo, hi, _, _, corr := batchCI(full, ws.Batches, int(ws.BatchSize), ws.SecondMoment, 0.95, false, 0)
					if !near(ws.CILow, lo, 1e-9) || !near(ws.CIHigh, hi, 1e-9) {
						t.Errorf("window %d CI [%v, %v], direct [%v, %v]", w, ws.CILow, ws.CIHigh, lo, hi)
					}
					if ws.Batches >= 3 && !near(ws.BatchCorrelation, corr, 1e-9) {
						t.Errorf("window %d batch correlation %v, direct %v", w, ws.BatchCorrelation, corr)
					}
				}
			}
		})
	}
}

// The t quantiles behind the intervals, against the printed table of
// Student's t (Abramowitz & Stegun, Handbook of Mathematical Functions,
// Table 26.10, two-sided 5 %; values to three decimals, table number
// from memory).
func TestOnlineStudentQuantiles(t *testing.T) {
	on, _ := New(Options{Setpoint: []float64{0}})
	for _, c := range []struct {
		df   int
		want float64
	}{{19, 2.093}, {29, 2.045}, {30, 2.042}, {1, 12.706}} {
		if got := on.quantile(c.df); math.Abs(got-c.want) > 5e-4 {
			t.Errorf("t(%d, 0.975) = %.4f, table %.3f", c.df, got, c.want)
		}
	}
}

// With i.i.d. samples the effective sample size is about n (Law & Kelton
// §9.5.3: batch means of independent samples have variance σ²/b); with an
// AR(1) of coefficient φ it is about n (1−φ)/(1+φ) for x linear in the
// process — here x = e², so only the direction is checked.
func TestOnlineEffectiveSamples(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 3))
	iid, _ := New(Options{Setpoint: []float64{0}})
	ar, _ := New(Options{Setpoint: []float64{0}})
	s := 0.0
	const n = 200_000
	for range n {
		iid.AddError([]float64{rng.NormFloat64()})
		s = 0.95*s + rng.NormFloat64()
		ar.AddError([]float64{s})
	}
	// 20–39 batches: the ratio's sampling spread is about √(2/k) ≈ 0.3.
	if ne := iid.Run(nil).EffectiveSamples; ne < 0.4*n || ne > 2.5*n {
		t.Errorf("i.i.d.: effective samples %.0f of %d", ne, n)
	}
	if ne := ar.Run(nil).EffectiveSamples; ne > 0.2*n {
		t.Errorf("AR(0.95): effective samples %.0f of %d, want far fewer", ne, n)
	}
}

func TestOnlineDoesNotAllocate(t *testing.T) {
	on, _ := New(Options{Setpoint: []float64{1, 2}, Windows: []int{6000, 60000}})
	y, mean := []float64{0.5, 0.25}, make([]float64, 2)
	if n := testing.AllocsPerRun(10000, func() { on.Add(y) }); n != 0 {
		t.Errorf("Add: %v allocations per sample", n)
	}
	if n := testing.AllocsPerRun(100, func() { on.Run(mean); on.Window(1, mean) }); n != 0 {
		t.Errorf("Run, Window: %v allocations", n)
	}
}

// stationaryAR1 fills es with a scalar Gaussian AR(1) error
// e_k = φ e_{k−1} + σ√(1−φ²) w_k, w_k i.i.d. N(0, 1), started from its
// stationary law e_0 ~ N(0, σ²): every e_k is N(0, σ²), so E[eᵀe] = σ²
// exactly at every sample (the stationary variance of an AR(1),
// σ_w²/(1−φ²) with σ_w = σ√(1−φ²): G. E. P. Box, G. M. Jenkins, Time
// Series Analysis, §3.2.4, section from memory), and x_k = e_k² has
// autocorrelation φ^{2h} (Isserlis' theorem: Cov(e_k², e_{k+h}²) =
// 2 Cov(e_k, e_{k+h})², common practice).
func stationaryAR1(rng *rand.Rand, es []float64, phi, sigma float64) {
	e := sigma * rng.NormFloat64()
	g := sigma * math.Sqrt(1-phi*phi)
	for k := range es {
		es[k] = e
		e = phi*e + g*rng.NormFloat64()
	}
}

// The interval's coverage on a process whose E[eᵀe] is known in closed
// form (stationaryAR1, σ² = 0.04). Over 400 seeded runs the 95 % interval
// must cover σ² in a fraction within 3 binomial standard deviations of
// 0.95: √(0.95·0.05/400) = 0.0109, so [0.917, 0.983]. The cases: φ = 0.8
// (x's integrated correlation time (1+φ²)/(1−φ²) ≈ 4.6 samples) over
// 2000 samples, 31 batches of 64; φ = 0.5 over 1000 samples, 31 batches
// of 32. A third case shows the limit the verdict's minimum number of
// samples guards: φ = 0.8 over 400 samples, 25 batches of 16, where the
// batch means keep a lag-1 correlation of about 0.08 and x̄ rests on
// about 90 effective samples (for x with autocorrelation r^h, r = φ²,
// sums of b consecutive x have Var ∝ b(1+r)/(1−r) − 2r(1−r^b)/(1−r)² and
// lag-1 Cov ∝ r(1−r^b)²/(1−r)²: 4.9/63 at b = 16; common practice); its coverage is expected near 0.92 and is accepted
// in [0.88, 0.98]. The symmetric interval x̄ ± t·S_B/√k is counted beside
// it for the record.
func TestOnlineLogIntervalCoverage(t *testing.T) {
	const (
		runs  = 400
		sigma = 0.2
		truth = sigma * sigma
		band  = 3 * 0.0109 // 3 binomial standard deviations at 0.95 over 400 runs
	)
	cases := []struct {
		name   string
		phi    float64
		n      int
		lo, hi float64 // accepted coverage
	}{
		{"2000 samples, phi 0.8", 0.8, 2000, 0.95 - band, 0.95 + band},
		{"1000 samples, phi 0.5", 0.5, 1000, 0.95 - band, 0.95 + band},
		{"400 samples, phi 0.8 (short batches)", 0.8, 400, 0.88, 0.98},
	}
	for ci, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(42, uint64(ci)))
			es := make([]float64, c.n)
			covered, symmetric, above, below, merged := 0, 0, 0, 0, 0
			for range runs {
				stationaryAR1(rng, es, c.phi, sigma)
				on, _ := New(Options{Setpoint: []float64{0}})
				for _, e := range es {
					on.AddError([]float64{e})
				}
				st := on.Run(nil)
				if !(st.CILow > 0) || !(st.CIHigh >= st.CILow) {
					t.Fatalf("interval [%v, %v]", st.CILow, st.CIHigh)
				}
				switch {
				case truth < st.CILow:
					below++ // the interval lies above the truth
				case truth > st.CIHigh:
					above++
				default:
					covered++
				}
				if st.Merged {
					merged++
				}
				// The symmetric interval with the same standard error.
				w := math.Log(st.CIHigh / st.SecondMoment) // t·se/x̄
				half := w * st.SecondMoment
				if math.Abs(st.SecondMoment-truth) <= half {
					symmetric++
				}
			}
			frac := float64(covered) / runs
			t.Logf("coverage %d of %d (%.3f; truth above the interval %d, below %d; %d runs merged their batches); symmetric interval %d",
				covered, runs, frac, above, below, merged, symmetric)
			if frac < c.lo || frac > c.hi {
				t.Errorf("coverage %.3f outside [%.3f, %.3f]", frac, c.lo, c.hi)
			}
		})
	}
}

// The interval never reaches below zero and never loses x̄, whatever the
// data: few batches (2 to 200 samples, so 2 to 39 batches), skewed and
// heavy-tailed x (lognormal with σ up to 3, Pareto with shape 1.05, rare
// huge spikes among zeros, all zeros). Seeded; 3000 cases.
func TestOnlineIntervalNeverNegative(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 9))
	draws := map[string]func() float64{
		"lognormal sigma 3": func() float64 { return math.Exp(3 * rng.NormFloat64()) },
		"pareto 1.05":       func() float64 { return math.Pow(1-rng.Float64(), -1/1.05) },
		"spikes among zeros": func() float64 {
			if rng.Float64() < 0.03 {
				return 1e6 * rng.Float64()
			}
			return 0
		},
		"zeros":     func() float64 { return 0 },
		"tiny":      func() float64 { return 1e-300 * rng.Float64() },
		"two-point": func() float64 { return float64(rng.IntN(2)) * 1e3 },
	}
	for name, draw := range draws {
		for trial := range 500 {
			n := 2 + rng.IntN(199)
			on, _ := New(Options{Setpoint: []float64{0}})
			for range n {
				on.AddError([]float64{math.Sqrt(draw())})
			}
			st := on.Run(nil)
			if st.Batches < 2 {
				continue
			}
			ok := st.CILow >= 0 && st.CILow <= st.SecondMoment && st.SecondMoment <= st.CIHigh
			if st.SecondMoment > 0 && !(st.CILow > 0) {
				ok = false
			}
			if !ok {
				t.Fatalf("%s, trial %d (%d samples, %d batches): x̄ %v, interval [%v, %v]",
					name, trial, n, st.Batches, st.SecondMoment, st.CILow, st.CIHigh)
			}
		}
	}
}

// LogInterval's edge cases and its first-order agreement with the
// symmetric interval when narrow.
func TestLogInterval(t *testing.T) {
	nan := math.NaN()
	cases := []struct {
		name           string
		mean, se, q    float64
		wantLo, wantHi float64
	}{
		{"no spread", 0.5, 0, 2, 0.5, 0.5},
		{"zero mean, no spread", 0, 0, 2, 0, 0},
		{"zero mean with spread", 0, 0.1, 2, nan, nan},
		{"NaN", nan, 0.1, 2, nan, nan},
		{"e^±1", 2, 1, 2, 2 / math.E, 2 * math.E},
	}
	for _, c := range cases {
		lo, hi := LogInterval(c.mean, c.se, c.q)
		same := func(a, b float64) bool { return a == b || math.IsNaN(a) && math.IsNaN(b) || math.Abs(a-b) < 1e-15 }
		if !same(lo, c.wantLo) || !same(hi, c.wantHi) {
			t.Errorf("%s: [%v, %v], want [%v, %v]", c.name, lo, hi, c.wantLo, c.wantHi)
		}
	}
	// Narrow: within (t·se)²/x̄ of x̄ ± t·se (second order of the
	// exponential's series).
	lo, hi := LogInterval(1, 1e-3, 2)
	if math.Abs(lo-(1-2e-3)) > 4e-6 || math.Abs(hi-(1+2e-3)) > 4e-6 {
		t.Errorf("narrow: [%v, %v]", lo, hi)
	}
}

// The correlation test's null law: for k independent normal values, von
// Neumann's C has mean 0 and variance (k−2)/(k²−1), and Z exceeds
// Φ⁻¹(0.99) in about 1 % of the cases (Young 1941; the normal
// approximation of von Neumann 1941). Over 20 000 seeded sequences: the
// mean within 4 standard errors of 0, the variance within 5 % (its
// standard error is about √(2/20000) ≈ 1 % relative, a normal
// approximation), the rejection rate within 4 binomial standard
// deviations of 0.01 plus 0.005 for the normal approximation at small k.
// BatchCorrelationZMax is Φ⁻¹(0.99) by gonum's normal quantile.
func TestOnlineBatchCorrelationNullLaw(t *testing.T) {
	if q := distuv.UnitNormal.Quantile(0.99); math.Abs(q-BatchCorrelationZMax) > 1e-12 {
		t.Errorf("BatchCorrelationZMax %v, Φ⁻¹(0.99) %v", BatchCorrelationZMax, q)
	}
	const seqs = 20_000
	for _, k := range []int{10, 20, 39} {
		rng := rand.New(rand.NewPCG(5, uint64(k)))
		d := make([]float64, k)
		sum, sum2, reject := 0.0, 0.0, 0
		for range seqs {
			for j := range d {
				d[j] = 3 + 0.1*rng.NormFloat64()
			}
			c, z := serialCorrelation(d, 3)
			sum += c
			sum2 += c * c
			if z > BatchCorrelationZMax {
				reject++
			}
		}
		mean := sum / seqs
		v := sum2/seqs - mean*mean
		fk := float64(k)
		want := (fk - 2) / (fk*fk - 1)
		rate := float64(reject) / seqs
		t.Logf("k %d: mean C %.4f, variance %.5f (law %.5f), rejected %.4f", k, mean, v, want, rate)
		if math.Abs(mean) > 4*math.Sqrt(want/seqs) || math.Abs(v/want-1) > 0.05 ||
			math.Abs(rate-0.01) > 4*math.Sqrt(0.01*0.99/seqs)+0.005 {
			t.Errorf("k %d: mean %.4f, variance %.5f (law %.5f), rejection rate %.4f (nominal 0.01)", k, mean, v, want, rate)
		}
	}
	// And it sees correlation: batch means of an AR(1) with lag-1
	// correlation 0.7 are rejected in most of 1000 sequences of 30.
	rng := rand.New(rand.NewPCG(6, 6))
	d := make([]float64, 30)
	reject := 0
	for range 1000 {
		stationaryAR1(rng, d, 0.7, 1)
		if _, z := serialCorrelation(d, 1); z > BatchCorrelationZMax {
			reject++
		}
	}
	if reject < 800 {
		t.Errorf("AR(1) 0.7 rejected in %d of 1000 sequences, want most", reject)
	}
}

// A trend that the reference follows is not correlation: x ramping from
// 1 to 3 over the run with the reference ramping along gives a small
// z-score; without the reference the same data are correlated.
func TestOnlineReferenceRemovesTrend(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 8))
	const n = 6000
	with, _ := New(Options{Setpoint: []float64{0}})
	without, _ := New(Options{Setpoint: []float64{0}})
	for k := range n {
		level := 1 + 2*float64(k)/n
		e := math.Sqrt(level) * rng.NormFloat64()
		with.AddErrorRef([]float64{e}, level)
		without.AddError([]float64{e})
	}
	zw, zo := with.Run(nil).BatchCorrelationZ, without.Run(nil).BatchCorrelationZ
	if !(zw < BatchCorrelationZMax) || !(zo > BatchCorrelationZMax) {
		t.Errorf("z with the reference %.3g, without %.3g", zw, zo)
	}
}

func TestSeqTracker(t *testing.T) {
	cases := []struct {
		name  string
		seq   []uint64
		want  SeqCounts
		class []SeqClass
	}{
		{"in order", []uint64{5, 6, 7}, SeqCounts{}, []SeqClass{SeqNext, SeqNext, SeqNext}},
		{"gap", []uint64{1, 2, 5}, SeqCounts{Gaps: 2}, nil},
		{"reorder takes back its gap", []uint64{1, 3, 2}, SeqCounts{Late: 1}, []SeqClass{SeqNext, SeqNext, SeqLate}},
		{"duplicate", []uint64{1, 2, 2, 1}, SeqCounts{Duplicates: 2}, []SeqClass{SeqNext, SeqNext, SeqDuplicate, SeqDuplicate}},
		{"late then duplicate", []uint64{1, 4, 2, 2}, SeqCounts{Gaps: 1, Late: 1, Duplicates: 1}, nil},
		{"below the first", []uint64{10, 11, 9}, SeqCounts{Stale: 1}, nil},
		{"stale beyond the window", []uint64{0, 1, 2000, 1}, SeqCounts{Gaps: 1998, Stale: 1}, nil},
		{"late inside the window after a long jump", []uint64{0, 2000, 1500}, SeqCounts{Gaps: 1998, Late: 1}, nil},
		{"restart backwards", []uint64{5_000_000, 5_000_001, 0, 1}, SeqCounts{Restarts: 1}, nil},
		{"restart forwards", []uint64{0, 1 << 30, 1<<30 + 2}, SeqCounts{Restarts: 1, Gaps: 1}, nil},
		{"bit reused after wrap of the window", []uint64{0, 1024, 0}, SeqCounts{Gaps: 1023, Stale: 1}, nil},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var tr SeqTracker
			for i, s := range c.seq {
				got := tr.Observe(s)
				if c.class != nil && got != c.class[i] {
					t.Errorf("sample %d (%d): class %d, want %d", i, s, got, c.class[i])
				}
			}
			if tr.Counts != c.want {
				t.Errorf("counts %+v, want %+v", tr.Counts, c.want)
			}
		})
	}
}
