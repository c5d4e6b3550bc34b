package online

import (
	"fmt"
	"math"
	"math/cmplx"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// HarmonicFit measures a loop's response at one frequency of a
// sinusoidal reference (estimate/model.md §15): it fits, per output,
//
//	y_k ≈ c + a cos θ_k + b sin θ_k
//
// by least squares over the samples, θ_k the reference's phase at sample
// k, so that the mean response's complex amplitude is Y = a − j b (y =
// c + Re(Y e^{jθ})), and takes the residuals' mean square, RSS/(n − 3),
// for the error's variance averaged over the phase.
//
// # Intervals for correlated samples
//
// The samples of a closed loop are correlated, so the least-squares
// standard errors, which assume independent residuals, are too narrow.
// The fit keeps its sufficient statistics (Σ1, Σcos, Σsin, Σcos², Σsin²,
// Σcos·sin and per output Σy, Σy cos, Σy sin, Σy²) in consecutive batches
// instead, as the Estimator keeps its sums: between MinBatches and
// 2·MinBatches−1 complete batches, each at least one cycle of the
// frequency long, the batch size doubling by adding adjacent pairs
// (sums add exactly). Each batch gives its own fit; when batches are long
// against the correlation time their fits are nearly independent, and
// the spread of the batch estimates over √k is the standard error of
// the whole-run estimate (batch means, A. M. Law, W. D. Kelton,
// Simulation Modeling and Analysis, 3rd ed., 2000, §9.5.3, applied to a
// regression's coefficients; common practice in simulation output
// analysis). The interval is Student's t on k − 1 degrees of freedom:
// for the gain along Y's direction, for the phase across it (the delta
// method, |Y| ≫ its standard error), for the variance on the batches'
// mean squared residuals about the whole run's fit (not each batch's own:
// see batchIntervals). When the batch spreads are serially correlated
// (von Neumann's test, as the Estimator's) and enough batches remain,
// pairs are merged once. With fewer than MinFitBatches complete batches
// the bounds are NaN: the run is too short to tell.
type HarmonicFit struct {
	p      int
	center []float64
	batch  int64 // samples per batch
	minB   int
	cur    harmSums
	done   []harmSums // complete batches
	total  harmSums
	level  float64
}

// MinFitBatches is the least number of complete batches behind an
// interval of a HarmonicFit.
const MinFitBatches = 10

type harmSums struct {
	n, c, s, cc, ss, cs float64
	y, yc, ys, yy       []float64
}

func newHarmSums(p int) harmSums {
	b := make([]float64, 4*p)
	return harmSums{y: b[:p], yc: b[p : 2*p], ys: b[2*p : 3*p], yy: b[3*p:]}
}

func (h *harmSums) add(o *harmSums) {
	h.n += o.n
	h.c += o.c
	h.s += o.s
	h.cc += o.cc
	h.ss += o.ss
	h.cs += o.cs
	for i := range h.y {
		h.y[i] += o.y[i]
		h.yc[i] += o.yc[i]
		h.ys[i] += o.ys[i]
		h.yy[i] += o.yy[i]
	}
}

func (h *harmSums) zero() {
	h.n, h.c, h.s, h.cc, h.ss, h.cs = 0, 0, 0, 0, 0, 0
	for i := range h.y {
		h.y[i], h.yc[i], h.ys[i], h.yy[i] = 0, 0, 0, 0
	}
}

// HarmonicOptions configures a HarmonicFit.
type HarmonicOptions struct {
	// Outputs is p; Center (optional, p entries) is subtracted from y
	// before the sums (the setpoint: it keeps Σy² from cancelling).
	Outputs int
	Center  []float64
	// CycleSamples is the number of samples in one cycle of the
	// frequency, f·h's inverse: the least batch size.
	CycleSamples float64
	// MinBatchSamples, when larger, is the least batch size instead: a
	// time over which the noise's variance itself wanders (a network
	// state's dwell), which batches must span for their means to be
	// nearly independent.
	MinBatchSamples int64
	// MinBatches (default 20) and Level (default 0.95) as the
	// Estimator's.
	MinBatches int
	Level      float64
}

// NewHarmonicFit returns a fit for opts.Outputs outputs.
func NewHarmonicFit(opts HarmonicOptions) (*HarmonicFit, error) {
	if opts.Outputs < 1 {
		return nil, fmt.Errorf("outputs: want at least 1, got %d", opts.Outputs)
	}
	if opts.Center != nil && len(opts.Center) != opts.Outputs {
		return nil, fmt.Errorf("center: want %d values, got %d", opts.Outputs, len(opts.Center))
	}
	if !(opts.CycleSamples >= 1) || math.IsInf(opts.CycleSamples, 0) {
		return nil, fmt.Errorf("cycle: want at least 1 sample per cycle, got %g", opts.CycleSamples)
	}
	if opts.MinBatches == 0 {
		opts.MinBatches = 20 // as the Estimator
	}
	if opts.MinBatches < MinFitBatches {
		return nil, fmt.Errorf("min batches: want at least %d, got %d", MinFitBatches, opts.MinBatches)
	}
	if opts.Level == 0 {
		opts.Level = 0.95
	}
	if !(opts.Level > 0 && opts.Level < 1) {
		return nil, fmt.Errorf("level: want a probability in (0, 1), got %g", opts.Level)
	}
	f := &HarmonicFit{p: opts.Outputs, center: make([]float64, opts.Outputs), minB: opts.MinBatches, level: opts.Level,
		batch: max(int64(math.Ceil(opts.CycleSamples-1e-9)), opts.MinBatchSamples), cur: newHarmSums(opts.Outputs), total: newHarmSums(opts.Outputs)}
	copy(f.center, opts.Center)
	f.done = make([]harmSums, 0, 2*opts.MinBatches)
	return f, nil
}

// Add takes one sample's outputs y at reference phase theta (radians).
// It does not allocate.
func (f *HarmonicFit) Add(y []float64, theta float64) {
	s, c := math.Sincos(theta)
	h := &f.cur
	h.n++
	h.c += c
	h.s += s
	h.cc += c * c
	h.ss += s * s
	h.cs += c * s
	for i := range h.y {
		v := y[i] - f.center[i]
		h.y[i] += v
		h.yc[i] += v * c
		h.ys[i] += v * s
		h.yy[i] += v * v
	}
	if int64(h.n) < f.batch {
		return
	}
	f.total.add(h)
	f.done = f.done[:len(f.done)+1]
	last := &f.done[len(f.done)-1]
	if last.y == nil {
		*last = newHarmSums(f.p)
	} else {
		last.zero()
	}
	last.add(h)
	h.zero()
	if len(f.done) == cap(f.done) {
		// Add adjacent pairs: the batch size doubles. Slot j ≥ 1 is
		// free once its own pair was added at step ⌊j/2⌋ < j, so the
		// pair sum 2j + 2j+1 moves into it by a swap (no allocation).
		for j := 0; j < len(f.done)/2; j++ {
			f.done[2*j].add(&f.done[2*j+1])
			f.done[j], f.done[2*j] = f.done[2*j], f.done[j]
		}
		f.done = f.done[:len(f.done)/2]
		f.batch *= 2
	}
}

// fit solves one set of sums' normal equations: offset, phasor and
// residual mean square per output; ok is false when the phases do not
// determine the fit (fewer than 4 samples or a singular system).
func (f *HarmonicFit) fit(h *harmSums, off []float64, ph []complex128, rms []float64) bool {
	if h.n < 4 {
		return false
	}
	a := mat.NewSymDense(3, []float64{h.n, h.c, h.s, h.c, h.cc, h.cs, h.s, h.cs, h.ss})
	var ch mat.Cholesky
	if !ch.Factorize(a) || ch.Cond() > 1e12 {
		return false
	}
	var beta mat.VecDense
	for i := 0; i < f.p; i++ {
		rhs := mat.NewVecDense(3, []float64{h.y[i], h.yc[i], h.ys[i]})
		if err := ch.SolveVecTo(&beta, rhs); err != nil {
			return false
		}
		c, ac, bs := beta.AtVec(0), beta.AtVec(1), beta.AtVec(2)
		off[i] = c + f.center[i]
		ph[i] = complex(ac, -bs)
		rss := h.yy[i] - (c*h.y[i] + ac*h.yc[i] + bs*h.ys[i])
		rms[i] = math.Max(0, rss/(h.n-3))
	}
	return true
}

// HarmonicEstimate is a HarmonicFit's result.
type HarmonicEstimate struct {
	// Samples is the number of samples; Batches and BatchSize those of
	// the interval; T its Student quantile (NaN without an interval).
	Samples   int64
	Batches   int
	BatchSize int64
	T         float64
	// Offset is c per output; Phasor Y = a − j b per output.
	Offset []float64
	Phasor []complex128
	// PhasorCov is the covariance of (Re Y_i, Im Y_i) of the whole-run
	// estimate per output, [var re, var im, cov], from the batches (NaN
	// with too few).
	PhasorCov [][3]float64
	// Variance is the residual mean square per output; Spread their sum
	// with its interval [SpreadLow, SpreadHigh].
	Variance                      []float64
	Spread, SpreadLow, SpreadHigh float64
	// BatchCorrelationZ is von Neumann's test on the batches' spreads, as
	// the Estimator's (NaN with fewer than three batches); Merged is set
	// when that test rejected the complete batches and they were merged
	// in pairs for the intervals (Batches, BatchSize and
	// BatchCorrelationZ are then the merged batches').
	BatchCorrelationZ float64
	Merged            bool
}

// Result returns the estimate over everything added so far (the batch
// being filled counts in the point estimates, not in the intervals).
func (f *HarmonicFit) Result() HarmonicEstimate {
	p := f.p
	all := newHarmSums(p)
	all.add(&f.total)
	all.add(&f.cur)
	e := HarmonicEstimate{Samples: int64(all.n), Batches: len(f.done), BatchSize: f.batch, T: math.NaN(),
		Offset: make([]float64, p), Phasor: make([]complex128, p), PhasorCov: make([][3]float64, p),
		Variance: make([]float64, p), SpreadLow: math.NaN(), SpreadHigh: math.NaN(), BatchCorrelationZ: math.NaN()}
	nan := math.NaN()
	if !f.fit(&all, e.Offset, e.Phasor, e.Variance) {
		for i := range e.Offset {
			e.Offset[i], e.Phasor[i], e.Variance[i] = nan, complex(nan, nan), nan
		}
		e.Spread = nan
		for i := range e.PhasorCov {
			e.PhasorCov[i] = [3]float64{nan, nan, nan}
		}
		return e
	}
	for _, v := range e.Variance {
		e.Spread += v
	}
	for i := range e.PhasorCov {
		e.PhasorCov[i] = [3]float64{nan, nan, nan}
	}
	if len(f.done) < MinFitBatches {
		return e
	}
	// The pooled coefficients, centred as the sums are.
	coef := make([][3]float64, p)
	for i := 0; i < p; i++ {
		coef[i] = [3]float64{e.Offset[i] - f.center[i], real(e.Phasor[i]), -imag(e.Phasor[i])}
	}
	batches := f.done
	f.batchIntervals(&e, batches, coef)
	if e.BatchCorrelationZ > BatchCorrelationZMax && len(batches)/2 >= MinFitBatches {
		// Batches short against the loop's correlation time: pairs of
		// them, once, as the Estimator does.
		merged := make([]harmSums, 0, len(batches)/2)
		for j := 0; j+1 < len(batches); j += 2 {
			m := newHarmSums(p)
			m.add(&batches[j])
			m.add(&batches[j+1])
			merged = append(merged, m)
		}
		e.Batches, e.BatchSize, e.Merged = len(merged), 2*f.batch, true
		f.batchIntervals(&e, merged, coef)
	}
	return e
}

// batchIntervals sets e's intervals from complete batches: the phasor's
// covariance from the batches' own fits (their spread over √k), the
// spread's from the batches' mean squared residuals about the pooled fit
// coef (per output: centred offset, cos and sin coefficients). Those
// residuals keep the slow part of the noise, which a batch's own offset
// would absorb: judged about its own fit, a batch shorter than the
// noise's correlation time looks quieter than the run, and the interval
// would be too narrow.
func (f *HarmonicFit) batchIntervals(e *HarmonicEstimate, batches []harmSums, coef [][3]float64) {
	p := f.p
	k := len(batches)
	fk := float64(k)
	off, ph, rms := make([]float64, p), make([]complex128, p), make([]float64, p)
	phs := make([][]complex128, k)
	spreads := make([]float64, k)
	for j := range batches {
		b := &batches[j]
		if !f.fit(b, off, ph, rms) {
			for i := range e.PhasorCov {
				e.PhasorCov[i] = [3]float64{math.NaN(), math.NaN(), math.NaN()}
			}
			e.T, e.SpreadLow, e.SpreadHigh = math.NaN(), math.NaN(), math.NaN()
			return
		}
		phs[j] = append([]complex128(nil), ph...)
		for i := 0; i < p; i++ {
			c, a, s := coef[i][0], coef[i][1], coef[i][2]
			rss := b.yy[i] - 2*(c*b.y[i]+a*b.yc[i]+s*b.ys[i]) +
				c*c*b.n + a*a*b.cc + s*s*b.ss + 2*(c*a*b.c+c*s*b.s+a*s*b.cs)
			spreads[j] += math.Max(0, rss) / b.n
		}
	}
	e.T = distuv.StudentsT{Mu: 0, Sigma: 1, Nu: fk - 1}.Quantile(1 - (1-f.level)/2)
	for i := 0; i < p; i++ {
		var mr, mi float64
		for j := range phs {
			mr += real(phs[j][i])
			mi += imag(phs[j][i])
		}
		mr, mi = mr/fk, mi/fk
		var vr, vi, cv float64
		for j := range phs {
			dr, di := real(phs[j][i])-mr, imag(phs[j][i])-mi
			vr += dr * dr
			vi += di * di
			cv += dr * di
		}
		d := (fk - 1) * fk // sample covariance / k
		e.PhasorCov[i] = [3]float64{vr / d, vi / d, cv / d}
	}
	_, vs := meanVar(spreads)
	se := math.Sqrt(vs / fk)
	e.SpreadLow, e.SpreadHigh = math.Max(0, e.Spread-e.T*se), e.Spread+e.T*se
	_, e.BatchCorrelationZ = serialCorrelation(spreads, e.Spread)
}

func meanVar(x []float64) (m, v float64) {
	for _, a := range x {
		m += a
	}
	m /= float64(len(x))
	for _, a := range x {
		v += (a - m) * (a - m)
	}
	return m, v / float64(len(x)-1)
}

// Gain returns the gain |Y_i/R| with its interval: Y's standard error
// along its own direction, over |R|.
func (e HarmonicEstimate) Gain(i int, R complex128) (g, lo, hi float64) {
	y := e.Phasor[i]
	g = cmplx.Abs(y) / cmplx.Abs(R)
	u := y / complex(cmplx.Abs(y), 0)
	se := math.Sqrt(e.project(i, real(u), imag(u))) / cmplx.Abs(R)
	return g, math.Max(0, g-e.T*se), g + e.T*se
}

// Phase returns arg(Y_i/R) in degrees with its interval: Y's standard
// error across its direction, over |Y| (NaN bounds when that exceeds
// 90°: the phase is not determined).
func (e HarmonicEstimate) Phase(i int, R complex128) (deg, lo, hi float64) {
	y := e.Phasor[i]
	deg = cmplx.Phase(y/R) * 180 / math.Pi
	u := y / complex(cmplx.Abs(y), 0)
	se := math.Sqrt(e.project(i, -imag(u), real(u))) / cmplx.Abs(y)
	w := e.T * se * 180 / math.Pi
	if !(w < 90) {
		return deg, math.NaN(), math.NaN()
	}
	return deg, deg - w, deg + w
}

// project is the variance of (Re Y, Im Y)·(a, b).
func (e HarmonicEstimate) project(i int, a, b float64) float64 {
	c := e.PhasorCov[i]
	return a*a*c[0] + b*b*c[1] + 2*a*b*c[2]
}

// PhaseDiff is the difference of two phases in degrees, wrapped to
// (−180, 180].
func PhaseDiff(a, b float64) float64 {
	d := math.Mod(a-b, 360)
	switch {
	case d > 180:
		d -= 360
	case d <= -180:
		d += 360
	}
	return d
}
