package estimate

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat/distuv"
)

// Online estimates the tracking error's moments from a stream of samples,
// as the monitor measures a running loop: e_k = r − y_k for each sample,
// x_k = e_kᵀe_k, over the whole run and over sliding windows of the most
// recent samples. Its memory is fixed at construction whatever the length
// of the run. It is not safe for concurrent use.
//
// # Point estimates
//
// Mean error ē = (1/n) Σ e_k (a p-vector), second moment x̄ = (1/n) Σ x_k
// (the estimate of E[eᵀe], MODEL.md §4), and std = √(x̄ − |ē|²), the
// sample counterpart of MODEL.md §5's error_std.
//
// # Confidence interval: non-overlapping batch means
//
// The x_k of a closed loop are autocorrelated, so the i.i.d. interval
// x̄ ± t·s/√n is too narrow. The method of non-overlapping batch means
// (A. M. Law, W. D. Kelton, Simulation Modeling and Analysis, 3rd ed.,
// 2000, §9.5.3; B. Schmeiser, "Batch size effects in the analysis of
// simulation output", Oper. Res. 30(3), 1982) splits the run into k
// consecutive batches of b samples with means B_1…B_k; when b is long
// against the correlation time the B_j are nearly independent and normal,
// and
//
//	x̄ ± t_{k−1, 1−α/2} · S_B/√k,   S_B² = (1/(k−1)) Σ (B_j − B̄)²
//
// is an asymptotically valid 1−α interval (t: Student's t quantile,
// gonum distuv.StudentsT). Schmeiser (1982) finds 10 to 30 batches
// enough; here the whole run keeps between MinBatches (20) and
// 2·MinBatches−1 (39) complete batches: the batch size starts at one
// sample and doubles, by merging adjacent pairs, whenever 2·MinBatches
// batches are complete (a common practice for runs of unknown length;
// memory stays at 2·MinBatches sums). The interval is centred on x̄ over
// all n samples, including those of the batch being filled; its
// half-width uses the complete batches only. Until two batches are
// complete the bounds are NaN.
//
// The effective sample size is n_eff = s_x² · k / S_B² = n·s_x²/(b·S_B²)
// (s_x² the sample variance of the x_k, by Welford's update), the number
// of independent samples that would give the same variance of x̄ (Law &
// Kelton §9.5.3 ratio of variances, common practice).
//
// # Windows
//
// A window of W samples is a ring of K = ⌊W/b⌋ batches of b = ⌈W/30⌉
// samples (per batch: Σe, Σx, Σx²; K ≤ 30) and the batch being filled;
// its estimates cover the partial batch and the most recent complete ones
// that fit in W with it (between W − b and W samples once full), its
// interval is the batch-means interval over those K' complete batches
// with t_{K'−1}, so it needs b ≫ the correlation time.
type Online struct {
	r     []float64
	e     []float64
	level float64
	// Whole run.
	n     int64
	sumE  []float64
	sumX  float64
	wMean float64 // Welford running mean and sum of squares of x
	wM2   float64
	// Whole-run batches.
	minBatches int
	batchSize  int64
	batches    []float64 // sums of x over complete batches; cap 2·minBatches
	curSum     float64
	curN       int64
	windows    []window
	tq         map[int]float64 // t quantiles by degrees of freedom
}

// OnlineOptions configures an Online estimator.
type OnlineOptions struct {
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

// OnlineStats are the estimates over the whole run or one window.
type OnlineStats struct {
	// Samples is the number of samples the estimates cover.
	Samples int64
	// Mean is ē, one entry per output.
	Mean []float64
	// SecondMoment is x̄, the estimate of E[eᵀe]; Std = √(x̄ − |ē|²).
	SecondMoment, Std float64
	// CILow, CIHigh bound E[eᵀe] at the configured level (batch means);
	// NaN with fewer than two complete batches.
	CILow, CIHigh float64
	// EffectiveSamples is n·s_x²/(b·S_B²); NaN with fewer than two
	// complete batches or when every sample is equal, +Inf when only the
	// batch means are.
	EffectiveSamples float64
	// Batches and BatchSize are the complete batches behind the interval
	// and their length in samples.
	Batches   int
	BatchSize int64
}

// window is one sliding window: a ring of batch sums.
type window struct {
	length int   // W, samples
	b      int64 // batch size
	k      int   // ring capacity
	sumE   []float64
	sumX   []float64
	sumXX  []float64
	filled int // complete batches in the ring
	head   int // next slot to write
	curE   []float64
	curX   float64
	curXX  float64
	curN   int64
}

// windowBatches is K, the number of batches a window is cut into.
const windowBatches = 30

// NewOnline returns an estimator for len(opts.Setpoint) outputs.
func NewOnline(opts OnlineOptions) (*Online, error) {
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
	o := &Online{
		r: append([]float64(nil), opts.Setpoint...), e: make([]float64, p), level: opts.Level,
		sumE: make([]float64, p), minBatches: opts.MinBatches, batchSize: 1,
		batches: make([]float64, 0, 2*opts.MinBatches), tq: map[int]float64{},
	}
	for _, w := range opts.Windows {
		if w < 2 {
			return nil, fmt.Errorf("window: want at least 2 samples, got %d", w)
		}
		b := (int64(w) + windowBatches - 1) / windowBatches
		k := int(int64(w) / b)
		o.windows = append(o.windows, window{length: w, b: b, k: k,
			sumE: make([]float64, k*p), sumX: make([]float64, k), sumXX: make([]float64, k),
			curE: make([]float64, p)})
	}
	// Every quantile the intervals can ask for, so that Add and the
	// stats never allocate.
	for df := 1; df < 2*opts.MinBatches || df < windowBatches; df++ {
		o.tq[df] = distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(df)}.Quantile(1 - (1-opts.Level)/2)
	}
	return o, nil
}

// Outputs is p, the number of outputs.
func (o *Online) Outputs() int { return len(o.r) }

// Windows returns the window lengths in samples.
func (o *Online) Windows() []int {
	out := make([]int, len(o.windows))
	for i, w := range o.windows {
		out[i] = w.length
	}
	return out
}

// Add takes one sample y (p outputs): e = r − y.
func (o *Online) Add(y []float64) {
	for i := range o.e {
		o.e[i] = o.r[i] - y[i]
	}
	o.AddError(o.e)
}

// AddError takes one error sample e directly.
func (o *Online) AddError(e []float64) {
	x := 0.0
	for i, v := range e {
		x += v * v
		o.sumE[i] += v
	}
	o.n++
	o.sumX += x
	d := x - o.wMean
	o.wMean += d / float64(o.n)
	o.wM2 += d * (x - o.wMean)

	o.curSum += x
	o.curN++
	if o.curN == o.batchSize {
		o.batches = append(o.batches, o.curSum)
		o.curSum, o.curN = 0, 0
		if len(o.batches) == 2*o.minBatches {
			for j := 0; j < o.minBatches; j++ {
				o.batches[j] = o.batches[2*j] + o.batches[2*j+1]
			}
			o.batches = o.batches[:o.minBatches]
			o.batchSize *= 2
		}
	}
	for i := range o.windows {
		o.windows[i].add(e, x)
	}
}

func (w *window) add(e []float64, x float64) {
	for i, v := range e {
		w.curE[i] += v
	}
	w.curX += x
	w.curXX += x * x
	w.curN++
	if w.curN < w.b {
		return
	}
	p := len(e)
	copy(w.sumE[w.head*p:(w.head+1)*p], w.curE)
	w.sumX[w.head], w.sumXX[w.head] = w.curX, w.curXX
	w.head = (w.head + 1) % w.k
	if w.filled < w.k {
		w.filled++
	}
	clear(w.curE)
	w.curX, w.curXX, w.curN = 0, 0, 0
}

// slot is the ring index of the i-th most recent complete batch.
func (w *window) slot(i int) int { return ((w.head-1-i)%w.k + w.k) % w.k }

// Samples is the number of samples taken so far.
func (o *Online) Samples() int64 { return o.n }

func (o *Online) quantile(df int) float64 {
	if q, ok := o.tq[df]; ok {
		return q
	}
	return distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(df)}.Quantile(1 - (1-o.level)/2)
}

// Run returns the estimates over the whole run. The mean is written into
// mean when it has p entries (no allocation), else into a new slice.
func (o *Online) Run(mean []float64) OnlineStats {
	st := OnlineStats{Samples: o.n, Mean: o.meanSlice(mean), BatchSize: o.batchSize, Batches: len(o.batches)}
	nan := math.NaN()
	st.CILow, st.CIHigh, st.EffectiveSamples = nan, nan, nan
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
	k := len(o.batches)
	if k < 2 {
		return st
	}
	b := float64(o.batchSize)
	mb := 0.0
	for _, s := range o.batches {
		mb += s / b
	}
	mb /= float64(k)
	ss := 0.0
	for _, s := range o.batches {
		d := s/b - mb
		ss += d * d
	}
	sb2 := ss / float64(k-1)
	half := o.quantile(k-1) * math.Sqrt(sb2/float64(k))
	st.CILow, st.CIHigh = st.SecondMoment-half, st.SecondMoment+half
	varX := o.wM2 / (n - 1)
	st.EffectiveSamples = effective(varX, sb2, float64(k))
	return st
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

func (o *Online) meanSlice(mean []float64) []float64 {
	if len(mean) != len(o.r) {
		mean = make([]float64, len(o.r))
	}
	return mean
}

// Window returns the estimates over window i (in the order of
// OnlineOptions.Windows); mean as for Run.
func (o *Online) Window(i int, mean []float64) OnlineStats {
	w := &o.windows[i]
	p := len(o.r)
	st := OnlineStats{Mean: o.meanSlice(mean), BatchSize: w.b, Batches: w.filled}
	nan := math.NaN()
	st.CILow, st.CIHigh, st.EffectiveSamples = nan, nan, nan
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
	mb, cx, cxx := 0.0, 0.0, 0.0
	for i := 0; i < k; i++ {
		s := w.slot(i)
		mb += w.sumX[s] / b
		cx += w.sumX[s]
		cxx += w.sumXX[s]
	}
	mb /= float64(k)
	ss := 0.0
	for i := 0; i < k; i++ {
		d := w.sumX[w.slot(i)]/b - mb
		ss += d * d
	}
	sb2 := ss / float64(k-1)
	half := o.quantile(k-1) * math.Sqrt(sb2/float64(k))
	st.CILow, st.CIHigh = st.SecondMoment-half, st.SecondMoment+half
	// Sample variance of x over the complete batches, from its sums.
	nb := float64(k) * b
	varX := math.Max(0, (cxx-cx*cx/nb)/(nb-1))
	st.EffectiveSamples = effective(varX, sb2, float64(k))
	return st
}
