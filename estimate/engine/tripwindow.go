package engine

import (
	"math"
	"time"
)

// TripWindow is the safety trip's windowed mean of eᵀe as it stands, the
// very quantity the trip compares with max_second_moment (Mean) and, over
// the prediction in force, with max_ratio (Mean/Predicted). A report
// samples it so that its plot shows what the trip judged, over the trip's
// own window rather than the estimator's.
type TripWindow struct {
	// Mean of eᵀe over the last Samples samples; NaN until the window has
	// filled (the trip judges only a full window).
	Mean    float64
	Samples int
	// Seconds is the trip's window (the loop's trip.window).
	Seconds float64
	// Predicted is the prediction's E[eᵀe] in force; NaN when it is not
	// certified mean-square stable (the ratio is then not judged).
	Predicted float64
	// Fired is set once the trip has fired: the window no longer moves.
	Fired bool
}

// TripWindow returns the trip window's state; ok is false when the trip
// judges no windowed bound (no trip, or only max_abs_error).
func (m *Monitor) TripWindow() (w TripWindow, ok bool) {
	m.mu.Lock()
	defer m.mu.Unlock()
	t := &m.trip
	if t.ring == nil {
		return TripWindow{}, false
	}
	w = TripWindow{Mean: math.NaN(), Samples: len(t.ring), Seconds: t.cfg.Window, Predicted: m.curPr,
		Fired: t.event != nil}
	if t.full {
		w.Mean = t.sum / float64(len(t.ring))
	}
	return w, true
}

// Started is when the monitor started: the origin of every elapsed time
// it reports (history points, phases, the trip).
func (m *Monitor) Started() time.Time {
	m.mu.Lock()
	defer m.mu.Unlock()
	return m.started
}
