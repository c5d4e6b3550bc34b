package engine

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"rigwire/estimate"
	"rigwire/estimate/online"
	"rigwire/profiles"
	"rigwire/profiles/laws"
	"rigwire/profiles/markov"
)

// FrequencyResult is the measured response at one frequency of a
// sinusoidal reference beside the prediction (estimate/model.md §15), in
// the summary (per frequency over the run) and in a frequency phase.
// Values that do not exist are null.
type FrequencyResult struct {
	FrequencyHz float64 `json:"frequency_hz"`
	// Samples were fitted (settled, after the warm-up); Batches and
	// BatchSize are those of the intervals, BatchesMerged set when the
	// complete batches were correlated and merged in pairs for them.
	Samples       int64 `json:"samples"`
	Batches       int   `json:"batches"`
	BatchSize     int64 `json:"batch_size"`
	BatchesMerged bool  `json:"batches_merged"`
	// Outputs are per output (in the order of C's rows); an output whose
	// reference does not move has only its variance.
	Outputs []FrequencyOutput `json:"outputs"`
	// Spread is the sum of the outputs' residual variances (the error's
	// variance averaged over the phase), with its interval and the
	// prediction.
	Spread          *float64 `json:"spread"`
	SpreadCILow     *float64 `json:"spread_ci_low"`
	SpreadCIHigh    *float64 `json:"spread_ci_high"`
	PredictedSpread *float64 `json:"predicted_spread"`
	// Verdict is agree, differ or inconclusive (judgeHarmonic) and Reason
	// why, against the tolerance in force.
	Verdict string `json:"verdict"`
	Reason  string `json:"reason"`
}

// FrequencyOutput is one output's mean response from setpoint to output.
type FrequencyOutput struct {
	Gain              *float64 `json:"gain"`
	GainCILow         *float64 `json:"gain_ci_low"`
	GainCIHigh        *float64 `json:"gain_ci_high"`
	PhaseDeg          *float64 `json:"phase_deg"`
	PhaseCILow        *float64 `json:"phase_ci_low"`
	PhaseCIHigh       *float64 `json:"phase_ci_high"`
	PredictedGain     *float64 `json:"predicted_gain"`
	PredictedPhaseDeg *float64 `json:"predicted_phase_deg"`
	Variance          *float64 `json:"variance"`
	PredictedVariance *float64 `json:"predicted_variance"`
}

// Verdicts of a frequency.
const (
	FrequencyAgree        = "agree"
	FrequencyDiffer       = "differ"
	FrequencyInconclusive = "inconclusive"
)

// newFit returns the fit of frequency segment seg of the loop's
// reference.
//
// Batches last at least a cycle of the frequency and at least the
// longest mean dwell of a state of the loop's network: the error's
// variance changes with the network's state, so shorter batches have
// correlated spreads and an interval too narrow (a 13 s run over a
// channel whose quiet state lasts 3 s on average measured a spread 34 %
// off inside a ±17 % interval).
func newFit(loop *profiles.Loop, seg int, level float64) *online.HarmonicFit {
	f := loop.Reference.Frequencies[seg]
	dwell := 0.0
	for _, ch := range []*markov.Channel{loop.Profile.SensorToController, loop.Profile.ControllerToActuator} {
		if ch == nil || len(ch.States) < 2 {
			continue
		}
		for _, st := range ch.States {
			if !math.IsInf(st.MeanDwell, 0) {
				dwell = math.Max(dwell, st.MeanDwell)
			}
		}
	}
	fit, err := online.NewHarmonicFit(online.HarmonicOptions{Outputs: len(loop.Setpoint), Center: loop.Setpoint,
		CycleSamples: math.Max(1, 1/(f*loop.Period)), MinBatchSamples: int64(math.Ceil(dwell / loop.Period)), Level: level})
	if err != nil {
		panic(fmt.Sprintf("engine: frequency fit: %v", err)) // the loader bounds f below the Nyquist frequency
	}
	return fit
}

// harmonicAt is the prediction's steady state at segment seg, nil when
// it has none (not stable, Monte Carlo).
func harmonicAt(pred *estimate.Prediction, seg int) *estimate.Harmonic {
	if pred == nil || !pred.MeanSquareStable || seg < 0 || seg >= len(pred.Harmonics) {
		return nil
	}
	return &pred.Harmonics[seg]
}

// secondMomentAt is the predicted phase-averaged E[eᵀe] at segment seg,
// NaN when there is none.
func secondMomentAt(pred *estimate.Prediction, seg int) float64 {
	if h := harmonicAt(pred, seg); h != nil {
		return h.SecondMoment
	}
	return math.NaN()
}

// frequencyResult describes a fit's estimate against the prediction h
// (nil: none) and judges it with tolerance tol.
func frequencyResult(loop *profiles.Loop, seg int, est online.HarmonicEstimate, h *estimate.Harmonic, tol float64) FrequencyResult {
	r := FrequencyResult{FrequencyHz: loop.Reference.Frequencies[seg], Samples: est.Samples, Batches: est.Batches, BatchSize: est.BatchSize, BatchesMerged: est.Merged,
		Spread: finite(est.Spread), SpreadCILow: finite(est.SpreadLow), SpreadCIHigh: finite(est.SpreadHigh)}
	if h != nil {
		r.PredictedSpread = finite(h.Spread)
	}
	for i := range loop.Setpoint {
		o := FrequencyOutput{Variance: finite(est.Variance[i])}
		R := loop.Reference.Phasor(i)
		if h != nil {
			o.PredictedVariance = finite(h.Variance[i])
		}
		if R != 0 {
			g, glo, ghi := est.Gain(i, R)
			ph, plo, phi := est.Phase(i, R)
			o.Gain, o.GainCILow, o.GainCIHigh = finite(g), finite(glo), finite(ghi)
			o.PhaseDeg, o.PhaseCILow, o.PhaseCIHigh = finite(ph), finite(plo), finite(phi)
			if h != nil {
				pg, pp := estimate.Gain(h.Output[i], h.Reference[i])
				o.PredictedGain, o.PredictedPhaseDeg = finite(pg), finite(pp)
			}
		}
		r.Outputs = append(r.Outputs, o)
	}
	r.Verdict, r.Reason = judgeHarmonic(loop, est, h, tol)
	return r
}

// correlatedBatches says why batches whose spreads are serially
// correlated leave the verdict open, and what would close it: merged in
// pairs and still correlated, a longer dwell doubles them again; too few
// to merge, a dwell judged over 2·MinFitBatches batches of this size
// would let them merge.
func correlatedBatches(loop *profiles.Loop, est online.HarmonicEstimate) string {
	why := fmt.Sprintf("batches short against the loop's correlation time (batch correlation z = %.2f over %d batches of %d samples", est.BatchCorrelationZ, est.Batches, est.BatchSize)
	if est.Merged {
		return why + ", already merged in pairs): a longer dwell has longer batches"
	}
	need := float64(2*online.MinFitBatches*est.BatchSize) * loop.Period
	return why + fmt.Sprintf(", too few to merge in pairs): a dwell with %s of settled samples or more would merge them", laws.FormatSeconds(need))
}

// judgeHarmonic is the verdict at one frequency: with every interval
// there and narrow enough to tell, agree when the predicted gain of every
// moving output lies in its measured interval widened by tol (relative),
// its predicted phase in its interval widened by tol radians and the
// predicted spread in its interval widened by tol; differ when one lies
// outside. Inconclusive without a prediction, with fewer than
// online.MinFitBatches complete batches, batches whose spreads are
// serially correlated (short against the loop's correlation time), or an
// interval too wide to tell: a gain interval reaching 0, a phase
// interval over ±90°, a spread interval not within (½, 2)× the measured
// spread (DiscriminationFactor, as the E[eᵀe] rule).
func judgeHarmonic(loop *profiles.Loop, est online.HarmonicEstimate, h *estimate.Harmonic, tol float64) (string, string) {
	switch {
	case h == nil:
		return FrequencyInconclusive, "no prediction at this frequency (not mean-square stable, or a Monte Carlo prediction)"
	case est.Batches < online.MinFitBatches || math.IsNaN(est.SpreadLow):
		return FrequencyInconclusive, fmt.Sprintf("only %d complete batches (each at least a cycle and the network's longest mean dwell), want ≥ %d", est.Batches, online.MinFitBatches)
	case est.BatchCorrelationZ > online.BatchCorrelationZMax:
		return FrequencyInconclusive, correlatedBatches(loop, est)
	}
	var differ, vague []string
	for i := range loop.Setpoint {
		R := loop.Reference.Phasor(i)
		if R == 0 {
			continue
		}
		g, glo, ghi := est.Gain(i, R)
		pg, pp := estimate.Gain(h.Output[i], h.Reference[i])
		out := ""
		if len(loop.Setpoint) > 1 {
			out = fmt.Sprintf(" of output %d", i)
		}
		wlo, whi := glo*(1-tol), ghi*(1+tol)
		switch {
		case !(glo > 0):
			vague = append(vague, fmt.Sprintf("gain%s %.4g [%.4g, %.4g] cannot be told from 0", out, g, glo, ghi))
		case pg < wlo || pg > whi:
			differ = append(differ, fmt.Sprintf("gain%s measured %.4g [%.4g, %.4g], predicted %.4g", out, g, glo, ghi, pg))
		}
		ph, plo, phi := est.Phase(i, R)
		w := tol * 180 / math.Pi
		switch d := online.PhaseDiff(pp, ph); {
		case math.IsNaN(plo):
			vague = append(vague, fmt.Sprintf("phase%s %.1f° has an interval over ±90°", out, ph))
		case d < plo-ph-w || d > phi-ph+w:
			differ = append(differ, fmt.Sprintf("phase%s measured %.1f° [%.1f°, %.1f°], predicted %.1f°", out, ph, plo, phi, pp))
		}
	}
	s, lo, hi := est.Spread, est.SpreadLow*(1-tol), est.SpreadHigh*(1+tol)
	switch {
	case h.Spread < lo || h.Spread > hi:
		differ = append(differ, fmt.Sprintf("spread measured %.4g [%.4g, %.4g], predicted %.4g", s, est.SpreadLow, est.SpreadHigh, h.Spread))
	case !(lo > s/DiscriminationFactor && hi < s*DiscriminationFactor):
		vague = append(vague, fmt.Sprintf("spread interval [%.4g, %.4g] too wide to tell a factor of %g", est.SpreadLow, est.SpreadHigh, DiscriminationFactor))
	}
	switch {
	case len(differ) > 0:
		return FrequencyDiffer, strings.Join(differ, "; ")
	case len(vague) > 0:
		return FrequencyInconclusive, strings.Join(vague, "; ")
	}
	return FrequencyAgree, fmt.Sprintf("gain, phase and spread (%.4g, predicted %.4g) within their intervals widened by %g", s, h.Spread, tol)
}

// frequencyLabel spells a frequency for a metric label.
func frequencyLabel(f float64) string { return strconv.FormatFloat(f, 'g', 6, 64) }

// FrequencyResultOf describes the fit of frequency segment seg of the
// loop's reference against the prediction pred (its Harmonics) and judges
// it with tolerance tol, as the monitor does (judgeHarmonic): for a
// Monte Carlo of the loop fitted as a rig's samples.
func FrequencyResultOf(loop *profiles.Loop, seg int, est online.HarmonicEstimate, pred *estimate.Prediction, tol float64) FrequencyResult {
	return frequencyResult(loop, seg, est, harmonicAt(pred, seg), tol)
}

// NewFrequencyFit returns the fit the monitor uses for frequency segment
// seg of the loop's reference (confidence level 0.95).
func NewFrequencyFit(loop *profiles.Loop, seg int) *online.HarmonicFit {
	return newFit(loop, seg, 0.95)
}

// FrequencyResults returns the run's measured response per frequency of
// the loop's reference (nil with a constant reference).
func (m *Monitor) FrequencyResults() []FrequencyResult {
	m.mu.Lock()
	defer m.mu.Unlock()
	return m.frequencyResults()
}

func (m *Monitor) frequencyResults() []FrequencyResult {
	if len(m.fits) == 0 {
		return nil
	}
	out := make([]FrequencyResult, len(m.fits))
	for seg, fit := range m.fits {
		out[seg] = frequencyResult(m.loop, seg, fit.Result(), harmonicAt(m.pred, seg), m.opts.Tolerance)
	}
	return out
}
