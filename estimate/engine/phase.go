package engine

import (
	"fmt"
	"math"
	"sort"
	"strings"
	"time"

	"rigwire/estimate"
	"rigwire/estimate/online"
	"rigwire/profiles"
)

// Verdicts of a phase.
const (
	PhasePass = "pass"
	PhaseFail = "fail"
	// PhaseInconclusive: the data could not tell (see the check's rule in
	// judgePhase); the reason says why.
	PhaseInconclusive = "inconclusive"
	// PhaseRunning: the phase has not ended; its reason gives the
	// judgement so far.
	PhaseRunning = "running"
	// PhaseNotRun: a planned phase (PlanPhases) that never started
	// before the soak ended, or that started only after the safety trip.
	PhaseNotRun = "not_run"
)

// How a phase was cut short.
const (
	CutByTrip    = "trip"
	CutInterrupt = "interrupted"
)

// PhaseResult is one soak phase in the summary. Values that do not exist
// (no samples, unstable prediction, the end of the running phase, the
// start of a phase not run) are null.
type PhaseResult struct {
	Index int    `json:"index"`
	Name  string `json:"name"`
	// StartSeconds and EndSeconds are seconds since the monitor started.
	StartSeconds *float64 `json:"start_seconds"`
	EndSeconds   *float64 `json:"end_seconds"`
	// Samples were judged (added to the phase's estimate);
	// SettleSamples arrived within the settling time and were not;
	// AfterTripSamples arrived after the safety trip fired and were not.
	Samples               int64    `json:"samples"`
	SettleSamples         int64    `json:"settle_samples"`
	AfterTripSamples      int64    `json:"after_trip_samples"`
	ErrorSecondMoment     *float64 `json:"error_second_moment"`
	CILow                 *float64 `json:"ci_low"`
	CIHigh                *float64 `json:"ci_high"`
	PredictedSecondMoment *float64 `json:"predicted_second_moment"`
	Ratio                 *float64 `json:"measured_to_predicted"`
	// Batches, BatchSize and BatchCorrelationZ describe the interval's
	// batches (see Summary).
	Batches           int      `json:"batches"`
	BatchSize         int64    `json:"batch_size"`
	BatchCorrelationZ *float64 `json:"batch_correlation_z"`
	// Verdict is "pass", "fail", "inconclusive", "not_run" or, for the
	// running phase, "running" (Reason then gives the provisional
	// judgement).
	Verdict string `json:"verdict"`
	Reason  string `json:"reason"`
	// CutShort is "trip" when the safety trip fired during the phase (it
	// is judged on its samples before the trip), "interrupted" when the
	// soak ended during it (EndPhases), else "".
	CutShort string `json:"cut_short"`
	// PredictionOutside is set when the phase's prediction lies outside
	// its measured interval although the verdict does not follow from
	// that comparison (a check with only max_second_moment); Warning
	// then says so.
	PredictionOutside bool     `json:"prediction_outside"`
	Warning           string   `json:"warning"`
	Tolerance         *float64 `json:"tolerance"`
	MaxSecondMoment   *float64 `json:"max_second_moment"`
	MinSamples        int      `json:"min_samples"`
	// Frequency is the measured response at the phase's frequency (key
	// frequency) beside the prediction, judged with the phase's
	// tolerance; OtherFrequencySamples arrived while the reference was
	// at another frequency and were not judged.
	Frequency             *FrequencyResult `json:"frequency_response,omitempty"`
	OtherFrequencySamples int64            `json:"other_frequency_samples,omitempty"`
}

// combineFrequency joins a phase's E[eᵀe] verdict with its frequency's:
// fail when either fails, else inconclusive when either is.
func combineFrequency(verdict, reason string, fr FrequencyResult) (string, string) {
	reason += "; at " + frequencyLabel(fr.FrequencyHz) + " Hz: " + fr.Verdict + ": " + fr.Reason
	switch {
	case verdict == PhaseFail || fr.Verdict == FrequencyDiffer:
		return PhaseFail, reason
	case verdict == PhaseInconclusive || fr.Verdict == FrequencyInconclusive:
		return PhaseInconclusive, reason
	}
	return verdict, reason
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
	on        *online.Estimator
	settleN   int64
	// afterTripN counts the samples after the safety trip;
	// startedAfterTrip is set when the trip had fired before the phase
	// started, cut how the phase was cut short.
	afterTripN       int64
	startedAfterTrip bool
	cut              string
	// predSum and predN average the predicted E[eᵀe] in force at each
	// judged sample; notStable is the worst stability of those
	// predictions that were not certified stable ("unstable" over
	// "marginal"), "" when all were.
	predSum   float64
	predN     int64
	notStable string
	// seg is the reference frequency the phase judges (check.Frequency),
	// −1 for every sample; fit its fit, otherN the samples at other
	// frequencies (not judged).
	seg          int
	fit          *online.HarmonicFit
	otherN       int64
	badFrequency bool
	// harm is the prediction at seg when the phase started.
	harm *estimate.Harmonic
}

// add takes one estimated sample e that arrived at at, with pr the
// predicted E[eᵀe] then in force (NaN when not stable) and notStable its
// stability when not certified stable.
func (p *phase) add(e []float64, at time.Time, pr float64, notStable string) {
	if at.Before(p.judgeFrom) {
		p.settleN++
		return
	}
	if math.IsNaN(pr) {
		if p.notStable != estimate.StabilityUnstable {
			p.notStable = notStable
		}
		p.on.AddErrorRef(e, 0)
		return
	}
	p.on.AddErrorRef(e, pr)
	p.predSum += pr
	p.predN++
}

// PlanPhases names the phases a soak is to play, in order, so that those
// that never start are listed as not run once EndPhases is called.
func (m *Monitor) PlanPhases(names []string) {
	m.mu.Lock()
	defer m.mu.Unlock()
	m.planned = append([]string(nil), names...)
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
	on, err := online.New(online.Options{Setpoint: m.loop.Setpoint, Level: m.opts.Level})
	if err != nil {
		panic(fmt.Sprintf("engine: phase estimator: %v", err)) // the run's own estimator was built with the same options
	}
	if pred == nil {
		pred = m.pred
	}
	seg := -1
	var fit *online.HarmonicFit
	if check.Frequency != 0 {
		if seg = m.loop.ReferenceSegment(check.Frequency); seg >= 0 {
			fit = newFit(m.loop, seg, m.opts.Level)
		}
	}
	m.mu.Lock()
	defer m.mu.Unlock()
	now := m.now()
	m.closePhase(now)
	p := &phase{index: index, name: name, start: now, judgeFrom: now.Add(settle), check: check, on: on,
		startedAfterTrip: m.trip.event != nil, seg: seg, fit: fit}
	if check.Frequency != 0 && seg < 0 {
		// Scenario.CheckFrequencies refuses this before a soak starts.
		p.badFrequency = true
	}
	m.phases = append(m.phases, p)
	m.phase = p
	m.cur, m.curPr, m.curStab = pred, predictedOf(pred), stabilityOf(pred)
	p.harm = harmonicAt(pred, seg)
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
	m.cur, m.curPr, m.curStab = pred, predictedOf(pred), stabilityOf(pred)
}

// CurrentPrediction is the prediction in force (StartPhase,
// UpdatePrediction; the monitor's prediction before any).
func (m *Monitor) CurrentPrediction() *estimate.Prediction {
	m.mu.Lock()
	defer m.mu.Unlock()
	return m.cur
}

// EndPhases closes the running phase, if any, at the end of a soak, and
// from then on lists the planned phases that never started as not run.
// interrupted says the soak ended before its scenario did: the running
// phase is then marked as cut short (unless the trip already cut it).
func (m *Monitor) EndPhases(interrupted bool) {
	m.mu.Lock()
	defer m.mu.Unlock()
	if interrupted && m.phase != nil && m.phase.cut == "" {
		m.phase.cut = CutInterrupt
	}
	m.closePhase(m.now())
	m.phasesEnded = true
}

func (m *Monitor) closePhase(now time.Time) {
	if m.phase != nil {
		m.phase.end, m.phase.ended = now, true
		m.phase = nil
	}
}

// Phases returns the phases so far, judged, in the order of their index;
// the running one has verdict "running" and its provisional judgement in
// Reason; after EndPhases, planned phases that never started are listed
// as not run.
func (m *Monitor) Phases() []PhaseResult {
	m.mu.Lock()
	defer m.mu.Unlock()
	return m.phaseResults()
}

// phaseResults is Phases under the lock.
func (m *Monitor) phaseResults() []PhaseResult {
	out := make([]PhaseResult, 0, max(len(m.phases), len(m.planned)))
	started := map[int]bool{}
	for _, p := range m.phases {
		out = append(out, m.result(p))
		started[p.index] = true
	}
	if m.phasesEnded {
		why := "not run: the soak ended before it"
		if ev := m.trip.event; ev != nil {
			why = fmt.Sprintf("not run: the safety trip (%s) ended the soak", ev.Reason)
			if ev.Phase != "" {
				why += fmt.Sprintf(" in phase %q", ev.Phase)
			}
		}
		for i, name := range m.planned {
			if !started[i] {
				out = append(out, PhaseResult{Index: i, Name: name, Verdict: PhaseNotRun, Reason: why,
					MinSamples: DefaultMinSamples})
			}
		}
	}
	if len(out) == 0 {
		return nil
	}
	sort.SliceStable(out, func(i, j int) bool { return out[i].Index < out[j].Index })
	return out
}

func (m *Monitor) result(p *phase) PhaseResult {
	st := p.on.Run(nil)
	pr := math.NaN()
	if p.notStable == "" && p.predN > 0 {
		pr = p.predSum / float64(p.predN)
	}
	start := p.start.Sub(m.started).Seconds()
	r := PhaseResult{Index: p.index, Name: p.name, StartSeconds: &start,
		Samples: st.Samples, SettleSamples: p.settleN, AfterTripSamples: p.afterTripN,
		ErrorSecondMoment: finite(st.SecondMoment), CILow: finite(st.CILow), CIHigh: finite(st.CIHigh),
		PredictedSecondMoment: finite(pr), Ratio: finite(st.SecondMoment / pr),
		Batches: st.Batches, BatchSize: st.BatchSize, BatchCorrelationZ: finite(st.BatchCorrelationZ),
		MinSamples: p.check.MinSamples, CutShort: p.cut}
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
	r.Verdict, r.Reason, r.Warning = judgePhase(st, pr, p.notStable, r.MinSamples, p.check)
	r.PredictionOutside = r.Warning != ""
	if p.seg >= 0 {
		tol := 0.0
		if p.check.Tolerance != nil {
			tol = *p.check.Tolerance
		}
		fr := frequencyResult(m.loop, p.seg, p.fit.Result(), p.harm, tol)
		r.Frequency, r.OtherFrequencySamples = &fr, p.otherN
		if p.check.Tolerance != nil {
			r.Verdict, r.Reason = combineFrequency(r.Verdict, r.Reason, fr)
		}
	}
	if p.badFrequency {
		r.Verdict, r.Reason = PhaseInconclusive, fmt.Sprintf("frequency %g Hz is not one of the loop's reference frequencies", p.check.Frequency)
	}
	switch {
	case p.startedAfterTrip:
		r.Verdict = PhaseNotRun
		r.Reason = fmt.Sprintf("not run: started after the safety trip (its %d samples, on the tripped link, are not judged)", p.afterTripN)
		r.Warning, r.PredictionOutside = "", false
	case p.cut == CutByTrip:
		r.Reason += fmt.Sprintf("; cut short by the safety trip: judged on its %d samples before the trip, %d after it not judged",
			st.Samples, p.afterTripN)
	case p.cut == CutInterrupt:
		r.Reason += "; cut short: the soak was interrupted"
	}
	if p.ended {
		end := p.end.Sub(m.started).Seconds()
		r.EndSeconds = &end
	} else if r.Verdict != PhaseNotRun {
		r.Reason = "so far " + r.Verdict + ": " + r.Reason
		r.Verdict = PhaseRunning
	}
	return r
}

// judgePhase applies a phase's check c to its estimate st and predicted
// E[eᵀe] pr (NaN when none or not certified stable; notStable then says
// which) and returns the verdict, the reason and a warning:
//
//   - neither tolerance nor bound: pass, not judged;
//   - tolerance: judgeInterval's rule with the check's tolerance and
//     minSamples: agree passes, above and below fail, inconclusive stays
//     inconclusive, a prediction not certified stable fails;
//   - max_second_moment: with enough samples and batches (as for the
//     tolerance), pass when the measured interval lies at or below the
//     bound, fail when it lies above it, inconclusive when it straddles
//     it (the worst-case interval when the batches are short, as in
//     judgeInterval). When the prediction lies outside that
//     interval, the warning says so (the phase still passes or fails on
//     its bound: the check asked for the bound only);
//   - both: fail when either fails, else inconclusive when either is,
//     else pass.
func judgePhase(st online.Stats, pr float64, notStable string, minSamples int, c profiles.Check) (verdict, reason, warning string) {
	if c.Tolerance == nil && c.MaxSecondMoment == nil {
		return PhasePass, fmt.Sprintf("no criterion: not judged (%d samples)", st.Samples), ""
	}
	var verdicts, reasons []string
	if c.Tolerance != nil {
		v, why := judgeInterval(st, pr, *c.Tolerance, notStable, minSamples)
		switch v {
		case VerdictAgree:
			verdicts = append(verdicts, PhasePass)
		case VerdictInconclusive:
			verdicts = append(verdicts, PhaseInconclusive)
		default:
			verdicts = append(verdicts, PhaseFail)
		}
		reasons = append(reasons, why)
	}
	if c.MaxSecondMoment != nil {
		v, why := judgeBound(st, *c.MaxSecondMoment, minSamples)
		verdicts = append(verdicts, v)
		reasons = append(reasons, why)
		if c.Tolerance == nil {
			warning = outsideWarning(st, pr, minSamples)
		}
	}
	verdict = PhasePass
	for _, v := range verdicts {
		switch {
		case v == PhaseFail:
			verdict = PhaseFail
		case v == PhaseInconclusive && verdict == PhasePass:
			verdict = PhaseInconclusive
		}
	}
	reason = strings.Join(reasons, "; ")
	if warning != "" {
		reason += "; warning: " + warning
	}
	return verdict, reason, warning
}

// judgeBound is the verdict of a bound on E[eᵀe] (see judgePhase).
func judgeBound(st online.Stats, bound float64, minSamples int) (string, string) {
	if ok, why := enough(st, minSamples); !ok {
		return PhaseInconclusive, why
	}
	if !st.Converging() {
		return PhaseInconclusive, notConverging(st)
	}
	lo, hi, short := interval(st)
	note := ""
	if short {
		note = " (worst case: " + shortWhy(st) + ")"
	}
	switch {
	case hi <= bound:
		return PhasePass, fmt.Sprintf("measured %.4g [%.4g, %.4g]%s within the bound %.4g", st.SecondMoment, lo, hi, note, bound)
	case lo > bound:
		return PhaseFail, fmt.Sprintf("measured %.4g [%.4g, %.4g]%s above the bound %.4g", st.SecondMoment, lo, hi, note, bound)
	}
	return PhaseInconclusive, fmt.Sprintf("measured %.4g [%.4g, %.4g]%s straddles the bound %.4g", st.SecondMoment, lo, hi, note, bound)
}

// outsideWarning is the warning of a bound-only check whose prediction pr
// lies outside the measured interval (not widened: the check has no
// tolerance), "" when it lies inside, is missing, or the data are too few
// to say.
func outsideWarning(st online.Stats, pr float64, minSamples int) string {
	if math.IsNaN(pr) {
		return ""
	}
	if ok, _ := enough(st, minSamples); !ok {
		return ""
	}
	lo, hi, _ := interval(st)
	switch {
	case pr < lo:
		return fmt.Sprintf("prediction %.4g outside the measured interval [%.4g, %.4g] (measured above it, ×%.3g)", pr, lo, hi, st.SecondMoment/pr)
	case pr > hi:
		return fmt.Sprintf("prediction %.4g outside the measured interval [%.4g, %.4g] (measured below it, ×%.3g)", pr, lo, hi, st.SecondMoment/pr)
	}
	return ""
}

// verdictInterval is the interval p's verdict uses (interval: the
// batch-means interval, or the worst case when the batches are short) and
// ok once the phase has the samples and complete batches a verdict needs
// (enough with minSamples); the metrics export it only then, so that an
// alert comparing it with the phase's prediction and tolerance says
// above or below exactly when the phase's tolerance check does.
// Under the monitor's lock.
func (p *phase) verdictInterval(minSamples int) (lo, hi float64, ok bool) {
	st := p.on.Run(nil)
	if ok, _ := enough(st, minSamples); !ok {
		return 0, 0, false
	}
	lo, hi, _ = interval(st)
	if math.IsNaN(lo) || math.IsNaN(hi) {
		return 0, 0, false
	}
	return lo, hi, true
}

// toleranceInForce is the tolerance of the verdict in force: the running
// phase's tolerance check, else the run's. Under the monitor's lock.
func (m *Monitor) toleranceInForce() float64 {
	if p := m.phase; p != nil && p.check.Tolerance != nil {
		return *p.check.Tolerance
	}
	return m.opts.Tolerance
}
