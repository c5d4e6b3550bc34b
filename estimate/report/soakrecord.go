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

// netSnap is the relay's counters at one moment, with the order in which
// it was taken among the recorder's marks.
type netSnap struct {
	seq int
	st  emulate.Stats
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
func (r *Recorder) snap() *netSnap { return &netSnap{st: r.stats()} }

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
	fromDirs, toDirs := from.st.Directions(), to.st.Directions()
	for i, dir := range []string{profiles.SensorToController, profiles.ControllerToActuator} {
		a, b := fromDirs[i], toDirs[i]
		m := DirectionMeasure{Direction: dir,
			Datagrams: int64(b.Read()) - int64(a.Read()),
			Dropped:   int64(b.Dropped) - int64(a.Dropped),
			Delays:    int64(b.Delay.Count) - int64(a.Delay.Count),
			DelaySum:  b.Delay.Sum - a.Delay.Sum,
		}
		m.Other = m.Datagrams - m.Dropped - (int64(b.Forwarded) - int64(a.Forwarded))
		m.DelayMedian = histMedian(bucketCounts(a.Delay, b.Delay))
		out = append(out, m)
	}
	return out
}

// bucketCounts is the non-cumulative histogram of what the relay's
// histogram b counted since a (a zero a: since the start), its overflow
// bucket (+Inf) last; a differs from b only when both have the same
// buckets.
func bucketCounts(a, b emulate.Histogram) Histogram {
	// cum is h's cumulative count at bucket i, the overflow bucket's
	// (every observation) after the last.
	cum := func(h emulate.Histogram, i int) float64 {
		if i < len(h.Buckets) {
			return float64(h.Buckets[i].Count)
		}
		return float64(h.Count)
	}
	since := len(a.Buckets) == len(b.Buckets)
	var h Histogram
	prev := 0.0
	for i := 0; i <= len(b.Buckets); i++ {
		u := math.Inf(1)
		if i < len(b.Buckets) {
			u = b.Buckets[i].UpperBound
		}
		c := cum(b, i)
		if since {
			c -= cum(a, i)
		}
		h.Upper = append(h.Upper, u)
		h.Counts = append(h.Counts, math.Max(c-prev, 0))
		prev = c
	}
	return h
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
	for i, d := range cut.st.Directions() {
		during[d.Direction] = bucketCounts(emulate.Histogram{}, d.Delay)
		if r.trip != nil && r.end != nil {
			after[d.Direction] = bucketCounts(d.Delay, r.end.st.Directions()[i].Delay)
		}
	}
	return during, after
}

// LossRuns are the relay's histograms of loss-run lengths by direction,
// as they stand now, in non-cumulative bucket counts.
func (r *Recorder) LossRuns() map[string]Histogram {
	out := map[string]Histogram{}
	for _, d := range r.stats().Directions() {
		out[d.Direction] = bucketCounts(emulate.Histogram{}, d.LossRuns)
	}
	return out
}
