package online

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat/distuv"
)

// Estimator estimates the tracking error's moments from a stream of samples,
// as the monitor measures a running loop: e_k = r − y_k for each sample,
// x_k = e_kᵀe_k, over the whole run and over sliding windows of the most
// recent samples. Its memory is fixed at construction whatever the length
// of the run. It is not safe for concurrent use. The interval and the
// verdict built on it are described in estimate/model.md §9.
//
// # Point estimates
//
// Mean error ē = (1/n) Σ e_k (a p-vector), second moment x̄ = (1/n) Σ x_k
// (the estimate of the steady E[eᵀe] the prediction gives), and
// std = √(x̄ − |ē|²), the sample counterpart of the predicted error
// standard deviation.
//
// # Batch means
//
// The x_k of a closed loop are autocorrelated, so the i.i.d. interval
// x̄ ± t·s/√n is too narrow. The method of non-overlapping batch means
// (A. M. Law, W. D. Kelton, Simulation Modeling and Analysis, 3rd ed.,
// 2000, §9.5.3; B. Schmeiser, "Batch size effects in the analysis of
// simulation output", Oper. Res. 30(3), 1982) splits the run into k
// consecutive batches of b samples with means B_1…B_k; when b is long
// against the correlation time the B_j are nearly independent and
// normal, and S_B/√k, S_B² = (1/(k−1)) Σ (B_j − B̄)², estimates the
// standard error of x̄. Schmeiser (1982) finds 10 to 30 batches enough;
// here the whole run keeps between MinBatches (20) and 2·MinBatches−1
// (39) complete batches: the batch size starts at one sample and
// doubles, by merging adjacent pairs, whenever 2·MinBatches batches are
// complete (a common practice for runs of unknown length; memory stays at
// 2·MinBatches sums). The interval is centred on x̄ over all n samples,
// including those of the batch being filled; its width uses the complete
// batches only. Until two batches are complete the bounds are NaN.
//
// # Confidence interval: on the log scale
//
// E[eᵀe] is positive and x̄ is skewed to the right when the batches are
// few or short (each x_k is a sum of squares), so the symmetric interval
// x̄ ± t·S_B/√k can reach below zero and then holds every prediction. The
// interval is built for log E[eᵀe] instead and mapped back:
//
//	[x̄·exp(−w), x̄·exp(+w)],   w = t_{k−1, 1−α/2} · S_B / (√k · x̄)
//
// by the delta method (Var log x̄ ≈ Var x̄ / x̄²; G. Casella, R. L. Berger,
// Statistical Inference, 2nd ed., 2002, §5.5.4, section number from
// memory), with Student's t on k−1 degrees of freedom for the few batches
// (gonum distuv.StudentsT). The same half-width on the log scale is the
// common practice for positive quantities (rates, variances); its lower
// bound is positive whenever x̄ is, its upper bound lies farther from x̄
// than the lower one, as the skew of x̄ asks, and for a narrow interval it
// is the symmetric one to first order. When every batch mean is equal the
// interval is [x̄, x̄]. TestOnlineLogIntervalCoverage checks the coverage
// on a process whose E[eᵀe] is known in closed form.
//
// # Are the batches long enough?
//
// The interval needs batch means that are nearly independent. The test
// of their serial order is von Neumann's ratio of the mean square successive
// difference to the variance (J. von Neumann, "Distribution of the ratio
// of the mean square successive difference to the variance", Ann. Math.
// Statist. 12, 1941, 367–395), written as the lag-1 serial correlation
//
//	C = 1 − Σ_{j<k} (D_{j+1} − D_j)² / (2 Σ_j (D_j − D̄)²)
//
// (L. C. Young, "On randomness in ordered sequences", Ann. Math. Statist.
// 12, 1941, 293–300). For k independent normal D_j, C has mean 0 and
// variance (k−2)/(k²−1) and is close to normal for k ≥ 8 (Young 1941, from
// memory; TestOnlineBatchCorrelationNullLaw checks both by Monte Carlo);
// Z = C / √((k−2)/(k²−1)) is reported and a caller rejects independence
// when Z is large (positively correlated batch means: batches short against
// the correlation time). Fishman uses the same test to choose the batch
// size (G. S. Fishman, "Grouping observations in digital simulation",
// Management Sci. 24(5), 1978, 510–521). D_j is B_j minus the batch's
// mean reference value (AddErrorRef: the prediction in force at each
// sample), so that a trend the caller expects, such as a ramp of the
// network, is not taken for correlation; with AddError the reference is 0
// and D_j = B_j.
//
// The test sees only correlation between neighbouring batches, and with
// 10 to 39 of them it sees it only when strong. The second check is on
// the correlation time itself: the effective sample size
//
//	n_eff = s_x² · k / S_B² = n·s_x²/(b·S_B²)
//
// (s_x² the sample variance of the x_k, by Welford's update) is the number
// of independent samples that would give the same variance of x̄ (Law &
// Kelton §9.5.3 ratio of variances, common practice), so b·n_eff/n =
// n_eff/k estimates how many correlation times one batch spans. Batches
// are long enough when they span at least MinEffectivePerBatch (3) of
// them: for an x whose autocorrelation decays as r^h with r near 1, the
// lag-1 correlation of means of b samples is about τ/(4b), τ = (1+r)/(1−r),
// so 0.08 at b = 3τ (from the autocovariance of AR(1) batch sums, common
// practice; batches many times the integrated autocorrelation time are the
// usual requirement, e.g. C. J. Geyer, "Practical Markov chain Monte
// Carlo", Statistical Science 7(4), 1992, §3, from memory). When the batches
// are far shorter than the correlation time, n_eff itself comes out near
// k (each batch looks like one sample), so the check fails as it should.
//
// ShortBatches reports either failure. When the whole run's batches are
// short, Run merges them in pairs once, if at least MinMergedBatches
// remain, and reports the interval, n_eff and the test of the merged
// batches (Merged): the step of Fishman's procedure that doubles the batch
// size when the test rejects, done once and at query time so that memory
// stays fixed. Whether the batches are then long enough is for the caller
// to decide (ShortBatches again).
//
// Whatever the correlation, the mean of a stationary sequence varies no
// more than one of its values: Var x̄ ≤ Var x_k (Cauchy–Schwarz on the
// covariances, common practice). XStd, the standard deviation of the x_k,
// is reported so that a caller whose batches are short can still judge
// against that worst case.
//
// # Windows
//
// A window of W samples is a ring of K = ⌊W/b⌋ batches of b = ⌈W/30⌉
// samples (per batch: Σe, Σx, Σx², Σref; K ≤ 30) and the batch being
// filled; its estimates cover the partial batch and the most recent
// complete ones that fit in W with it (between W − b and W samples once
// full), its interval is the log-scale batch-means interval over those K'
// complete batches with t_{K'−1}, so it needs b ≫ the correlation time.
type Estimator struct {
	r     []float64
	e     []float64
	level float64
	// Whole run.
	n     int64
	sumE  []float64
	sumX  float64
	wMean float64 // Welford running mean and sum of squares of x
	wM2   float64
	maxX  float64 // the largest x so far
	// Whole-run batches.
	minBatches int
	batchSize  int64
	batches    []float64 // sums of x over complete batches; cap 2·minBatches
	refs       []float64 // sums of the reference over the same batches
	curSum     float64
	curRef     float64
	curN       int64
	windows    []window
	tq         map[int]float64 // t quantiles by degrees of freedom
	// Scratch, so that Run and Window do not allocate: batch means less
	// reference, and merged (or window) batch sums and reference sums.
	diffs, msum, mref []float64
}

// Options configures an Estimator.
type Options struct {
	// Setpoint is r; its length is the number of outputs p.
	Setpoint []float64
	// Windows are the sliding window lengths, in samples (each ≥ 2).
	Windows []int
	// Level is the confidence level of the intervals (default 0.95).
	Level float64
	// MinBatches is the least number of complete batches of the
	// whole-run interval once that many exist (default 20, at least 2).
	MinBatches int
}

// Stats are the estimates over the whole run or one window.
type Stats struct {
	// Samples is the number of samples the estimates cover.
	Samples int64
	// Mean is ē, one entry per output.
	Mean []float64
	// SecondMoment is x̄, the estimate of E[eᵀe]; Std = √(x̄ − |ē|²).
	SecondMoment, Std float64
	// CILow, CIHigh bound E[eᵀe] at the configured level (batch means on
	// the log scale: CILow > 0 whenever SecondMoment is; both equal
	// SecondMoment when every batch mean is equal); NaN with fewer than
	// two complete batches. CIHigh may be +Inf for a very wide interval.
	CILow, CIHigh float64
	// T is the Student t quantile behind the interval (t_{k−1} at the
	// level); NaN without an interval.
	T float64
	// EffectiveSamples is n·s_x²/(b·S_B²); NaN with fewer than two
	// complete batches or when every sample is equal, +Inf when only the
	// batch means are.
	EffectiveSamples float64
	// XStd is the sample standard deviation of the x_k = e_kᵀe_k (over
	// the run, or over a window's complete batches); NaN with fewer than
	// two samples.
	XStd float64
	// Batches and BatchSize are the complete batches behind the interval
	// and their length in samples.
	Batches   int
	BatchSize int64
	// BatchCorrelation is von Neumann's lag-1 serial correlation C of the
	// complete batch means (less their mean reference), and
	// BatchCorrelationZ = C/√((k−2)/(k²−1)), about standard normal when
	// the batch means are independent; both NaN with fewer than three
	// complete batches or when the batch means are equal to within
	// rounding.
	BatchCorrelation, BatchCorrelationZ float64
	// MaxShare is the largest single x_k over Σ x_k (the whole run only;
	// NaN for a window or before a positive x): see Converging.
	MaxShare float64
	// Merged is set when the whole-run batches were short
	// (ShortBatches) and at least 2·MinMergedBatches of them were merged
	// in pairs: Batches, BatchSize, the interval, n_eff and the
	// correlation are then those of the merged batches.
	Merged bool
}

// ShortBatches reports whether the batches behind st's interval are
// short against the correlation time: their means correlated
// (BatchCorrelationZ above BatchCorrelationZMax) or spanning fewer than
// MinEffectivePerBatch correlation times (EffectiveSamples below
// MinEffectivePerBatch·Batches). NaN values (too few batches, equal
// values) fail neither check.
func (st Stats) ShortBatches() bool {
	return st.BatchCorrelationZ > BatchCorrelationZMax || st.EffectiveSamples < MinEffectivePerBatch*float64(st.Batches)
}

// Converging reports whether the run's mean of eᵀe behaves as the mean of
// a variable with a finite mean: with at least MinShareSamples samples,
// no single sample may hold more than MaxSampleShare of the sum. For x
// with a finite mean the largest of n samples is a vanishing share of
// their sum as n grows (the strong law of large numbers; for light tails
// the largest grows as log n, common practice); for a heavy tail without
// a mean — a loop almost surely but not mean-square stable
// (estimate/model.md §16) — the largest term keeps a share of order one
// however long the run, and each new outage makes the estimate jump. A
// Gaussian error exceeds the bound at 2000 samples only beyond 10σ.
// Windows and short runs always converge.
func (st Stats) Converging() bool {
	return st.Samples < MinShareSamples || !(st.MaxShare > MaxSampleShare)
}

// The non-convergence rule (Converging).
const (
	MaxSampleShare  = 0.05
	MinShareSamples = 2000
)

// MinEffectivePerBatch is the least number of correlation times a batch
// must span: n_eff/k ≥ 3 (see Estimator).
const MinEffectivePerBatch = 3.0

// BatchCorrelationZMax is the one-sided 1 % point of the standard normal
// law, Φ⁻¹(0.99): a batch-correlation z-score above it rejects
// independent batch means at the 1 % level (see Estimator).
const BatchCorrelationZMax = 2.3263478740408408

// MinMergedBatches is the least number of batches the whole-run interval
// merges down to when its batches are correlated: Schmeiser (1982) finds
// 10 to 30 batches enough, and below 10 both the t quantile (2.26 at 9
// degrees of freedom, 2.09 at 19) and the weak power of the correlation
// test make fewer, longer batches a poor trade (common practice).
const MinMergedBatches = 10

// window is one sliding window: a ring of batch sums.
type window struct {
	length int   // W, samples
	b      int64 // batch size
	k      int   // ring capacity
	sumE   []float64
	sumX   []float64
	sumXX  []float64
	sumRef []float64
	filled int // complete batches in the ring
	head   int // next slot to write
	curE   []float64
	curX   float64
	curXX  float64
	curRef float64
	curN   int64
}

// equalWithinRounding is the relative spread under which batch means are
// taken as equal (sums of up to 2³¹ terms in float64 round to about
// 1e-16·√n relative; common practice).
const equalWithinRounding = 1e-12

// windowBatches is K, the number of batches a window is cut into.
const windowBatches = 30

// New returns an estimator for len(opts.Setpoint) outputs.
func New(opts Options) (*Estimator, error) {
	p := len(opts.Setpoint)
	if p == 0 {
		return nil, fmt.Errorf("setpoint: want at least one output")
	}
	if opts.Level == 0 {
		opts.Level = 0.95
	}
	if !(opts.Level > 0 && opts.Level < 1) {
		return nil, fmt.Errorf("level: want a confidence level in (0, 1), got %g", opts.Level)
	}
	if opts.MinBatches == 0 {
		opts.MinBatches = 20
	}
	if opts.MinBatches < 2 {
		return nil, fmt.Errorf("min batches: want at least 2, got %d", opts.MinBatches)
	}
	o := &Estimator{
		r: append([]float64(nil), opts.Setpoint...), e: make([]float64, p), level: opts.Level,
		sumE: make([]float64, p), minBatches: opts.MinBatches, batchSize: 1,
		batches: make([]float64, 0, 2*opts.MinBatches), refs: make([]float64, 0, 2*opts.MinBatches),
		tq: map[int]float64{}, diffs: make([]float64, 0, max(2*opts.MinBatches, windowBatches)),
		msum: make([]float64, 0, max(opts.MinBatches, windowBatches)), mref: make([]float64, 0, max(opts.MinBatches, windowBatches)),
	}
	for _, w := range opts.Windows {
		if w < 2 {
			return nil, fmt.Errorf("window: want at least 2 samples, got %d", w)
		}
		b := (int64(w) + windowBatches - 1) / windowBatches
		k := int(int64(w) / b)
		o.windows = append(o.windows, window{length: w, b: b, k: k,
			sumE: make([]float64, k*p), sumX: make([]float64, k), sumXX: make([]float64, k),
			sumRef: make([]float64, k), curE: make([]float64, p)})
	}
	// Every quantile the intervals can ask for, so that Add and the
	// stats never allocate.
	for df := 1; df < 2*opts.MinBatches || df < windowBatches; df++ {
		o.tq[df] = distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(df)}.Quantile(1 - (1-opts.Level)/2)
	}
	return o, nil
}

// Outputs is p, the number of outputs.
func (o *Estimator) Outputs() int { return len(o.r) }

// Windows returns the window lengths in samples.
func (o *Estimator) Windows() []int {
	out := make([]int, len(o.windows))
	for i, w := range o.windows {
		out[i] = w.length
	}
	return out
}

// Add takes one sample y (p outputs): e = r − y.
func (o *Estimator) Add(y []float64) {
	for i := range o.e {
		o.e[i] = o.r[i] - y[i]
	}
	o.AddErrorRef(o.e, 0)
}

// AddError takes one error sample e directly.
func (o *Estimator) AddError(e []float64) { o.AddErrorRef(e, 0) }

// AddErrorRef takes one error sample e with a reference value ref for
// its eᵀe (the predicted E[eᵀe] in force): the batch-correlation test
// runs on the batch means less the mean of ref over each batch, so that a
// trend the reference follows is not counted as correlation. ref must be
// finite; it changes no estimate or interval.
func (o *Estimator) AddErrorRef(e []float64, ref float64) {
	x := 0.0
	for i, v := range e {
		x += v * v
		o.sumE[i] += v
	}
	o.n++
	o.sumX += x
	o.maxX = math.Max(o.maxX, x)
	d := x - o.wMean
	o.wMean += d / float64(o.n)
	o.wM2 += d * (x - o.wMean)

	o.curSum += x
	o.curRef += ref
	o.curN++
	if o.curN == o.batchSize {
		o.batches = append(o.batches, o.curSum)
		o.refs = append(o.refs, o.curRef)
		o.curSum, o.curRef, o.curN = 0, 0, 0
		if len(o.batches) == 2*o.minBatches {
			for j := 0; j < o.minBatches; j++ {
				o.batches[j] = o.batches[2*j] + o.batches[2*j+1]
				o.refs[j] = o.refs[2*j] + o.refs[2*j+1]
			}
			o.batches = o.batches[:o.minBatches]
			o.refs = o.refs[:o.minBatches]
			o.batchSize *= 2
		}
	}
	for i := range o.windows {
		o.windows[i].add(e, x, ref)
	}
}

func (w *window) add(e []float64, x, ref float64) {
	for i, v := range e {
		w.curE[i] += v
	}
	w.curX += x
	w.curXX += x * x
	w.curRef += ref
	w.curN++
	if w.curN < w.b {
		return
	}
	p := len(e)
	copy(w.sumE[w.head*p:(w.head+1)*p], w.curE)
	w.sumX[w.head], w.sumXX[w.head], w.sumRef[w.head] = w.curX, w.curXX, w.curRef
	w.head = (w.head + 1) % w.k
	if w.filled < w.k {
		w.filled++
	}
	clear(w.curE)
	w.curX, w.curXX, w.curRef, w.curN = 0, 0, 0, 0
}

// slot is the ring index of the i-th most recent complete batch.
func (w *window) slot(i int) int { return ((w.head-1-i)%w.k + w.k) % w.k }

// Samples is the number of samples taken so far.
func (o *Estimator) Samples() int64 { return o.n }

func (o *Estimator) quantile(df int) float64 {
	if q, ok := o.tq[df]; ok {
		return q
	}
	return distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(df)}.Quantile(1 - (1-o.level)/2)
}

// LogInterval is the log-scale interval [x̄·e^{−w}, x̄·e^{+w}],
// w = t·se/x̄, of a positive mean x̄ with standard error se and Student
// quantile t (see Estimator): [x̄, x̄] when se is 0, NaN bounds when x̄ is
// not positive and se is, or when an input is NaN.
func LogInterval(mean, se, t float64) (lo, hi float64) {
	switch {
	case math.IsNaN(mean) || math.IsNaN(se) || math.IsNaN(t) || se < 0:
		return math.NaN(), math.NaN()
	case se == 0:
		return mean, mean
	case !(mean > 0):
		return math.NaN(), math.NaN()
	}
	w := t * se / mean
	return mean * math.Exp(-w), mean * math.Exp(w)
}

// serialCorrelation is von Neumann's lag-1 serial correlation C of d (in
// order) and its z-score C/√((k−2)/(k²−1)); NaN for k < 3 or values
// equal to within rounding: their spread at most equalWithinRounding of
// scale, the size of the values d was computed from (its pattern is then
// that of the rounding, not of the loop).
func serialCorrelation(d []float64, scale float64) (c, z float64) {
	k := len(d)
	if k < 3 {
		return math.NaN(), math.NaN()
	}
	m := 0.0
	for _, v := range d {
		m += v
	}
	m /= float64(k)
	ss, sd := 0.0, 0.0
	for j, v := range d {
		ss += (v - m) * (v - m)
		if j > 0 {
			sd += (v - d[j-1]) * (v - d[j-1])
		}
	}
	if !(ss > 0) || math.Sqrt(ss/float64(k)) <= equalWithinRounding*math.Abs(scale) {
		return math.NaN(), math.NaN()
	}
	c = 1 - sd/(2*ss)
	fk := float64(k)
	return c, c / math.Sqrt((fk-2)/(fk*fk-1))
}

// Run returns the estimates over the whole run. The mean is written into
// mean when it has p entries (no allocation), else into a new slice.
func (o *Estimator) Run(mean []float64) Stats {
	st := Stats{Samples: o.n, Mean: o.meanSlice(mean), BatchSize: o.batchSize, Batches: len(o.batches), MaxShare: math.NaN()}
	nan := math.NaN()
	st.CILow, st.CIHigh, st.EffectiveSamples, st.XStd, st.T = nan, nan, nan, nan, nan
	st.BatchCorrelation, st.BatchCorrelationZ = nan, nan
	if o.n == 0 {
		st.SecondMoment, st.Std = nan, nan
		for i := range st.Mean {
			st.Mean[i] = nan
		}
		return st
	}
	n := float64(o.n)
	ee := 0.0
	for i, s := range o.sumE {
		st.Mean[i] = s / n
		ee += st.Mean[i] * st.Mean[i]
	}
	st.SecondMoment = o.sumX / n
	st.Std = math.Sqrt(math.Max(0, st.SecondMoment-ee))
	if o.sumX > 0 {
		st.MaxShare = o.maxX / o.sumX
	}
	varX := o.wM2 / (n - 1)
	if o.n > 1 {
		st.XStd = math.Sqrt(varX)
	}
	k := len(o.batches)
	if k < 2 {
		return st
	}
	o.batchStats(&st, o.batches, o.refs, float64(o.batchSize), varX)
	if st.ShortBatches() && k/2 >= MinMergedBatches {
		// Batches short against the correlation time: pairs of them, twice
		// as long, once (an odd newest batch stays out of the width but in
		// x̄).
		o.msum, o.mref = o.msum[:0], o.mref[:0]
		for j := 0; j+1 < k; j += 2 {
			o.msum = append(o.msum, o.batches[j]+o.batches[j+1])
			o.mref = append(o.mref, o.refs[j]+o.refs[j+1])
		}
		st.Batches, st.BatchSize, st.Merged = len(o.msum), 2*o.batchSize, true
		o.batchStats(&st, o.msum, o.mref, float64(st.BatchSize), varX)
	}
	return st
}

// batchStats sets st's interval, effective samples and batch correlation
// from complete batches of b samples with x sums sums and reference sums
// refs (oldest first), and varX, the sample variance of x.
func (o *Estimator) batchStats(st *Stats, sums, refs []float64, b, varX float64) {
	k := len(sums)
	mb := 0.0
	for _, s := range sums {
		mb += s / b
	}
	mb /= float64(k)
	ss := 0.0
	for _, s := range sums {
		d := s/b - mb
		ss += d * d
	}
	sb2 := ss / float64(k-1)
	// Spreads within rounding of the values are no spread.
	if math.Sqrt(sb2) <= equalWithinRounding*math.Abs(mb) {
		sb2 = 0
	}
	if math.Sqrt(varX) <= equalWithinRounding*math.Abs(mb) {
		varX = 0
	}
	st.T = o.quantile(k - 1)
	st.CILow, st.CIHigh = LogInterval(st.SecondMoment, math.Sqrt(sb2/float64(k)), st.T)
	st.EffectiveSamples = effective(varX, sb2, float64(k))
	o.diffs = o.diffs[:0]
	for j, s := range sums {
		o.diffs = append(o.diffs, (s-refs[j])/b)
	}
	st.BatchCorrelation, st.BatchCorrelationZ = serialCorrelation(o.diffs, mb)
}

// effective is n_eff = s_x²·k/S_B² (Law & Kelton §9.5.3, common practice).
func effective(varX, sb2, k float64) float64 {
	if sb2 == 0 {
		if varX == 0 {
			return math.NaN()
		}
		return math.Inf(1)
	}
	return varX * k / sb2
}

func (o *Estimator) meanSlice(mean []float64) []float64 {
	if len(mean) != len(o.r) {
		mean = make([]float64, len(o.r))
	}
	return mean
}

// Window returns the estimates over window i (in the order of
// Options.Windows); mean as for Run.
func (o *Estimator) Window(i int, mean []float64) Stats {
	w := &o.windows[i]
	p := len(o.r)
	st := Stats{Mean: o.meanSlice(mean), BatchSize: w.b, Batches: w.filled, MaxShare: math.NaN()}
	nan := math.NaN()
	st.CILow, st.CIHigh, st.EffectiveSamples, st.XStd, st.T = nan, nan, nan, nan, nan
	st.BatchCorrelation, st.BatchCorrelationZ = nan, nan
	// The most recent complete batches that, with the partial one, fit
	// in the window.
	use := w.filled
	if int64(use)*w.b+w.curN > int64(w.length) {
		use--
	}
	st.Batches = use
	n := int64(use)*w.b + w.curN
	st.Samples = n
	if n == 0 {
		st.SecondMoment, st.Std = nan, nan
		for j := range st.Mean {
			st.Mean[j] = nan
		}
		return st
	}
	sx, sxx := w.curX, w.curXX
	copy(st.Mean, w.curE)
	for i := 0; i < use; i++ {
		s := w.slot(i)
		for j := 0; j < p; j++ {
			st.Mean[j] += w.sumE[s*p+j]
		}
		sx += w.sumX[s]
		sxx += w.sumXX[s]
	}
	fn := float64(n)
	ee := 0.0
	for j := range st.Mean {
		st.Mean[j] /= fn
		ee += st.Mean[j] * st.Mean[j]
	}
	st.SecondMoment = sx / fn
	st.Std = math.Sqrt(math.Max(0, st.SecondMoment-ee))
	k := use
	if k < 2 {
		return st
	}
	b := float64(w.b)
	cx, cxx := 0.0, 0.0
	o.msum, o.mref = o.msum[:0], o.mref[:0]
	for i := k - 1; i >= 0; i-- { // oldest first
		s := w.slot(i)
		cx += w.sumX[s]
		cxx += w.sumXX[s]
		o.msum = append(o.msum, w.sumX[s])
		o.mref = append(o.mref, w.sumRef[s])
	}
	// Sample variance of x over the complete batches, from its sums.
	nb := float64(k) * b
	varX := math.Max(0, (cxx-cx*cx/nb)/(nb-1))
	st.XStd = math.Sqrt(varX)
	o.batchStats(&st, o.msum, o.mref, b, varX)
	return st
}
