package engine

import (
	"fmt"
	"math"
	"slices"

	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// Turnaround is the controller's turnaround the relay measured (the
// release of sample k to the controller → the arrival of its command at
// the relay) beside the compute law the prediction assumes: the
// summary's controller_turnaround.
type Turnaround struct {
	// Commands is how many turnarounds were measured; the comparison
	// uses Used of them (the latest ones the bench keeps, or all the
	// relay's histogram counted).
	Commands int `json:"commands"`
	Used     int `json:"used"`
	// MeanSeconds and P99Seconds are the measured turnaround's mean and
	// 99th percentile; with Binned the percentile is the upper bound of
	// the histogram bucket that holds it.
	MeanSeconds float64 `json:"mean_seconds"`
	P99Seconds  float64 `json:"p99_seconds"`
	// AssumedMeanSeconds is the mean of the loop's compute law, Law its
	// description, Constant whether it is a constant.
	AssumedMeanSeconds float64 `json:"assumed_mean_seconds"`
	Law                string  `json:"law"`
	Constant           bool    `json:"constant"`
	// KS is the Kolmogorov–Smirnov statistic of the turnarounds against
	// the compute law, P its p-value (laws.KSPValue); Agree is
	// P ≥ TurnaroundAlpha.
	KS    float64 `json:"ks_statistic"`
	P     float64 `json:"p_value"`
	Agree bool    `json:"agrees"`
	// Binned: the turnarounds came as the relay's histogram
	// (rigwire_relay_controller_turnaround_seconds), so KS is the largest
	// gap at the buckets' bounds — never above the gap over all points —
	// and a "differs" stays a valid rejection at TurnaroundAlpha while an
	// "agrees" holds at the buckets' resolution only.
	Binned bool `json:"binned"`
}

// TurnaroundAlpha is the level at which the measured turnaround and the
// assumed compute law are called different.
const TurnaroundAlpha = 0.001

// computeCDF is the loop's compute law's CDF (zero when the loop has
// none, as Loop.ComputeMean takes it).
func computeCDF(loop *profiles.Loop) func(float64) float64 {
	if loop.Compute == nil {
		return laws.Constant{}.CDF
	}
	return loop.Compute.CDF
}

func newTurnaround(loop *profiles.Loop, n, used int) *Turnaround {
	return &Turnaround{Commands: n, Used: used, AssumedMeanSeconds: loop.ComputeMean(), Law: loop.ComputeText(), Constant: loop.ComputeConstant()}
}

func (r *Turnaround) judge() {
	r.P = laws.KSPValue(r.KS, r.Used)
	r.Agree = !(r.P < TurnaroundAlpha)
}

// CompareTurnaround compares n measured turnarounds, of which xs are the
// ones kept (seconds, any order: xs is sorted in place), with the loop's
// compute law; nil without a turnaround.
func CompareTurnaround(loop *profiles.Loop, n int, xs []float64) *Turnaround {
	if len(xs) == 0 {
		return nil
	}
	slices.Sort(xs)
	r := newTurnaround(loop, n, len(xs))
	for _, x := range xs {
		r.MeanSeconds += x
	}
	r.MeanSeconds /= float64(len(xs))
	r.P99Seconds = xs[min(len(xs)-1, int(0.99*float64(len(xs))))]
	r.KS = laws.KSStatistic(xs, computeCDF(loop))
	r.judge()
	return r
}

// Bucket is a cumulative histogram bucket: Count observations ≤ Upper.
type Bucket struct {
	Upper float64
	Count uint64
}

// CompareTurnaroundHistogram compares a histogram of turnarounds (its
// cumulative buckets in increasing Upper, its count and sum, as the
// relay exports them) with the loop's compute law; nil when it counted
// nothing, an error when it is not a histogram.
func CompareTurnaroundHistogram(loop *profiles.Loop, buckets []Bucket, count uint64, sum float64) (*Turnaround, error) {
	if count == 0 {
		return nil, nil
	}
	r := newTurnaround(loop, int(count), int(count))
	r.Binned = true
	r.MeanSeconds = sum / float64(count)
	cdf := computeCDF(loop)
	r.P99Seconds = math.Inf(1)
	prev, prevUpper := uint64(0), math.Inf(-1)
	for _, b := range buckets {
		switch {
		case !(b.Upper > prevUpper):
			return nil, fmt.Errorf("histogram: bucket bound %g after %g, want increasing bounds", b.Upper, prevUpper)
		case b.Count < prev || b.Count > count:
			return nil, fmt.Errorf("histogram: bucket le=%g counts %d after %d of %d, want cumulative counts", b.Upper, b.Count, prev, count)
		}
		prev, prevUpper = b.Count, b.Upper
		if math.IsInf(b.Upper, 1) {
			continue
		}
		r.KS = math.Max(r.KS, math.Abs(float64(b.Count)/float64(count)-cdf(b.Upper)))
		if math.IsInf(r.P99Seconds, 1) && float64(b.Count) > 0.99*float64(count) {
			r.P99Seconds = b.Upper
		}
	}
	r.judge()
	return r, nil
}

// String is the comparison in one line.
func (r *Turnaround) String() string {
	law := r.Law
	if r.Constant {
		law = "a constant " + law
	}
	verdict := "agrees with"
	if !r.Agree {
		verdict = "differs from"
	}
	over := fmt.Sprintf("over the last %d of %d commands", r.Used, r.Commands)
	p99 := laws.FormatSeconds(r.P99Seconds)
	if r.Binned {
		over = fmt.Sprintf("over %d commands (the relay's histogram: the gap at its buckets' bounds)", r.Commands)
		p99 = "≤ " + p99
		if math.IsInf(r.P99Seconds, 1) {
			p99 = "beyond the last bucket"
		}
	}
	return fmt.Sprintf("controller turnaround (relay → controller → relay): mean %s, p99 %s %s; %s the loop's compute_delay, %s (mean %s): Kolmogorov–Smirnov D = %.4f, p = %s",
		laws.FormatSeconds(r.MeanSeconds), p99, over, verdict, law, laws.FormatSeconds(r.AssumedMeanSeconds), r.KS, pText(r.P))
}

func pText(p float64) string {
	if p < 1e-300 || math.IsNaN(p) {
		return "< 1e-300"
	}
	return fmt.Sprintf("%.3g", p)
}
