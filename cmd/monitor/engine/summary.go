package engine

import (
	"fmt"
	"math"
	"strings"
	"time"

	"rigwire/estimate"
	"rigwire/profiles"
)

// Verdicts of a run: where the prediction lies against the measured
// interval widened by the tolerance.
const (
	// VerdictAgree: the prediction lies inside the widened interval.
	VerdictAgree = "agree"
	// VerdictAbove: the measured E[eᵀe] is above the prediction (the
	// prediction lies below the widened interval).
	VerdictAbove = "above"
	// VerdictBelow: the measured E[eᵀe] is below the prediction.
	VerdictBelow = "below"
	// VerdictNoSamples: fewer than two samples estimated, so no interval.
	VerdictNoSamples = "no_samples"
	// VerdictUnstable: the prediction says the loop is not mean-square
	// stable, so there is no predicted value to agree with.
	VerdictUnstable = "unstable"
)

// Exit codes of `monitor run --strict`, by verdict (0 without --strict;
// 1 and 2 stay the monitor's error and usage codes).
var exitCodes = map[string]int{
	VerdictAgree: 0, VerdictAbove: 3, VerdictBelow: 4, VerdictNoSamples: 5, VerdictUnstable: 6,
}

// ExitCode is the process exit status for the verdict: 0 unless strict;
// with strict 0 agree, 3 above, 4 below, 5 no samples, 6 unstable
// prediction.
func (s *Summary) ExitCode(strict bool) int {
	if !strict {
		return 0
	}
	return exitCodes[s.Verdict]
}

// Exit codes of the safety trip and of a soak's phases.
const (
	// ExitPhaseFailed: a soak phase's check failed.
	ExitPhaseFailed = 7
	// ExitTripped: the safety trip fired.
	ExitTripped = 8
)

// TripExitCode is 8 when the safety trip fired, else 0.
func (s *Summary) TripExitCode() int {
	if s.Trip != nil {
		return ExitTripped
	}
	return 0
}

// SoakExitCode is the exit status of a soak: 8 when the safety trip
// fired, else 7 when any phase failed its check, else 0.
func (s *Summary) SoakExitCode() int {
	if s.Trip != nil {
		return ExitTripped
	}
	for _, p := range s.Phases {
		if p.Verdict == PhaseFail {
			return ExitPhaseFailed
		}
	}
	return 0
}

// Summary is the JSON summary of `monitor run` (INTERFACES.md keys
// first). Values that do not exist (no samples yet, unstable prediction)
// are null.
type Summary struct {
	Samples               int64    `json:"samples"`
	ErrorSecondMoment     *float64 `json:"error_second_moment"`
	CILow                 *float64 `json:"ci_low"`
	CIHigh                *float64 `json:"ci_high"`
	PredictedSecondMoment *float64 `json:"predicted_second_moment"`

	Verdict    string     `json:"verdict"`
	Tolerance  float64    `json:"tolerance"`
	Level      float64    `json:"confidence_level"`
	Ratio      *float64   `json:"measured_to_predicted"`
	ErrorMean  []*float64 `json:"error_mean"`
	ErrorStd   *float64   `json:"error_std"`
	Effective  *float64   `json:"effective_samples"`
	Batches    int        `json:"batches"`
	BatchSize  int64      `json:"batch_size"`
	CIMethod   string     `json:"ci_method"`
	Predicted  Predicted  `json:"predicted"`
	Datagrams  int64      `json:"datagrams"`
	Gaps       int64      `json:"gaps"`
	Late       int64      `json:"late_samples"`
	Duplicates int64      `json:"duplicate_samples"`
	Stale      int64      `json:"stale_samples"`
	Restarts   int64      `json:"sequence_restarts"`
	// DecodeFailures counts the datagrams that did not decode, by reason.
	DecodeFailures map[string]int64 `json:"decode_failures"`
	SkippedWarmup  int64            `json:"skipped_warmup_samples"`
	WarmupSeconds  float64          `json:"skipped_warmup_seconds"`
	Elapsed        float64          `json:"elapsed_seconds"`
	// SampledSeconds is the span between the first and the latest
	// estimated sample's arrival.
	SampledSeconds float64  `json:"sampled_seconds"`
	Period         float64  `json:"period_seconds"`
	Windows        []Window `json:"windows"`
	// Phases are the soak's phases (StartPhase), in order.
	Phases []PhaseResult `json:"phases,omitempty"`
	// Trip is the safety trip's event when it fired.
	Trip *TripEvent `json:"trip,omitempty"`
}

// Predicted is the prediction in the summary (MODEL.md §5).
type Predicted struct {
	MeanSquareStable bool       `json:"mean_square_stable"`
	SpectralRadius   float64    `json:"spectral_radius"`
	ErrorMean        []*float64 `json:"error_mean"`
	ErrorStd         *float64   `json:"error_std"`
	LossMargin       *float64   `json:"loss_margin"`
}

// Window is one sliding window's estimate in the summary.
type Window struct {
	Seconds           float64  `json:"window_seconds"`
	Samples           int64    `json:"samples"`
	ErrorSecondMoment *float64 `json:"error_second_moment"`
	CILow             *float64 `json:"ci_low"`
	CIHigh            *float64 `json:"ci_high"`
	Effective         *float64 `json:"effective_samples"`
}

// CIMethod names the interval's method in the summary.
const CIMethod = "non-overlapping batch means, 20-39 batches, Student t (Law & Kelton 2000 §9.5.3; Schmeiser 1982)"

func finite(v float64) *float64 {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return nil
	}
	return &v
}

func finites(vs []float64) []*float64 {
	out := make([]*float64, len(vs))
	for i, v := range vs {
		out[i] = finite(v)
	}
	return out
}

// predicted is the predicted E[eᵀe], NaN when not stable.
func (m *Monitor) predicted() float64 { return predictedOf(m.pred) }

// predictedOf is pred's E[eᵀe], NaN when not mean-square stable.
func predictedOf(pred *estimate.Prediction) float64 {
	if pred == nil || !pred.MeanSquareStable || pred.Error == nil {
		return math.NaN()
	}
	return pred.Error.SecondMoment
}

// verdict places the prediction pr against [lo, hi] widened by tol.
func verdict(st estimate.OnlineStats, pr, tol float64, stable bool) string {
	switch {
	case !stable:
		return VerdictUnstable
	case math.IsNaN(st.CILow) || math.IsNaN(st.CIHigh):
		return VerdictNoSamples
	case pr < st.CILow-tol*math.Abs(st.CILow):
		return VerdictAbove
	case pr > st.CIHigh+tol*math.Abs(st.CIHigh):
		return VerdictBelow
	}
	return VerdictAgree
}

// Summary returns the run's summary so far.
func (m *Monitor) Summary() *Summary {
	m.mu.Lock()
	defer m.mu.Unlock()
	st := m.on.Run(nil)
	pr := m.predicted()
	s := &Summary{
		Samples: st.Samples, ErrorSecondMoment: finite(st.SecondMoment),
		CILow: finite(st.CILow), CIHigh: finite(st.CIHigh), PredictedSecondMoment: finite(pr),
		Verdict: verdict(st, pr, m.opts.Tolerance, !math.IsNaN(pr)), Tolerance: m.opts.Tolerance, Level: m.opts.Level,
		Ratio: finite(st.SecondMoment / pr), ErrorMean: finites(st.Mean), ErrorStd: finite(st.Std),
		Effective: finite(st.EffectiveSamples), Batches: st.Batches, BatchSize: st.BatchSize, CIMethod: CIMethod,
		Datagrams: m.datagrams, Gaps: m.seq.Counts.Gaps, Late: m.seq.Counts.Late,
		Duplicates: m.seq.Counts.Duplicates, Stale: m.seq.Counts.Stale, Restarts: m.seq.Counts.Restarts,
		DecodeFailures: map[string]int64{}, SkippedWarmup: m.skipped,
		WarmupSeconds: float64(m.skipped) * m.loop.Period,
		Elapsed:       m.now().Sub(m.started).Seconds(), Period: m.loop.Period,
	}
	if st.Samples > 0 {
		s.SampledSeconds = m.last.Sub(m.first).Seconds()
	}
	if p := m.pred; p != nil {
		s.Predicted = Predicted{MeanSquareStable: p.MeanSquareStable, SpectralRadius: p.SpectralRadius,
			LossMargin: finite(p.LossMargin)}
		if p.Error != nil {
			s.Predicted.ErrorMean, s.Predicted.ErrorStd = finites(p.Error.Mean), finite(p.Error.Std)
		}
	}
	for i, r := range profiles.DecodeReasons {
		s.DecodeFailures[r.Reason] = m.failures[i]
	}
	for i, w := range m.windows {
		ws := m.on.Window(i, nil)
		s.Windows = append(s.Windows, Window{Seconds: w.Seconds(), Samples: ws.Samples,
			ErrorSecondMoment: finite(ws.SecondMoment), CILow: finite(ws.CILow), CIHigh: finite(ws.CIHigh),
			Effective: finite(ws.EffectiveSamples)})
	}
	s.Phases = m.phaseResults()
	if ev := m.trip.event; ev != nil {
		c := *ev
		s.Trip = &c
	}
	return s
}

// Progress is a snapshot for a live status line.
type Progress struct {
	Elapsed       time.Duration
	Samples       int64
	Measured      float64 // E[eᵀe] over the run; NaN before a sample
	CILow, CIHigh float64 // NaN before two batches
	Predicted     float64 // NaN when the loop is not mean-square stable
	Gaps          int64
	Rejected      int64 // datagrams that did not decode
	SkippedWarmup int64
	Verdict       string // as it stands, with the tolerance
}

// Progress returns the current status.
func (m *Monitor) Progress() Progress {
	m.mu.Lock()
	defer m.mu.Unlock()
	st := m.on.Run(m.meanBuf)
	pr := m.predicted()
	p := Progress{Elapsed: m.now().Sub(m.started), Samples: st.Samples, Measured: st.SecondMoment,
		CILow: st.CILow, CIHigh: st.CIHigh, Predicted: pr, Gaps: m.seq.Counts.Gaps, SkippedWarmup: m.skipped,
		Verdict: verdict(st, pr, m.opts.Tolerance, !math.IsNaN(pr))}
	for _, f := range m.failures {
		p.Rejected += f
	}
	return p
}

// String is a one-line status: elapsed, samples, measured ± CI, predicted.
func (p Progress) String() string {
	var b strings.Builder
	fmt.Fprintf(&b, "%8s  samples %d", p.Elapsed.Round(time.Second), p.Samples)
	switch {
	case math.IsNaN(p.Measured):
		b.WriteString("  E[eᵀe] -")
	case math.IsNaN(p.CILow):
		fmt.Fprintf(&b, "  E[eᵀe] %.5g", p.Measured)
	default:
		fmt.Fprintf(&b, "  E[eᵀe] %.5g ± %.2g [%.5g, %.5g]", p.Measured, (p.CIHigh-p.CILow)/2, p.CILow, p.CIHigh)
	}
	if math.IsNaN(p.Predicted) {
		b.WriteString("  predicted: not mean-square stable")
	} else {
		fmt.Fprintf(&b, "  predicted %.5g", p.Predicted)
	}
	fmt.Fprintf(&b, "  %s", p.Verdict)
	if p.Gaps > 0 {
		fmt.Fprintf(&b, "  gaps %d", p.Gaps)
	}
	if p.Rejected > 0 {
		fmt.Fprintf(&b, "  rejected %d", p.Rejected)
	}
	if p.SkippedWarmup > 0 {
		fmt.Fprintf(&b, "  warm-up skipped %d", p.SkippedWarmup)
	}
	return b.String()
}
