package engine

import (
	"fmt"
	"math"
	"strings"
	"time"

	"rigwire/estimate"
	"rigwire/profiles"
)

// Verdicts of a phase.
const (
	PhasePass    = "pass"
	PhaseFail    = "fail"
	PhaseRunning = "running"
)

// DefaultMinSamples is the least number of judged samples of a phase when
// its check leaves MinSamples 0.
const DefaultMinSamples = 20

// PhaseResult is one soak phase in the summary. Values that do not exist
// (no samples, unstable prediction, the end of the running phase) are
// null.
type PhaseResult struct {
	Index int    `json:"index"`
	Name  string `json:"name"`
	// StartSeconds and EndSeconds are seconds since the monitor started.
	StartSeconds float64  `json:"start_seconds"`
	EndSeconds   *float64 `json:"end_seconds"`
	// Samples were judged (added to the phase's estimate);
	// SettleSamples arrived within the settling time and were not.
	Samples               int64    `json:"samples"`
	SettleSamples         int64    `json:"settle_samples"`
	ErrorSecondMoment     *float64 `json:"error_second_moment"`
	CILow                 *float64 `json:"ci_low"`
	CIHigh                *float64 `json:"ci_high"`
	PredictedSecondMoment *float64 `json:"predicted_second_moment"`
	Ratio                 *float64 `json:"measured_to_predicted"`
	// Verdict is "pass", "fail" or, for the running phase, "running"
	// (Reason then gives the provisional judgement).
	Verdict         string   `json:"verdict"`
	Reason          string   `json:"reason"`
	Tolerance       *float64 `json:"tolerance"`
	MaxSecondMoment *float64 `json:"max_second_moment"`
	MinSamples      int      `json:"min_samples"`
}

// phase is one phase's state.
type phase struct {
	index     int
	name      string
	start     time.Time
	end       time.Time
	ended     bool
	judgeFrom time.Time // start + settle
	check     profiles.Check
	on        *estimate.Online
	settleN   int64
	// predSum and predN average the predicted E[eᵀe] in force at each
	// judged sample; unstable is set when one of them was not
	// mean-square stable.
	predSum  float64
	predN    int64
	unstable bool
}

// add takes one estimated sample e that arrived at at, with pr the
// predicted E[eᵀe] then in force (NaN when not stable).
func (p *phase) add(e []float64, at time.Time, pr float64) {
	if at.Before(p.judgeFrom) {
		p.settleN++
		return
	}
	p.on.AddError(e)
	if math.IsNaN(pr) {
		p.unstable = true
	} else {
		p.predSum += pr
		p.predN++
	}
}

// StartPhase closes the running phase (if any; it ends now) and starts
// phase index named name, compared with pred (nil: the run's prediction),
// with a fresh estimate. Estimated samples (those after the run's
// warm-up) that arrive before now + settle count as settling samples and
// are not judged; the later ones are. check is the phase's criterion,
// applied when the phase closes (see PhaseResult and judge).
//
// pred also becomes the prediction in force for the safety trip's ratio
// and later phases until UpdatePrediction or the next StartPhase; the
// run's own estimate, metrics and verdict keep comparing with the
// monitor's prediction (Prediction).
func (m *Monitor) StartPhase(index int, name string, pred *estimate.Prediction, settle time.Duration, check profiles.Check) {
	// The estimator allocates: do it outside the lock.
	on, err := estimate.NewOnline(estimate.OnlineOptions{Setpoint: m.loop.Setpoint, Level: m.opts.Level})
	if err != nil {
		panic(fmt.Sprintf("engine: phase estimator: %v", err)) // the run's own estimator was built with the same options
	}
	if pred == nil {
		pred = m.pred
	}
	m.mu.Lock()
	defer m.mu.Unlock()
	now := m.now()
	m.closePhase(now)
	p := &phase{index: index, name: name, start: now, judgeFrom: now.Add(settle), check: check, on: on}
	m.phases = append(m.phases, p)
	m.phase = p
	m.cur, m.curPr = pred, predictedOf(pred)
}

// UpdatePrediction replaces the prediction in force (a ramp's step):
// later samples of the running phase, and the safety trip's ratio, compare
// with pred. A phase's predicted value is the mean of the predicted
// E[eᵀe] in force at each of its judged samples — a quasi-static
// approximation, fair when the ramp is slow against the loop's settling
// time; if any judged sample had a prediction that is not mean-square
// stable, the phase's prediction is unstable. The run's own comparison
// keeps the monitor's prediction.
func (m *Monitor) UpdatePrediction(pred *estimate.Prediction) {
	m.mu.Lock()
	defer m.mu.Unlock()
	m.cur, m.curPr = pred, predictedOf(pred)
}

// CurrentPrediction is the prediction in force (StartPhase,
// UpdatePrediction; the monitor's prediction before any).
func (m *Monitor) CurrentPrediction() *estimate.Prediction {
	m.mu.Lock()
	defer m.mu.Unlock()
	return m.cur
}

// EndPhases closes the running phase, if any (at the end of a soak).
func (m *Monitor) EndPhases() {
	m.mu.Lock()
	defer m.mu.Unlock()
	m.closePhase(m.now())
}

func (m *Monitor) closePhase(now time.Time) {
	if m.phase != nil {
		m.phase.end, m.phase.ended = now, true
		m.phase = nil
	}
}

// Phases returns the phases so far, judged; the running one has verdict
// "running" and its provisional judgement in Reason.
func (m *Monitor) Phases() []PhaseResult {
	m.mu.Lock()
	defer m.mu.Unlock()
	return m.phaseResults()
}

// phaseResults is Phases under the lock.
func (m *Monitor) phaseResults() []PhaseResult {
	if len(m.phases) == 0 {
		return nil
	}
	out := make([]PhaseResult, len(m.phases))
	for i, p := range m.phases {
		out[i] = m.result(p)
	}
	return out
}

func (m *Monitor) result(p *phase) PhaseResult {
	st := p.on.Run(nil)
	pr := math.NaN()
	if !p.unstable && p.predN > 0 {
		pr = p.predSum / float64(p.predN)
	}
	r := PhaseResult{Index: p.index, Name: p.name, StartSeconds: p.start.Sub(m.started).Seconds(),
		Samples: st.Samples, SettleSamples: p.settleN,
		ErrorSecondMoment: finite(st.SecondMoment), CILow: finite(st.CILow), CIHigh: finite(st.CIHigh),
		PredictedSecondMoment: finite(pr), Ratio: finite(st.SecondMoment / pr),
		MinSamples: p.check.MinSamples}
	if r.MinSamples <= 0 {
		r.MinSamples = DefaultMinSamples
	}
	if p.check.Tolerance != nil {
		v := *p.check.Tolerance
		r.Tolerance = &v
	}
	if p.check.MaxSecondMoment != nil {
		v := *p.check.MaxSecondMoment
		r.MaxSecondMoment = &v
	}
	pass, reason := judge(st, pr, p.unstable, r.MinSamples, p.check)
	r.Verdict, r.Reason = PhaseFail, reason
	if pass {
		r.Verdict = PhasePass
	}
	if p.ended {
		end := p.end.Sub(m.started).Seconds()
		r.EndSeconds = &end
	} else {
		r.Reason = "so far " + r.Verdict + ": " + reason
		r.Verdict = PhaseRunning
	}
	return r
}

// judge applies a phase's check to its estimate st and predicted E[eᵀe]
// pr (NaN when none or unstable): fail with fewer than minSamples judged
// samples; with a tolerance, pass iff the run's verdict rule says "agree"
// (the prediction lies in [lo − tol·|lo|, hi + tol·|hi|]), fail when the
// prediction is unstable; with a bound, pass iff the measured E[eᵀe] is
// at most the bound; with both, both must hold; with neither, pass.
func judge(st estimate.OnlineStats, pr float64, unstable bool, minSamples int, c profiles.Check) (bool, string) {
	if st.Samples < int64(minSamples) {
		return false, fmt.Sprintf("only %d judged samples, want ≥ %d", st.Samples, minSamples)
	}
	pass := true
	var reasons []string
	if c.Tolerance != nil {
		tol := *c.Tolerance
		switch v := verdict(st, pr, tol, !math.IsNaN(pr)); {
		case v == VerdictUnstable && unstable:
			pass = false
			reasons = append(reasons, "prediction unstable: no value to compare")
		case v == VerdictUnstable:
			pass = false
			reasons = append(reasons, "no prediction: no value to compare")
		case v == VerdictNoSamples:
			pass = false
			reasons = append(reasons, fmt.Sprintf("no measured interval yet (%d samples)", st.Samples))
		case v == VerdictAgree:
			reasons = append(reasons, fmt.Sprintf("prediction %.4g inside the measured interval [%.4g, %.4g] widened by %g",
				pr, st.CILow, st.CIHigh, tol))
		default:
			pass = false
			reasons = append(reasons, fmt.Sprintf("prediction %.4g outside the measured interval [%.4g, %.4g] widened by %g",
				pr, st.CILow, st.CIHigh, tol))
		}
	}
	if c.MaxSecondMoment != nil {
		bound := *c.MaxSecondMoment
		if st.SecondMoment <= bound {
			reasons = append(reasons, fmt.Sprintf("measured %.4g within the bound %.4g", st.SecondMoment, bound))
		} else {
			pass = false
			reasons = append(reasons, fmt.Sprintf("measured %.4g above the bound %.4g", st.SecondMoment, bound))
		}
	}
	if len(reasons) == 0 {
		return true, fmt.Sprintf("no criterion; %d judged samples", st.Samples)
	}
	return pass, strings.Join(reasons, "; ")
}
