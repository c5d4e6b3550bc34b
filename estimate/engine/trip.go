package engine

import (
	"time"

	"rigwire/emulate/trip"
)

// The safety trip's bounds, its windowed mean and its event are the trip
// package's (trip.Rule, trip.Detector, trip.Event); what stays here is
// the hook that needs the monitor's own state: the error vector of the
// sample just decoded, the prediction in force, the sequence number, the
// running phase (which the trip cuts short), the latch and the monitor's
// lock, outside which fire is called.

// tripState is the monitor's side of the safety trip.
type tripState struct {
	det   *trip.Detector // nil: no trip set
	fire  func(trip.Event)
	event *trip.Event
}

// SetTrip arms the safety trip t: from the next sample on, Feed checks
// every decoded sample (warm-up and settling included; duplicates and
// stale samples are not samples) with a trip.Detector against
//
//   - MaxAbsError: any output's |e_i| above it;
//   - MaxSecondMoment: the mean of eᵀe over the last ⌈Window/period⌉
//     samples above it, once that many have arrived;
//   - MaxRatio: that mean over the predicted E[eᵀe] in force
//     (CurrentPrediction) above it, when that prediction is mean-square
//     stable and the window is full.
//
// A bound 0 is not checked; Window 0 is trip.DefaultWindow. The trip is
// latched: it fires once (the first bound crossed, in the order above),
// records the event (Tripped, Summary) and calls fire (may be nil) from
// Feed after the monitor's lock is released, so fire may call the monitor
// or the relay. SetTrip again re-arms with new bounds and an empty window
// but does not clear an event already fired. Each check is O(1) and does
// not allocate.
func (m *Monitor) SetTrip(t trip.Rule, fire func(trip.Event)) error {
	det, err := trip.NewDetector(t, m.loop.Period)
	if err != nil {
		return err
	}
	m.mu.Lock()
	defer m.mu.Unlock()
	m.trip = tripState{det: det, fire: fire, event: m.trip.event}
	return nil
}

// Tripped returns the trip's event, nil while it has not fired.
func (m *Monitor) Tripped() *trip.Event {
	m.mu.Lock()
	defer m.mu.Unlock()
	if m.trip.event == nil {
		return nil
	}
	c := *m.trip.event
	return &c
}

// checkTrip takes one sample's x = eᵀe (m.e holds e) under the lock and
// returns the event when it fires the trip.
func (m *Monitor) checkTrip(x float64, seq uint64, hasSeq bool, at time.Time) *trip.Event {
	c, fired := m.trip.det.Check(m.e, x, m.curPr)
	if !fired {
		return nil
	}
	ev := &trip.Event{Reason: c.Reason, Value: c.Value, Bound: c.Bound, At: at, Elapsed: at.Sub(m.started).Seconds(),
		Action: m.trip.det.Rule().Action.String()}
	if hasSeq {
		ev.Sequence = &seq
	}
	if m.phase != nil {
		ev.Phase = m.phase.name
		m.phase.cut = CutByTrip
	}
	m.trip.event = ev
	return ev
}

// TripWindow returns the trip window's state (trip.Window: the windowed
// mean, with the prediction in force and whether the trip fired); ok is
// false when the trip judges no windowed bound (no trip, or only
// max_abs_error).
func (m *Monitor) TripWindow() (w trip.Window, ok bool) {
	m.mu.Lock()
	defer m.mu.Unlock()
	w, ok = m.trip.det.Window()
	if !ok {
		return trip.Window{}, false
	}
	w.Predicted, w.Fired = m.curPr, m.trip.event != nil
	return w, true
}

// Started is when the monitor started: the origin of every elapsed time
// it reports (history points, phases, the trip).
func (m *Monitor) Started() time.Time {
	m.mu.Lock()
	defer m.mu.Unlock()
	return m.started
}
