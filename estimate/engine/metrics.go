package engine

import (
	"math"
	"strconv"
	"strings"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"rigwire/emulate/trip"
	"rigwire/estimate/online"
	"rigwire/profiles/datagram"
)

// Metric names, all rigwire_monitor_ (base units; counters end in
// _total). The measured values carry a window label: "run" for the whole
// run, else the window's length spelled as --windows spells it ("1m",
// "10m"; windowLabel).
//
// A measured value that does not exist yet — no sample in a window, an
// interval before its window holds two complete batches — is absent from
// the scrape, never NaN: error_second_moment_batches says how many
// batches there are. Predicted values are NaN when the prediction has
// none (not mean-square stable, no loss margin), as their Help says,
// beside predicted_mean_square_stable.
const (
	namePrefix = "rigwire_monitor_"
)

// RegisterMetrics registers the monitor's metrics on reg. They are read
// from the estimators at each scrape, so Feed touches no metric.
func (m *Monitor) RegisterMetrics(reg prometheus.Registerer) error {
	return reg.Register(&collector{m: m, d: newDescs()})
}

type descs struct {
	second, ciLow, ciHigh, mean, std, effective, windowSamples, ratio     *prometheus.Desc
	predicted, stable, radius, margin, tolerance                          *prometheus.Desc
	samples, datagrams, gaps, late, duplicates, stale, restarts           *prometheus.Desc
	missing, strangers                                                    *prometheus.Desc
	failures, skipped                                                     *prometheus.Desc
	phase, phaseSecond, phasePredicted, phasePassed, tripActive, trips    *prometheus.Desc
	phaseInconclusive, afterTrip                                          *prometheus.Desc
	commandAge, method                                                    *prometheus.Desc
	refGain, refGainLow, refGainHigh, refPhase, refPhaseLow, refPhaseHigh *prometheus.Desc
	refVar, refVarLow, refVarHigh, refSamples, refAgrees                  *prometheus.Desc
	predRefGain, predRefPhase, predRefVar, predRefVarPeak                 *prometheus.Desc
	batches, predictedInForce, phaseCILow, phaseCIHigh, phaseTolerance    *prometheus.Desc
	// all are the descriptors above, for Describe.
	all []*prometheus.Desc
}

func newDescs() *descs {
	var all []*prometheus.Desc
	d := func(name, help string, labels ...string) *prometheus.Desc {
		desc := prometheus.NewDesc(namePrefix+name, help, labels, nil)
		all = append(all, desc)
		return desc
	}
	ds := &descs{
		second:            d("error_second_moment", "Measured E[eᵀe] of the tracking error e = setpoint − y, by window (run: the whole run).", "window"),
		ciLow:             d("error_second_moment_ci_low", "Lower bound of the confidence interval of the measured E[eᵀe] (batch means), by window; absent with fewer than 2 complete batches (error_second_moment_batches).", "window"),
		ciHigh:            d("error_second_moment_ci_high", "Upper bound of the confidence interval of the measured E[eᵀe] (batch means; +Inf when very wide), by window; absent with fewer than 2 complete batches.", "window"),
		batches:           d("error_second_moment_batches", "Complete batches behind each window's interval: a window is cut into 30 batches of a thirtieth of its length, so a 10m window has its first interval (2 batches) 40 s after its first sample, a 1m window after 4 s; the run keeps 20 to 39 (10 to 19 merged). A verdict needs at least 10.", "window"),
		mean:              d("error_mean", "Measured mean tracking error, by window and output index.", "window", "output"),
		std:               d("error_std", "Measured sqrt(E[eᵀe] − |E[e]|²), by window.", "window"),
		effective:         d("effective_samples", "Effective number of independent samples behind the interval, by window.", "window"),
		windowSamples:     d("window_samples", "Samples the estimate of each window covers.", "window"),
		ratio:             d("measured_to_predicted_ratio", "Measured over predicted E[eᵀe], by window.", "window"),
		predicted:         d("predicted_error_second_moment", "Predicted steady E[eᵀe] the run's verdict and the windows compare with (NaN when not mean-square stable)."),
		predictedInForce:  d("predicted_error_second_moment_in_force", "Predicted steady E[eᵀe] in force now: during a soak the running phase's (the ramp step's during a ramp), else the run's (NaN when not mean-square stable)."),
		stable:            d("predicted_mean_square_stable", "1 when the prediction says the loop is mean-square stable, else 0."),
		radius:            d("predicted_spectral_radius", "Spectral radius of the second-moment operator (stable below 1; NaN when not computed: a Monte Carlo prediction)."),
		margin:            d("predicted_loss_margin", "Extra loss on every packet at which mean-square stability is lost (1: none)."),
		commandAge:        d("predicted_command_age_ratio", "Predicted share of periods that end with the actuator running on a command this many periods old (0: the period's own sample), or on one older than the loop's command horizon (stale).", "age"),
		method:            d("predicted_method", "1 for the method of the prediction: exact (the jump linear system) or monte_carlo (simulated from the same rules: the timing policy has no exact model; not certified).", "method"),
		tolerance:         d("tolerance_ratio", "Relative widening of the interval by the verdict in force: the running soak phase's tolerance check, else the run's --tolerance."),
		samples:           d("samples_total", "Samples estimated (decoded, not duplicates, after the warm-up)."),
		datagrams:         d("datagrams_total", "Datagrams received."),
		strangers:         d("stranger_datagrams_total", "Datagrams from a source other than the relay's tap (monitor run --from), counted and never decoded, by reason: other_host, other_port (the tap's address, another port, when --from names one).", "reason"),
		gaps:              d("sample_gaps_total", "Sequence numbers skipped when a higher one arrived (some may arrive late: see late_samples_total)."),
		missing:           d("missing_samples", "Samples never seen so far: sample gaps minus late arrivals."),
		late:              d("late_samples_total", "Samples that arrived after a later one (reordered), used."),
		duplicates:        d("duplicate_samples_total", "Samples whose sequence number was seen before, not used."),
		stale:             d("stale_samples_total", "Samples older than the reordering window, not used."),
		restarts:          d("sequence_restarts_total", "Jumps of the sensor's sequence counter taken as restarts."),
		failures:          d("decode_failures_total", "Datagrams that did not decode, by reason.", "reason"),
		skipped:           d("warmup_skipped_samples_total", "Samples skipped as warm-up."),
		phase:             d("phase", "1 for the running soak phase, 0 for the others (every planned phase is listed from the soak's start).", "index", "phase"),
		phaseSecond:       d("phase_error_second_moment", "Measured E[eᵀe] over the judged samples of each soak phase.", "phase"),
		phasePredicted:    d("phase_predicted_error_second_moment", "Predicted E[eᵀe] of each soak phase (mean over its judged samples; NaN when unstable).", "phase"),
		phaseCILow:        d("phase_error_second_moment_ci_low", "Lower bound of the interval a soak phase's verdict uses (batch means, or the worst case when its batches are short for the loop's correlation time); absent until the phase has its min_samples and 10 complete batches.", "phase"),
		phaseCIHigh:       d("phase_error_second_moment_ci_high", "Upper bound of the interval a soak phase's verdict uses; absent until the phase has its min_samples and 10 complete batches.", "phase"),
		phaseTolerance:    d("phase_tolerance_ratio", "Tolerance of a soak phase's check (the interval is widened to [lo·(1 − tol), hi·(1 + tol)]); absent for a phase whose check has none.", "phase"),
		phasePassed:       d("phase_passed", "1 when a closed soak phase passed its check, 0 when it failed (absent while running, inconclusive or not run).", "phase"),
		phaseInconclusive: d("phase_inconclusive", "1 when a closed soak phase could not be judged (inconclusive, or not run), 0 when it passed or failed (absent while running).", "phase"),
		afterTrip:         d("after_trip_samples_total", "Samples decoded after the safety trip fired: counted, estimated nowhere."),
		tripActive:        d("trip_active", "1 once the safety trip has fired (latched), else 0."),
		trips:             d("trips_total", "Safety trips fired, by reason (0 or 1: the trip is latched).", "reason"),
		refGain:           d("reference_gain", "Measured gain |Y/R| of the mean response from setpoint to output at each frequency of a sinusoidal reference (least squares at the frequency over the settled samples), by frequency and output; absent before a fit.", "frequency_hz", "output"),
		refGainLow:        d("reference_gain_ci_low", "Lower bound of the gain's confidence interval (batch means of the batch fits); absent with fewer than 10 batches of a cycle each.", "frequency_hz", "output"),
		refGainHigh:       d("reference_gain_ci_high", "Upper bound of the gain's confidence interval; absent with fewer than 10 batches.", "frequency_hz", "output"),
		refPhase:          d("reference_phase_radians", "Measured phase arg(Y/R) of the mean response from setpoint to output, by frequency and output.", "frequency_hz", "output"),
		refPhaseLow:       d("reference_phase_ci_low_radians", "Lower bound of the phase's confidence interval; absent with fewer than 10 batches or wider than ±π/2.", "frequency_hz", "output"),
		refPhaseHigh:      d("reference_phase_ci_high_radians", "Upper bound of the phase's confidence interval; absent as the lower.", "frequency_hz", "output"),
		refVar:            d("reference_error_variance", "Measured variance of the tracking error about its mean response (the residual of the fit, summed over outputs: the spread averaged over the phase), by frequency.", "frequency_hz"),
		refVarLow:         d("reference_error_variance_ci_low", "Lower bound of the spread's confidence interval; absent with fewer than 10 batches.", "frequency_hz"),
		refVarHigh:        d("reference_error_variance_ci_high", "Upper bound of the spread's confidence interval; absent with fewer than 10 batches.", "frequency_hz"),
		refSamples:        d("reference_samples_total", "Samples fitted at each frequency of a sinusoidal reference (settled, after the warm-up).", "frequency_hz"),
		refAgrees:         d("reference_agrees", "1 when gain, phase and spread at the frequency agree with the prediction within their intervals widened by the tolerance, 0 when one differs; absent while inconclusive.", "frequency_hz"),
		predRefGain:       d("predicted_reference_gain", "Predicted gain |Y/R| of the mean response from setpoint to output, by frequency and output (NaN when not predicted: not stable, or a Monte Carlo prediction).", "frequency_hz", "output"),
		predRefPhase:      d("predicted_reference_phase_radians", "Predicted phase arg(Y/R), by frequency and output (NaN when not predicted).", "frequency_hz", "output"),
		predRefVar:        d("predicted_reference_error_variance", "Predicted error variance about the mean response, averaged over the reference's phase and summed over outputs, by frequency (NaN when not predicted).", "frequency_hz"),
		predRefVarPeak:    d("predicted_reference_error_variance_peak", "Predicted error variance at its worst phase of the reference, by frequency (NaN when not predicted).", "frequency_hz"),
	}
	ds.all = all
	return ds
}

type collector struct {
	m *Monitor
	d *descs
}

// Describe sends every descriptor, also of the series a scrape may leave
// out (phases not started yet, intervals not there yet), so that a
// pedantic registry accepts every later scrape.
func (c *collector) Describe(ch chan<- *prometheus.Desc) {
	for _, d := range c.d.all {
		ch <- d
	}
}

func (c *collector) Collect(ch chan<- prometheus.Metric) {
	m, d := c.m, c.d
	gauge := func(desc *prometheus.Desc, v float64, labels ...string) {
		ch <- prometheus.MustNewConstMetric(desc, prometheus.GaugeValue, v, labels...)
	}
	counter := func(desc *prometheus.Desc, v int64, labels ...string) {
		ch <- prometheus.MustNewConstMetric(desc, prometheus.CounterValue, float64(v), labels...)
	}
	// measured is gauge for a measured value: absent while it does not
	// exist (NaN), never exported as NaN.
	measured := func(desc *prometheus.Desc, v float64, labels ...string) {
		if !math.IsNaN(v) {
			gauge(desc, v, labels...)
		}
	}
	m.mu.Lock()
	defer m.mu.Unlock()
	pr := m.predicted()
	emit := func(label string, st online.Stats) {
		measured(d.second, st.SecondMoment, label)
		measured(d.ciLow, st.CILow, label)
		measured(d.ciHigh, st.CIHigh, label)
		measured(d.std, st.Std, label)
		measured(d.effective, st.EffectiveSamples, label)
		gauge(d.windowSamples, float64(st.Samples), label)
		gauge(d.batches, float64(st.Batches), label)
		measured(d.ratio, st.SecondMoment/pr, label)
		for i, v := range st.Mean {
			measured(d.mean, v, label, strconv.Itoa(i))
		}
	}
	st := m.on.Run(nil)
	emit("run", st)
	for i, w := range m.windows {
		emit(windowLabel(w), m.on.Window(i, nil))
	}
	gauge(d.predicted, pr)
	gauge(d.predictedInForce, m.curPr)
	stable, radius, margin := 0.0, math.NaN(), math.NaN()
	if m.pred != nil {
		if m.pred.MeanSquareStable {
			stable = 1
		}
		radius, margin = m.pred.SpectralRadius, m.pred.LossMargin
	}
	gauge(d.stable, stable)
	if m.pred != nil && m.pred.Timing != nil {
		tr := m.pred.Timing
		for i, a := range tr.CommandAge {
			gauge(d.commandAge, a, strconv.Itoa(i))
		}
		gauge(d.commandAge, tr.Stale, "stale")
		gauge(d.method, 1, tr.Method)
	}
	gauge(d.radius, radius)
	gauge(d.margin, margin)
	gauge(d.tolerance, m.toleranceInForce())
	counter(d.samples, st.Samples)
	counter(d.datagrams, m.datagrams)
	for i, r := range StrangerReasons {
		counter(d.strangers, m.strangers[i], r)
	}
	// Gaps goes down when a late sample arrives; the counter counts every
	// skip (Gaps + Late never decreases) and the gauge the net.
	counter(d.gaps, m.seq.Counts.Gaps+m.seq.Counts.Late)
	gauge(d.missing, float64(m.seq.Counts.Gaps))
	counter(d.late, m.seq.Counts.Late)
	counter(d.duplicates, m.seq.Counts.Duplicates)
	counter(d.stale, m.seq.Counts.Stale)
	counter(d.restarts, m.seq.Counts.Restarts)
	counter(d.skipped, m.skipped)
	counter(d.afterTrip, m.afterTrip)
	for i, r := range datagram.Reasons {
		counter(d.failures, m.failures[i], r.Reason)
	}
	// Phases by name; a repeated name keeps its latest phase so that
	// the scrape never has duplicate series.
	results := m.phaseResults()
	byIndex := map[int]*phase{}
	for _, p := range m.phases {
		byIndex[p.index] = p
	}
	latest := map[string]int{}
	for i, r := range results {
		latest[r.Name] = i
	}
	shown := map[string]bool{}
	for i, r := range results {
		if latest[r.Name] != i {
			continue
		}
		cur := 0.0
		if r.Verdict == PhaseRunning {
			cur = 1
		}
		gauge(d.phase, cur, strconv.Itoa(r.Index), r.Name)
		shown[r.Name] = true
		measured(d.phaseSecond, value(r.ErrorSecondMoment), r.Name)
		gauge(d.phasePredicted, value(r.PredictedSecondMoment), r.Name)
		if p := byIndex[r.Index]; p != nil && r.Verdict != PhaseNotRun {
			if lo, hi, ok := p.verdictInterval(r.MinSamples); ok {
				gauge(d.phaseCILow, lo, r.Name)
				gauge(d.phaseCIHigh, hi, r.Name)
			}
		}
		if r.Tolerance != nil {
			gauge(d.phaseTolerance, *r.Tolerance, r.Name)
		}
		switch r.Verdict {
		case PhasePass:
			gauge(d.phasePassed, 1, r.Name)
			gauge(d.phaseInconclusive, 0, r.Name)
		case PhaseFail:
			gauge(d.phasePassed, 0, r.Name)
			gauge(d.phaseInconclusive, 0, r.Name)
		case PhaseInconclusive, PhaseNotRun:
			gauge(d.phaseInconclusive, 1, r.Name)
		}
	}
	// Planned phases not started yet, so that a soak is visible as one
	// (and a dashboard shows its plan) before its first phase starts.
	for i := len(m.planned) - 1; i >= 0; i-- {
		if name := m.planned[i]; !shown[name] {
			gauge(d.phase, 0, strconv.Itoa(i), name)
			shown[name] = true
		}
	}
	m.collectFrequencies(d, gauge, measured, counter)
	active := 0.0
	if m.trip.event != nil {
		active = 1
	}
	gauge(d.tripActive, active)
	for _, r := range trip.Reasons {
		var n int64
		if m.trip.event != nil && m.trip.event.Reason == r {
			n = 1
		}
		counter(d.trips, n, r)
	}
}

// windowLabel spells a window as the --windows flag does: Go's duration
// string without its zero tails ("1m", "10m", "1h", "1m30s", "500ms").
func windowLabel(w time.Duration) string {
	s := w.String()
	if t, ok := strings.CutSuffix(s, "m0s"); ok {
		s = t + "m"
	}
	if t, ok := strings.CutSuffix(s, "h0m"); ok {
		s = t + "h"
	}
	return s
}

// value is *v, NaN for nil.
func value(v *float64) float64 {
	if v == nil {
		return math.NaN()
	}
	return *v
}

// collectFrequencies exports the run's fits per frequency of a sinusoidal
// reference beside the prediction. Under the monitor's lock.
func (m *Monitor) collectFrequencies(d *descs, gauge, measured func(*prometheus.Desc, float64, ...string), counter func(*prometheus.Desc, int64, ...string)) {
	deg := math.Pi / 180
	for seg, fit := range m.fits {
		f := frequencyLabel(m.loop.Reference.Frequencies[seg])
		est := fit.Result()
		h := harmonicAt(m.pred, seg)
		fr := frequencyResult(m.loop, seg, est, h, m.opts.Tolerance)
		for i, o := range fr.Outputs {
			out := strconv.Itoa(i)
			if m.loop.Reference.Amplitude[i] == 0 {
				continue
			}
			measured(d.refGain, value(o.Gain), f, out)
			measured(d.refGainLow, value(o.GainCILow), f, out)
			measured(d.refGainHigh, value(o.GainCIHigh), f, out)
			measured(d.refPhase, value(o.PhaseDeg)*deg, f, out)
			measured(d.refPhaseLow, value(o.PhaseCILow)*deg, f, out)
			measured(d.refPhaseHigh, value(o.PhaseCIHigh)*deg, f, out)
			gauge(d.predRefGain, value(o.PredictedGain), f, out)
			gauge(d.predRefPhase, value(o.PredictedPhaseDeg)*deg, f, out)
		}
		measured(d.refVar, value(fr.Spread), f)
		measured(d.refVarLow, value(fr.SpreadCILow), f)
		measured(d.refVarHigh, value(fr.SpreadCIHigh), f)
		counter(d.refSamples, fr.Samples, f)
		pv, pk := math.NaN(), math.NaN()
		if h != nil {
			pv, pk = h.Spread, h.SpreadPeak
		}
		gauge(d.predRefVar, pv, f)
		gauge(d.predRefVarPeak, pk, f)
		switch fr.Verdict {
		case FrequencyAgree:
			gauge(d.refAgrees, 1, f)
		case FrequencyDiffer:
			gauge(d.refAgrees, 0, f)
		}
	}
}
