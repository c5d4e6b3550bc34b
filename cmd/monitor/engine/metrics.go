package engine

import (
	"math"
	"strconv"

	"github.com/prometheus/client_golang/prometheus"

	"rigwire/profiles"
)

// Metric names, all rigwire_monitor_ (base units; counters end in
// _total). The measured values carry a window label: "run" for the whole
// run, else the window's length in seconds ("60", "600").
const (
	namePrefix = "rigwire_monitor_"
)

// RegisterMetrics registers the monitor's metrics on reg. They are read
// from the estimators at each scrape, so Feed touches no metric.
func (m *Monitor) RegisterMetrics(reg prometheus.Registerer) error {
	return reg.Register(&collector{m: m, d: newDescs()})
}

type descs struct {
	second, ciLow, ciHigh, mean, std, effective, windowSamples, ratio  *prometheus.Desc
	predicted, stable, radius, margin, tolerance                       *prometheus.Desc
	samples, datagrams, gaps, late, duplicates, stale, restarts        *prometheus.Desc
	missing                                                            *prometheus.Desc
	failures, skipped                                                  *prometheus.Desc
	phase, phaseSecond, phasePredicted, phasePassed, tripActive, trips *prometheus.Desc
	phaseInconclusive, afterTrip                                       *prometheus.Desc
}

func newDescs() *descs {
	d := func(name, help string, labels ...string) *prometheus.Desc {
		return prometheus.NewDesc(namePrefix+name, help, labels, nil)
	}
	return &descs{
		second:            d("error_second_moment", "Measured E[eᵀe] of the tracking error e = setpoint − y, by window (run: the whole run).", "window"),
		ciLow:             d("error_second_moment_ci_low", "Lower bound of the confidence interval of the measured E[eᵀe] (batch means), by window.", "window"),
		ciHigh:            d("error_second_moment_ci_high", "Upper bound of the confidence interval of the measured E[eᵀe] (batch means), by window.", "window"),
		mean:              d("error_mean", "Measured mean tracking error, by window and output index.", "window", "output"),
		std:               d("error_std", "Measured sqrt(E[eᵀe] − |E[e]|²), by window.", "window"),
		effective:         d("effective_samples", "Effective number of independent samples behind the interval, by window.", "window"),
		windowSamples:     d("window_samples", "Samples the estimate of each window covers.", "window"),
		ratio:             d("measured_to_predicted_ratio", "Measured over predicted E[eᵀe], by window.", "window"),
		predicted:         d("predicted_error_second_moment", "Predicted steady E[eᵀe] (NaN when not mean-square stable)."),
		stable:            d("predicted_mean_square_stable", "1 when the prediction says the loop is mean-square stable, else 0."),
		radius:            d("predicted_spectral_radius", "Spectral radius of the second-moment operator (stable below 1)."),
		margin:            d("predicted_loss_margin", "Extra loss on every packet at which mean-square stability is lost (1: none)."),
		tolerance:         d("tolerance_ratio", "Relative widening of the interval used for the verdict."),
		samples:           d("samples_total", "Samples estimated (decoded, not duplicates, after the warm-up)."),
		datagrams:         d("datagrams_total", "Datagrams received."),
		gaps:              d("sample_gaps_total", "Sequence numbers skipped when a higher one arrived (some may arrive late: see late_samples_total)."),
		missing:           d("missing_samples", "Samples never seen so far: sample gaps minus late arrivals."),
		late:              d("late_samples_total", "Samples that arrived after a later one (reordered), used."),
		duplicates:        d("duplicate_samples_total", "Samples whose sequence number was seen before, not used."),
		stale:             d("stale_samples_total", "Samples older than the reordering window, not used."),
		restarts:          d("sequence_restarts_total", "Jumps of the sensor's sequence counter taken as restarts."),
		failures:          d("decode_failures_total", "Datagrams that did not decode, by reason.", "reason"),
		skipped:           d("warmup_skipped_samples_total", "Samples skipped as warm-up."),
		phase:             d("phase", "1 for the running soak phase, 0 for the others.", "index", "phase"),
		phaseSecond:       d("phase_error_second_moment", "Measured E[eᵀe] over the judged samples of each soak phase.", "phase"),
		phasePredicted:    d("phase_predicted_error_second_moment", "Predicted E[eᵀe] of each soak phase (mean over its judged samples; NaN when unstable).", "phase"),
		phasePassed:       d("phase_passed", "1 when a closed soak phase passed its check, 0 when it failed (absent while running, inconclusive or not run).", "phase"),
		phaseInconclusive: d("phase_inconclusive", "1 when a closed soak phase could not be judged (inconclusive, or not run), 0 when it passed or failed (absent while running).", "phase"),
		afterTrip:         d("after_trip_samples_total", "Samples decoded after the safety trip fired: counted, estimated nowhere."),
		tripActive:        d("trip_active", "1 once the safety trip has fired (latched), else 0."),
		trips:             d("trips_total", "Safety trips fired, by reason (0 or 1: the trip is latched).", "reason"),
	}
}

type collector struct {
	m *Monitor
	d *descs
}

func (c *collector) Describe(ch chan<- *prometheus.Desc) {
	prometheus.DescribeByCollect(c, ch)
}

func (c *collector) Collect(ch chan<- prometheus.Metric) {
	m, d := c.m, c.d
	gauge := func(desc *prometheus.Desc, v float64, labels ...string) {
		ch <- prometheus.MustNewConstMetric(desc, prometheus.GaugeValue, v, labels...)
	}
	counter := func(desc *prometheus.Desc, v int64, labels ...string) {
		ch <- prometheus.MustNewConstMetric(desc, prometheus.CounterValue, float64(v), labels...)
	}
	pr := m.predicted()
	m.mu.Lock()
	defer m.mu.Unlock()
	emit := func(label string, second, lo, hi, std, eff float64, mean []float64, n int64) {
		gauge(d.second, second, label)
		gauge(d.ciLow, lo, label)
		gauge(d.ciHigh, hi, label)
		gauge(d.std, std, label)
		gauge(d.effective, eff, label)
		gauge(d.windowSamples, float64(n), label)
		gauge(d.ratio, second/pr, label)
		for i, v := range mean {
			gauge(d.mean, v, label, strconv.Itoa(i))
		}
	}
	st := m.on.Run(nil)
	emit("run", st.SecondMoment, st.CILow, st.CIHigh, st.Std, st.EffectiveSamples, st.Mean, st.Samples)
	for i, w := range m.windows {
		ws := m.on.Window(i, nil)
		emit(strconv.FormatFloat(w.Seconds(), 'g', -1, 64), ws.SecondMoment, ws.CILow, ws.CIHigh, ws.Std,
			ws.EffectiveSamples, ws.Mean, ws.Samples)
	}
	gauge(d.predicted, pr)
	stable, radius, margin := 0.0, math.NaN(), math.NaN()
	if m.pred != nil {
		if m.pred.MeanSquareStable {
			stable = 1
		}
		radius, margin = m.pred.SpectralRadius, m.pred.LossMargin
	}
	gauge(d.stable, stable)
	gauge(d.radius, radius)
	gauge(d.margin, margin)
	gauge(d.tolerance, m.opts.Tolerance)
	counter(d.samples, st.Samples)
	counter(d.datagrams, m.datagrams)
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
	for i, r := range profiles.DecodeReasons {
		counter(d.failures, m.failures[i], r.Reason)
	}
	// Phases by name; a repeated name keeps its latest phase so that
	// the scrape never has duplicate series.
	results := m.phaseResults()
	latest := map[string]int{}
	for i, r := range results {
		latest[r.Name] = i
	}
	for i, r := range results {
		if latest[r.Name] != i {
			continue
		}
		cur := 0.0
		if r.Verdict == PhaseRunning {
			cur = 1
		}
		gauge(d.phase, cur, strconv.Itoa(r.Index), r.Name)
		gauge(d.phaseSecond, value(r.ErrorSecondMoment), r.Name)
		gauge(d.phasePredicted, value(r.PredictedSecondMoment), r.Name)
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
	active := 0.0
	if m.trip.event != nil {
		active = 1
	}
	gauge(d.tripActive, active)
	for _, r := range tripReasons {
		var n int64
		if m.trip.event != nil && m.trip.event.Reason == r {
			n = 1
		}
		counter(d.trips, n, r)
	}
}

// value is *v, NaN for nil.
func value(v *float64) float64 {
	if v == nil {
		return math.NaN()
	}
	return *v
}
