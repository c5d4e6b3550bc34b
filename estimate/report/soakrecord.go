package report

import (
	"math"
	"sync"
	"time"

	"rigwire/emulate"
	"rigwire/emulate/trip"
	"rigwire/estimate/engine"
	"rigwire/profiles"
)

// netSnap is the relay's counters at one moment: per direction, the
// datagrams by outcome and the delay histogram (cumulative counts by
// upper bound, sum and count).
type netSnap struct {
	seq      int
	outcomes map[string]map[string]float64
	delay    map[string]delaySnap
}

type delaySnap struct {
	upper []float64 // increasing; the last is +Inf
	cum   []float64 // cumulative counts
	sum   float64
	count float64
}

// Recorder keeps the relay's counters at each phase's start, at the
// trip and at the end of a soak, and samples the trip's window over the
// run, for the report's per-phase network and its trip-window plot.
// Its methods may be called from any goroutine.
type Recorder struct {
	stats    func() emulate.Stats
	mon      *engine.Monitor
	monStart time.Time

	mu     sync.Mutex
	seq    int
	starts map[int]*netSnap
	trip   *netSnap
	end    *netSnap

	twEvery  float64
	twPoints []twPoint
	twDone   bool
}

type twPoint struct{ elapsed, mean, predicted float64 }

// TripWindowEvery is how often a soak samples the trip's window
// (Recorder.SampleTripWindow).
const TripWindowEvery = 100 * time.Millisecond

// maxTripWindowPoints bounds the trip window's samples; beyond it pairs
// are merged, keeping the larger (the peaks are what a trip is about).
const maxTripWindowPoints = 8192

// NewRecorder records the relay's counters as stats reads them, and the
// trip window of mon.
func NewRecorder(mon *engine.Monitor, stats func() emulate.Stats) *Recorder {
	return &Recorder{stats: stats, mon: mon, monStart: mon.Started(), starts: map[int]*netSnap{},
		twEvery: TripWindowEvery.Seconds()}
}

// snap reads the relay's counters now.
func (r *Recorder) snap() *netSnap {
	st := r.stats()
	s := &netSnap{outcomes: map[string]map[string]float64{}, delay: map[string]delaySnap{}}
	for _, d := range st.Directions() {
		oc := map[string]float64{}
		for _, o := range d.Outcomes() {
			oc[o.Outcome] = float64(o.Count)
		}
		s.outcomes[d.Direction] = oc
		var ds delaySnap
		for _, b := range d.Delay.Buckets {
			ds.upper = append(ds.upper, b.UpperBound)
			ds.cum = append(ds.cum, float64(b.Count))
		}
		ds.upper = append(ds.upper, math.Inf(1))
		ds.cum = append(ds.cum, float64(d.Delay.Count))
		ds.sum, ds.count = d.Delay.Sum, float64(d.Delay.Count)
		s.delay[d.Direction] = ds
	}
	return s
}

func (r *Recorder) mark(s *netSnap) *netSnap {
	r.seq++
	s.seq = r.seq
	return s
}

// PhaseStart records the counters as phase k starts.
func (r *Recorder) PhaseStart(k int) {
	s := r.snap()
	r.mu.Lock()
	defer r.mu.Unlock()
	if r.trip == nil {
		r.starts[k] = r.mark(s)
	}
}

// Tripped records the counters as the trip fires (the soak's loop sees it
// within a moment; what the relay handled in that moment is counted
// before the trip).
func (r *Recorder) Tripped() {
	s := r.snap()
	r.mu.Lock()
	defer r.mu.Unlock()
	if r.trip == nil {
		r.trip = r.mark(s)
	}
}

// Finish records the counters at the end of the run.
func (r *Recorder) Finish() {
	s := r.snap()
	r.mu.Lock()
	defer r.mu.Unlock()
	r.end = r.mark(s)
}

// SampleTripWindow records the trip's windowed mean now; after the trip
// fired it records the frozen window once (the value that fired) and
// stops.
func (r *Recorder) SampleTripWindow() {
	w, ok := r.mon.TripWindow()
	if !ok {
		return
	}
	r.mu.Lock()
	defer r.mu.Unlock()
	if r.twDone {
		return
	}
	r.twDone = w.Fired
	r.twPoints = append(r.twPoints, twPoint{time.Since(r.monStart).Seconds(), w.Mean, w.Predicted})
	if len(r.twPoints) >= maxTripWindowPoints {
		merged := r.twPoints[:0]
		for i := 0; i+1 < len(r.twPoints); i += 2 {
			a, b := r.twPoints[i], r.twPoints[i+1]
			if math.IsNaN(a.mean) || b.mean > a.mean {
				a = b
			}
			merged = append(merged, a)
		}
		r.twPoints = merged
		r.twEvery *= 2
	}
}

// tripWindow is the trip's windowed quantity for the report: the ratio
// when the trip judges one (or fired on it), else the second moment.
func (r *Recorder) tripWindow(t trip.Rule, ev *trip.Event) *TripWindow {
	r.mu.Lock()
	defer r.mu.Unlock()
	if len(r.twPoints) == 0 {
		return nil
	}
	w := &TripWindow{Quantity: "second_moment", Bound: t.MaxSecondMoment, Every: r.twEvery,
		Seconds: t.Window}
	if w.Seconds == 0 {
		w.Seconds = trip.DefaultWindow
	}
	if (t.MaxRatio > 0 && (ev == nil || ev.Reason != trip.ReasonSecondMoment)) || t.MaxSecondMoment == 0 {
		w.Quantity, w.Bound = "ratio", t.MaxRatio
	}
	for _, p := range r.twPoints {
		v := p.mean
		if w.Quantity == "ratio" {
			v = p.mean / p.predicted
		}
		w.Points = append(w.Points, TripPoint{Elapsed: p.elapsed, Value: v})
	}
	return w
}

// upper is the first snapshot after from among the later phase starts,
// the trip and the end.
func (r *Recorder) upper(from *netSnap) *netSnap {
	var best *netSnap
	consider := func(s *netSnap) {
		if s != nil && s.seq > from.seq && (best == nil || s.seq < best.seq) {
			best = s
		}
	}
	for _, s := range r.starts {
		consider(s)
	}
	consider(r.trip)
	consider(r.end)
	return best
}

// phaseMeasure is what the relay counted per direction during phase k
// (up to the trip when the trip cut it).
func (r *Recorder) phaseMeasure(k int) []DirectionMeasure {
	r.mu.Lock()
	defer r.mu.Unlock()
	from := r.starts[k]
	if from == nil {
		return nil
	}
	to := r.upper(from)
	if to == nil {
		return nil
	}
	var out []DirectionMeasure
	for _, dir := range []string{profiles.SensorToController, profiles.ControllerToActuator} {
		m := DirectionMeasure{Direction: dir, DelayMedian: math.NaN()}
		for outcome, v := range to.outcomes[dir] {
			n := int64(math.Round(v - from.outcomes[dir][outcome]))
			m.Datagrams += n
			switch outcome {
			case "forwarded":
			case "dropped":
				m.Dropped += n
			default:
				m.Other += n
			}
		}
		a, b := from.delay[dir], to.delay[dir]
		m.Delays = int64(math.Round(b.count - a.count))
		m.DelaySum = b.sum - a.sum
		if h, ok := diffHistogram(a, b); ok {
			m.DelayMedian = histMedian(h)
		}
		out = append(out, m)
	}
	return out
}

// diffHistogram is the non-cumulative histogram of the delays between two
// snapshots.
func diffHistogram(a, b delaySnap) (Histogram, bool) {
	if len(b.upper) == 0 {
		return Histogram{}, false
	}
	var h Histogram
	prev := 0.0
	for i, u := range b.upper {
		c := b.cum[i]
		if i < len(a.cum) && len(a.upper) == len(b.upper) {
			c -= a.cum[i]
		}
		h.Upper = append(h.Upper, u)
		h.Counts = append(h.Counts, math.Max(c-prev, 0))
		prev = c
	}
	return h, true
}

// histMedian reads the median off a histogram, linear within its bucket
// (the first bucket from 0); NaN when empty or in the overflow bucket.
func histMedian(h Histogram) float64 {
	total := 0.0
	for _, c := range h.Counts {
		total += c
	}
	if total == 0 {
		return math.NaN()
	}
	half, cum, lo := total/2, 0.0, 0.0
	for i, c := range h.Counts {
		hi := h.Upper[i]
		if cum+c >= half && c > 0 {
			if math.IsInf(hi, 1) {
				return math.NaN()
			}
			return lo + (hi-lo)*(half-cum)/c
		}
		cum += c
		lo = hi
	}
	return math.NaN()
}

// delays are the drawn-delay histograms for the report: up to the trip
// (or the end), and after the trip apart.
func (r *Recorder) delays() (during, after map[string]Histogram) {
	r.mu.Lock()
	defer r.mu.Unlock()
	during, after = map[string]Histogram{}, map[string]Histogram{}
	cut := r.trip
	if cut == nil {
		cut = r.end
	}
	if cut == nil {
		return during, after
	}
	for dir, ds := range cut.delay {
		if h, ok := diffHistogram(delaySnap{}, ds); ok {
			during[dir] = h
		}
		if r.trip != nil && r.end != nil {
			if h, ok := diffHistogram(ds, r.end.delay[dir]); ok {
				after[dir] = h
			}
		}
	}
	return during, after
}

// LossRuns are the relay's histograms of loss-run lengths by direction,
// as they stand now, in non-cumulative bucket counts.
func (r *Recorder) LossRuns() map[string]Histogram {
	out := map[string]Histogram{}
	for _, d := range r.stats().Directions() {
		var h Histogram
		prev := 0.0
		for _, b := range d.LossRuns.Buckets {
			c := float64(b.Count)
			h.Upper = append(h.Upper, b.UpperBound)
			h.Counts = append(h.Counts, c-prev)
			prev = c
		}
		h.Upper = append(h.Upper, math.Inf(1))
		h.Counts = append(h.Counts, float64(d.LossRuns.Count)-prev)
		out[d.Direction] = h
	}
	return out
}
