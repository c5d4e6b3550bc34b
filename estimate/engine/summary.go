package engine

import (
	"fmt"
	"math"
	"strings"
	"time"

	"rigwire/emulate/trip"
	"rigwire/estimate"
	"rigwire/estimate/online"
	"rigwire/profiles/datagram"
)

// Summary is the JSON summary of `monitor run` (the keys a lab script
// reads first). Values that do not exist (no samples yet, unstable
// prediction) are null.
type Summary struct {
	Samples               int64    `json:"samples"`
	ErrorSecondMoment     *float64 `json:"error_second_moment"`
	CILow                 *float64 `json:"ci_low"`
	CIHigh                *float64 `json:"ci_high"`
	PredictedSecondMoment *float64 `json:"predicted_second_moment"`

	// Verdict is agree, above, below, inconclusive or unstable
	// (VerdictRule); VerdictReason says why.
	Verdict       string `json:"verdict"`
	VerdictReason string `json:"verdict_reason"`
	VerdictRule   string `json:"verdict_rule"`
	// MinSamples is the least number of samples the verdict needs.
	MinSamples int        `json:"min_samples"`
	Tolerance  float64    `json:"tolerance"`
	Level      float64    `json:"confidence_level"`
	Ratio      *float64   `json:"measured_to_predicted"`
	ErrorMean  []*float64 `json:"error_mean"`
	ErrorStd   *float64   `json:"error_std"`
	Effective  *float64   `json:"effective_samples"`
	Batches    int        `json:"batches"`
	BatchSize  int64      `json:"batch_size"`
	// BatchesMerged: the batches were correlated and were merged in
	// pairs for the interval (Batches, BatchSize are the merged ones).
	BatchesMerged bool `json:"batches_merged"`
	// BatchCorrelation is von Neumann's lag-1 correlation of the batch
	// means, BatchCorrelationZ its z-score (null with fewer than three
	// batches).
	BatchCorrelation  *float64 `json:"batch_correlation"`
	BatchCorrelationZ *float64 `json:"batch_correlation_z"`
	CIMethod          string   `json:"ci_method"`
	// SecondMomentConverging is false when one sample holds too large a
	// share of the run's sum of eᵀe (online.Stats.Converging): the
	// interval is then null and the verdict inconclusive. MaxSampleShare
	// is that share.
	SecondMomentConverging bool      `json:"second_moment_converging"`
	MaxSampleShare         *float64  `json:"max_sample_share"`
	Predicted              Predicted `json:"predicted"`
	Datagrams              int64     `json:"datagrams"`
	Strangers              int64     `json:"stranger_datagrams"`
	Gaps                   int64     `json:"gaps"`
	Late                   int64     `json:"late_samples"`
	Duplicates             int64     `json:"duplicate_samples"`
	Stale                  int64     `json:"stale_samples"`
	Restarts               int64     `json:"sequence_restarts"`
	// DecodeFailures counts the datagrams that did not decode, by reason.
	DecodeFailures map[string]int64 `json:"decode_failures"`
	SkippedWarmup  int64            `json:"skipped_warmup_samples"`
	// AfterTripSamples were decoded after the safety trip fired: they are
	// in no estimate (the run's, a window's or a phase's).
	AfterTripSamples int64   `json:"after_trip_samples"`
	WarmupSeconds    float64 `json:"skipped_warmup_seconds"`
	Elapsed          float64 `json:"elapsed_seconds"`
	// SampledSeconds is the span between the first and the latest
	// estimated sample's arrival.
	SampledSeconds float64  `json:"sampled_seconds"`
	Period         float64  `json:"period_seconds"`
	Windows        []Window `json:"windows"`
	// Phases are the soak's phases (StartPhase), in order.
	Phases []PhaseResult `json:"phases,omitempty"`
	// Trip is the safety trip's event when it fired.
	Trip *trip.Event `json:"trip,omitempty"`
	// FrequencyResponse is, with a sinusoidal reference, the measured
	// response per frequency beside the prediction (judged with the
	// run's tolerance).
	FrequencyResponse []FrequencyResult `json:"frequency_response,omitempty"`
	// Turnaround is the controller's turnaround the relay measured beside
	// the compute law the prediction assumes, when the command made the
	// comparison (the bench's relay paired commands with samples, or
	// monitor run read the relay's histogram).
	Turnaround *Turnaround `json:"controller_turnaround,omitempty"`
}

// Predicted is the prediction in the summary.
type Predicted struct {
	// MeanSquareStable is true only when Stability is "stable".
	MeanSquareStable bool `json:"mean_square_stable"`
	// Stability is "stable", "marginal" (ρ within its error of 1: not
	// called stable) or "unstable".
	Stability      string  `json:"stability"`
	SpectralRadius float64 `json:"spectral_radius"`
	// SpectralRadiusError bounds |ρ − SpectralRadius|; null when unknown.
	SpectralRadiusError *float64   `json:"spectral_radius_error"`
	ErrorMean           []*float64 `json:"error_mean"`
	ErrorStd            *float64   `json:"error_std"`
	LossMargin          *float64   `json:"loss_margin"`
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
// Under the monitor's lock. With a sinusoidal reference it is the mean of
// the prediction's E[eᵀe] at each frequency weighted by the samples
// measured at it, so that a run that has not played every frequency
// equally long is compared with what it played (the prediction's own
// Error weighs the frequencies equally, as whole sweeps do).
func (m *Monitor) predicted() float64 {
	if m.fits != nil && harmonicAt(m.pred, 0) != nil {
		var sum, n float64
		for seg, c := range m.segN {
			if c > 0 {
				sum += float64(c) * secondMomentAt(m.pred, seg)
				n += float64(c)
			}
		}
		if n > 0 {
			return sum / n
		}
	}
	return predictedOf(m.pred)
}

// predictedOf is pred's E[eᵀe], NaN when not mean-square stable.
func predictedOf(pred *estimate.Prediction) float64 {
	if pred == nil || !pred.MeanSquareStable || pred.Error == nil {
		return math.NaN()
	}
	return pred.Error.SecondMoment
}

// runVerdict is the run's verdict on st (under the lock).
func (m *Monitor) runVerdict(st online.Stats) (string, string) {
	return judgeInterval(st, m.predicted(), m.opts.Tolerance, stabilityOf(m.pred), m.opts.MinSamples)
}

// Summary returns the run's summary so far.
func (m *Monitor) Summary() *Summary {
	m.mu.Lock()
	defer m.mu.Unlock()
	st := m.on.Run(nil)
	pr := m.predicted()
	v, why := m.runVerdict(st)
	s := &Summary{
		Samples: st.Samples, ErrorSecondMoment: finite(st.SecondMoment),
		CILow: finite(st.CILow), CIHigh: finite(st.CIHigh), PredictedSecondMoment: finite(pr),
		Verdict: v, VerdictReason: why, VerdictRule: VerdictRule, MinSamples: m.opts.MinSamples,
		Tolerance: m.opts.Tolerance, Level: m.opts.Level,
		Ratio: finite(st.SecondMoment / pr), ErrorMean: finites(st.Mean), ErrorStd: finite(st.Std),
		Effective: finite(st.EffectiveSamples), Batches: st.Batches, BatchSize: st.BatchSize,
		BatchesMerged: st.Merged, BatchCorrelation: finite(st.BatchCorrelation), BatchCorrelationZ: finite(st.BatchCorrelationZ),
		CIMethod: CIMethod, AfterTripSamples: m.afterTrip,
		Datagrams: m.datagrams, Strangers: m.strangerTotal(), Gaps: m.seq.Counts.Gaps, Late: m.seq.Counts.Late,
		Duplicates: m.seq.Counts.Duplicates, Stale: m.seq.Counts.Stale, Restarts: m.seq.Counts.Restarts,
		DecodeFailures: map[string]int64{}, SkippedWarmup: m.skipped,
		WarmupSeconds: float64(m.skipped) * m.loop.Period,
		Elapsed:       m.now().Sub(m.started).Seconds(), Period: m.loop.Period,
	}
	if st.Samples > 0 {
		s.SampledSeconds = m.last.Sub(m.first).Seconds()
	}
	s.SecondMomentConverging, s.MaxSampleShare = st.Converging(), finite(st.MaxShare)
	if !s.SecondMomentConverging {
		s.CILow, s.CIHigh = nil, nil
	}
	if p := m.pred; p != nil {
		s.Predicted = Predicted{MeanSquareStable: p.MeanSquareStable, Stability: estimate.VerdictOf(p), SpectralRadius: p.SpectralRadius,
			SpectralRadiusError: finite(p.RadiusError), LossMargin: finite(p.LossMargin)}
		if p.Error != nil {
			s.Predicted.ErrorMean, s.Predicted.ErrorStd = finites(p.Error.Mean), finite(p.Error.Std)
		}
	}
	for i, r := range datagram.Reasons {
		s.DecodeFailures[r.Reason] = m.failures[i]
	}
	for i, w := range m.windows {
		ws := m.on.Window(i, nil)
		s.Windows = append(s.Windows, Window{Seconds: w.Seconds(), Samples: ws.Samples,
			ErrorSecondMoment: finite(ws.SecondMoment), CILow: finite(ws.CILow), CIHigh: finite(ws.CIHigh),
			Effective: finite(ws.EffectiveSamples)})
	}
	s.Phases = m.phaseResults()
	s.FrequencyResponse = m.frequencyResults()
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
	Strangers     int64 // datagrams from a source other than SetSource's
	SkippedWarmup int64
	Verdict       string // as it stands, with the tolerance
	Reason        string // why
}

// Progress returns the current status.
func (m *Monitor) Progress() Progress {
	m.mu.Lock()
	defer m.mu.Unlock()
	st := m.on.Run(m.meanBuf)
	pr := m.predicted()
	p := Progress{Elapsed: m.now().Sub(m.started), Samples: st.Samples, Measured: st.SecondMoment,
		CILow: st.CILow, CIHigh: st.CIHigh, Predicted: pr, Gaps: m.seq.Counts.Gaps, SkippedWarmup: m.skipped}
	p.Verdict, p.Reason = m.runVerdict(st)
	for _, f := range m.failures {
		p.Rejected += f
	}
	p.Strangers = m.strangerTotal()
	return p
}

// String is a one-line status: elapsed, samples, measured [CI], predicted,
// the verdict as it stands.
func (p Progress) String() string {
	var b strings.Builder
	fmt.Fprintf(&b, "%8s  samples %d", p.Elapsed.Round(time.Second), p.Samples)
	switch {
	case math.IsNaN(p.Measured):
		b.WriteString("  E[eᵀe] -")
	case math.IsNaN(p.CILow):
		fmt.Fprintf(&b, "  E[eᵀe] %.5g", p.Measured)
	default:
		fmt.Fprintf(&b, "  E[eᵀe] %.5g [%.5g, %.5g]", p.Measured, p.CILow, p.CIHigh)
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
	if p.Strangers > 0 {
		fmt.Fprintf(&b, "  strangers %d", p.Strangers)
	}
	if p.SkippedWarmup > 0 {
		fmt.Fprintf(&b, "  warm-up skipped %d", p.SkippedWarmup)
	}
	return b.String()
}
