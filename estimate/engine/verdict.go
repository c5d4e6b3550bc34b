package engine

import (
	"fmt"
	"math"

	"rigwire/estimate"
	"rigwire/estimate/online"
	"rigwire/profiles"
)

// Verdicts of a run (and, through the phase's check, of a soak phase):
// where the prediction lies against the measured interval widened by the
// tolerance, or why the data cannot tell.
const (
	// VerdictAgree: the prediction lies inside the widened interval, and
	// the interval is narrow enough that it could have disagreed (see
	// DiscriminationFactor).
	VerdictAgree = "agree"
	// VerdictAbove: the measured E[eᵀe] is above the prediction (the
	// prediction lies below the widened interval).
	VerdictAbove = "above"
	// VerdictBelow: the measured E[eᵀe] is below the prediction.
	VerdictBelow = "below"
	// VerdictInconclusive: the data cannot tell agreement from
	// disagreement (the reason says why; see the rule in judgeInterval).
	VerdictInconclusive = "inconclusive"
	// VerdictUnstable: the prediction is not certified mean-square
	// stable (its stability is "unstable" or "marginal"), so there is no
	// predicted value to agree with.
	VerdictUnstable = "unstable"
)

// The numbers of the inconclusive rule.
const (
	// DefaultMinSamples is the least number of judged samples a verdict
	// needs when the run or the phase's check sets none: 20 batches
	// (the fewest the estimator keeps) of 20 samples. Batch means of
	// 20 samples of an error whose integrated correlation time is up to
	// about 10 periods (an AR(1) x with coefficient 0.8) keep a lag-1
	// correlation under 0.15, from the AR(1) autocovariance of batch sums
	// (common practice); slower loops need more, which the batch-length
	// checks (online.Stats.ShortBatches) report. It is the least
	// data that can be judged at all, not a sufficient amount.
	DefaultMinSamples = profiles.DefaultMinSamples
	// MinVerdictBatches is the least number of complete batches behind a
	// verdict's interval: online.MinMergedBatches (10), the fewest the
	// whole-run estimator reports after merging short batches.
	MinVerdictBatches = online.MinMergedBatches
	// DiscriminationFactor: agreement needs an interval that would have
	// shown a prediction off by this factor either way as disagreement:
	// after widening by the tolerance, the interval must lie strictly
	// within (x̄/2, 2·x̄), x̄ the measured E[eᵀe]. A factor of two in E[eᵀe]
	// (√2 in the RMS error, 3 dB) is the coarsest misprediction a bench
	// that tells a working loop from a degraded one must be able to see;
	// an interval that cannot rule it out cannot confirm a prediction. A
	// tolerance of 0.5 or more can therefore never confirm agreement.
	DiscriminationFactor = 2.0
	// DefaultTolerance is the relative widening of a measured interval
	// the commands use unless told otherwise (--tolerance).
	DefaultTolerance = 0.1
)

// VerdictRule states the rule in the summary.
var VerdictRule = fmt.Sprintf("inconclusive when fewer than min_samples judged samples (default %d: 20 batches of 20) or fewer than %d complete batches; "+
	"when the batches are short for the loop's correlation time (von Neumann lag-1 z-score of the batch means > %.3f, one-sided 1 %%, "+
	"or fewer than %g effective samples per batch) unless the prediction lies outside the worst-case interval x̄·exp(±t·s_x/x̄); "+
	"or when the prediction lies inside the interval widened by the tolerance but that reaches x̄/%g or %g·x̄ "+
	"(it could not have shown a prediction off by a factor of %g); above or below when the prediction lies outside the widened interval, "+
	"however wide; agree otherwise",
	DefaultMinSamples, MinVerdictBatches, online.BatchCorrelationZMax, online.MinEffectivePerBatch,
	DiscriminationFactor, DiscriminationFactor, DiscriminationFactor)

// CIMethod names the interval's method in the summary.
const CIMethod = "non-overlapping batch means, 20-39 batches (10-19 when merged because short), Student t on the log scale: " +
	"x̄·exp(±t·S_B/(√k·x̄)) (delta method; Law & Kelton 2000 §9.5.3; Schmeiser 1982); " +
	"batch length checked by von Neumann's ratio (von Neumann 1941; Fishman 1978) and by the effective samples per batch"

// interval is the interval a verdict uses: the estimator's, or, when its
// batches are short for the loop's correlation time
// (online.Stats.ShortBatches), the worst case
// x̄·exp(±t·s_x/x̄) with the same t quantile: the standard error of a mean
// of stationary values is at most their standard deviation s_x, whatever
// their correlation (see online.Estimator). short is set in that case.
func interval(st online.Stats) (lo, hi float64, short bool) {
	if !st.ShortBatches() {
		return st.CILow, st.CIHigh, false
	}
	if !(st.XStd > 0) {
		return st.CILow, st.CIHigh, true
	}
	lo, hi = online.LogInterval(st.SecondMoment, st.XStd, st.T)
	return lo, hi, true
}

// enough says whether st has the samples and batches a verdict needs, and
// why not.
func enough(st online.Stats, minSamples int) (bool, string) {
	switch {
	case st.Samples < int64(minSamples):
		return false, fmt.Sprintf("only %d judged samples, want ≥ %d", st.Samples, minSamples)
	case st.Batches < MinVerdictBatches:
		return false, fmt.Sprintf("only %d complete batches, want ≥ %d", st.Batches, MinVerdictBatches)
	case math.IsNaN(st.SecondMoment) || math.IsNaN(st.CILow) || math.IsNaN(st.CIHigh):
		// Never with decoded values within datagram.MaxOutput; said as it
		// is rather than blamed on the counts, which are enough.
		return false, fmt.Sprintf("%d samples in %d complete batches, but the interval is not a number", st.Samples, st.Batches)
	}
	return true, ""
}

// judgeInterval is the verdict of an estimate st against the predicted
// E[eᵀe] pr with tolerance tol. notStable is "" for a certified stable
// prediction, else its stability ("unstable", "marginal"). The rule, in
// order:
//
//  1. a prediction not certified stable: VerdictUnstable;
//  2. fewer than minSamples judged samples, or fewer than
//     MinVerdictBatches complete batches: inconclusive;
//  3. the prediction below lo·(1−tol): above; above hi·(1+tol): below —
//     a wide interval that excludes the prediction is still evidence.
//     When the batches are short for the loop's correlation time
//     (online.Stats.ShortBatches), [lo, hi] is the worst-case
//     interval (see interval), so only a gross disagreement counts;
//  4. short batches and the prediction inside: inconclusive;
//  5. the prediction inside, but lo·(1−tol) ≤ x̄/DiscriminationFactor or
//     hi·(1+tol) ≥ DiscriminationFactor·x̄: inconclusive (the interval
//     could not have disagreed);
//  6. otherwise agree.
func judgeInterval(st online.Stats, pr, tol float64, notStable string, minSamples int) (verdict, reason string) {
	if notStable != "" {
		why := fmt.Sprintf("prediction %s: no E[eᵀe] to compare with", notStable)
		if !st.Converging() {
			why += "; " + notConverging(st)
		}
		return VerdictUnstable, why
	}
	if !st.Converging() {
		return VerdictInconclusive, notConverging(st)
	}
	if ok, why := enough(st, minSamples); !ok {
		return VerdictInconclusive, why
	}
	lo, hi, short := interval(st)
	wlo, whi := lo*(1-tol), hi*(1+tol)
	x := st.SecondMoment
	what := "the measured interval"
	if short {
		what = "the worst-case interval (" + shortWhy(st) + ")"
	}
	switch {
	case pr < wlo:
		return VerdictAbove, fmt.Sprintf("prediction %.4g below %s [%.4g, %.4g] widened by %g: measured above", pr, what, lo, hi, tol)
	case pr > whi:
		return VerdictBelow, fmt.Sprintf("prediction %.4g above %s [%.4g, %.4g] widened by %g: measured below", pr, what, lo, hi, tol)
	case short:
		return VerdictInconclusive, shortWhy(st) + fmt.Sprintf(": batches of %d samples are short for the loop's correlation time; a longer run has longer batches", st.BatchSize)
	case !(wlo > x/DiscriminationFactor) || !(whi < DiscriminationFactor*x):
		return VerdictInconclusive, fmt.Sprintf("prediction %.4g inside the measured interval [%.4g, %.4g] widened by %g, but that reaches beyond a factor %g of the measured %.4g: too wide to confirm",
			pr, lo, hi, tol, DiscriminationFactor, x)
	}
	return VerdictAgree, fmt.Sprintf("prediction %.4g inside the measured interval [%.4g, %.4g] widened by %g", pr, lo, hi, tol)
}

// notConverging says why st's second moment is not trusted
// (online.Stats.Converging).
func notConverging(st online.Stats) string {
	return fmt.Sprintf("the measured second moment does not converge: one sample holds %.0f %% of the sum of %d (a tail too heavy for a finite E[eᵀe], as rare long outages give a loop almost surely but not mean-square stable, estimate/model.md §16): no interval is trusted",
		100*st.MaxShare, st.Samples)
}

// shortWhy says why st's batches are short.
func shortWhy(st online.Stats) string {
	if st.BatchCorrelationZ > online.BatchCorrelationZMax {
		return fmt.Sprintf("batch means correlated: lag-1 %.2f, z %.2f > %.2f", st.BatchCorrelation, st.BatchCorrelationZ, online.BatchCorrelationZMax)
	}
	return fmt.Sprintf("%.1f effective samples per batch, want ≥ %g", st.EffectiveSamples/float64(st.Batches), online.MinEffectivePerBatch)
}

// stabilityOf is "" for a prediction certified mean-square stable (with
// its steady moments), else its stability ("unstable" or "marginal").
func stabilityOf(pred *estimate.Prediction) string {
	if pred == nil {
		return estimate.StabilityUnstable
	}
	switch v := estimate.VerdictOf(pred); {
	case v == estimate.StabilityStable && pred.Error != nil:
		return ""
	case v == estimate.StabilityMarginal:
		return v
	}
	return estimate.StabilityUnstable
}
