package engine

import (
	"fmt"
	"math"
	"time"

	"rigwire/profiles"
)

// Reasons of a safety trip.
const (
	TripAbsError     = "abs_error"
	TripSecondMoment = "second_moment"
	TripRatio        = "ratio"
)

// tripReasons are the reasons in metric order.
var tripReasons = []string{TripAbsError, TripSecondMoment, TripRatio}

// DefaultTripWindow is the trip's window when the loop leaves it 0.
const DefaultTripWindow = time.Second

// TripEvent is the safety trip's firing.
type TripEvent struct {
	// Reason is "abs_error", "second_moment" or "ratio".
	Reason string `json:"reason"`
	// Value crossed Bound: |e_i|, the windowed mean of eᵀe, or that mean
	// over the predicted E[eᵀe].
	Value float64 `json:"value"`
	Bound float64 `json:"bound"`
	// Sequence is the sample's sequence number; null when the datagrams
	// carry none.
	Sequence *uint64 `json:"sequence"`
	// At is the sample's arrival; Elapsed seconds since the monitor
	// started.
	At      time.Time `json:"at"`
	Elapsed float64   `json:"elapsed_seconds"`
	// Phase is the running phase's name, "" outside phases.
	Phase string `json:"phase"`
	// Action is what the relay is to do (profiles.TripAction's spelling).
	Action string `json:"action"`
}

// tripState is the safety trip: its bounds and the ring of the last
// ring-length x_k = e_kᵀe_k.
type tripState struct {
	armed bool
	cfg   profiles.Trip
	fire  func(TripEvent)
	ring  []float64
	head  int
	full  bool
	sum   float64 // Σ ring, recomputed at each wrap
	event *TripEvent
}

// SetTrip arms the safety trip t: from the next sample on, Feed checks
// every decoded sample (warm-up and settling included; duplicates and
// stale samples are not samples) against
//
//   - MaxAbsError: any output's |e_i| above it;
//   - MaxSecondMoment: the mean of eᵀe over the last ⌈Window/period⌉
//     samples above it, once that many have arrived;
//   - MaxRatio: that mean over the predicted E[eᵀe] in force
//     (CurrentPrediction) above it, when that prediction is mean-square
//     stable and the window is full.
//
// A bound 0 is not checked; Window 0 is 1 s. The trip is latched: it
// fires once (the first bound crossed, in the order above), records the
// event (Tripped, Summary) and calls fire (may be nil) from Feed after
// the monitor's lock is released, so fire may call the monitor or the
// relay. SetTrip again re-arms with new bounds and an empty window but
// does not clear an event already fired. Each check is O(1) and does not
// allocate.
func (m *Monitor) SetTrip(t profiles.Trip, fire func(TripEvent)) error {
	for _, b := range []struct {
		key string
		v   float64
	}{{"max_abs_error", t.MaxAbsError}, {"max_second_moment", t.MaxSecondMoment}, {"max_ratio", t.MaxRatio}, {"window", t.Window}} {
		if !(b.v >= 0) || math.IsInf(b.v, 0) {
			return fmt.Errorf("trip: %s: want a number ≥ 0, got %g", b.key, b.v)
		}
	}
	if t.Window == 0 {
		t.Window = DefaultTripWindow.Seconds()
	}
	st := tripState{cfg: t, fire: fire, armed: t.MaxAbsError > 0 || t.MaxSecondMoment > 0 || t.MaxRatio > 0}
	if t.MaxSecondMoment > 0 || t.MaxRatio > 0 {
		n := math.Ceil(t.Window/m.loop.Period - 1e-9) // 1e-9: 0.2 s / 20 ms is 10, not 10.000…1
		if n < 2 || n > 1<<26 {
			return fmt.Errorf("trip: window %gs: want at least two periods (%gs each) and at most 2²⁶, got %g samples",
				t.Window, m.loop.Period, n)
		}
		st.ring = make([]float64, int(n))
	}
	m.mu.Lock()
	defer m.mu.Unlock()
	st.event = m.trip.event
	m.trip = st
	return nil
}

// Tripped returns the trip's event, nil while it has not fired.
func (m *Monitor) Tripped() *TripEvent {
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
func (m *Monitor) checkTrip(x float64, seq uint64, hasSeq bool, at time.Time) *TripEvent {
	t := &m.trip
	if b := t.cfg.MaxAbsError; b > 0 {
		for _, v := range m.e {
			if math.Abs(v) > b {
				return m.tripFired(TripAbsError, math.Abs(v), b, seq, hasSeq, at)
			}
		}
	}
	if t.ring == nil {
		return nil
	}
	t.sum += x - t.ring[t.head]
	t.ring[t.head] = x
	t.head++
	if t.head == len(t.ring) {
		// Recompute the sum exactly at each wrap so that rounding does
		// not drift over a long run (O(1) per sample on average).
		t.head, t.full = 0, true
		s := 0.0
		for _, v := range t.ring {
			s += v
		}
		t.sum = s
	}
	if !t.full {
		return nil
	}
	mean := t.sum / float64(len(t.ring))
	if b := t.cfg.MaxSecondMoment; b > 0 && mean > b {
		return m.tripFired(TripSecondMoment, mean, b, seq, hasSeq, at)
	}
	if b := t.cfg.MaxRatio; b > 0 && !math.IsNaN(m.curPr) && m.curPr > 0 {
		if r := mean / m.curPr; r > b {
			return m.tripFired(TripRatio, r, b, seq, hasSeq, at)
		}
	}
	return nil
}

func (m *Monitor) tripFired(reason string, v, bound float64, seq uint64, hasSeq bool, at time.Time) *TripEvent {
	ev := &TripEvent{Reason: reason, Value: v, Bound: bound, At: at, Elapsed: at.Sub(m.started).Seconds(),
		Action: m.trip.cfg.Action.String()}
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
