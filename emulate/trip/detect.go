package trip

import (
	"fmt"
	"math"
	"time"
)

// Reasons of a safety trip: which bound a sample crossed.
const (
	ReasonAbsError     = "abs_error"     // MaxAbsError
	ReasonSecondMoment = "second_moment" // MaxSecondMoment
	ReasonRatio        = "ratio"         // MaxRatio
)

// Reasons are the reasons in the order a Detector checks them (and the
// monitor lists them in its metrics).
var Reasons = [...]string{ReasonAbsError, ReasonSecondMoment, ReasonRatio}

// Crossing is the bound a sample crossed.
type Crossing struct {
	// Reason is ReasonAbsError, ReasonSecondMoment or ReasonRatio.
	Reason string
	// Value crossed Bound: |e_i|, the windowed mean of eᵀe, or that mean
	// over the predicted E[eᵀe].
	Value, Bound float64
}

// Event is the safety trip's firing as the monitor reports it (the
// summary's trip object, json tags).
type Event struct {
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
	// Action is what the relay is to do (Action's spelling).
	Action string `json:"action"`
}

// Window is the trip's windowed mean of eᵀe as it stands, the very
// quantity the trip compares with max_second_moment (Mean) and, over the
// prediction in force, with max_ratio (Mean/Predicted). A report samples
// it so that its plot shows what the trip judged, over the trip's own
// window rather than the estimator's.
type Window struct {
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

// Detector judges samples of the tracking error against a Rule: the
// bounds, and the ring of the last ⌈Window/period⌉ x_k = e_kᵀe_k that the
// windowed bounds average. It does not latch (its owner stops calling
// Check once a crossing fired the trip) and is not safe for concurrent
// use: the monitor engine calls it under its lock.
type Detector struct {
	rule  Rule
	armed bool
	ring  []float64
	head  int
	full  bool
	sum   float64 // Σ ring, recomputed at each wrap
}

// NewDetector checks r for a loop sampled every period seconds and
// returns its detector. A bound 0 is not checked; Window 0 is
// DefaultWindow. Bounds and window must be finite and ≥ 0, and with a
// windowed bound (MaxSecondMoment, MaxRatio) the window must hold at least
// two periods (and at most 2²⁶ samples).
func NewDetector(r Rule, period float64) (*Detector, error) {
	for _, b := range []struct {
		key string
		v   float64
	}{{"max_abs_error", r.MaxAbsError}, {"max_second_moment", r.MaxSecondMoment}, {"max_ratio", r.MaxRatio}, {"window", r.Window}} {
		if !(b.v >= 0) || math.IsInf(b.v, 0) {
			return nil, fmt.Errorf("trip: %s: want a number ≥ 0, got %g", b.key, b.v)
		}
	}
	if r.Window == 0 {
		r.Window = DefaultWindow
	}
	d := &Detector{rule: r, armed: r.MaxAbsError > 0 || r.MaxSecondMoment > 0 || r.MaxRatio > 0}
	if r.MaxSecondMoment > 0 || r.MaxRatio > 0 {
		n := math.Ceil(r.Window/period - 1e-9) // 1e-9: 0.2 s / 20 ms is 10, not 10.000…1
		if n < 2 || n > 1<<26 {
			return nil, fmt.Errorf("trip: window %gs: want at least two periods (%gs each) and at most 2²⁶, got %g samples",
				r.Window, period, n)
		}
		d.ring = make([]float64, int(n))
	}
	return d, nil
}

// Rule is the detector's rule, its window defaulted.
func (d *Detector) Rule() Rule { return d.rule }

// Armed reports whether the rule sets any bound (false for a nil
// detector: no trip).
func (d *Detector) Armed() bool { return d != nil && d.armed }

// Check takes one sample: its error vector e, x = eᵀe, and the predicted
// E[eᵀe] in force (NaN or ≤ 0 when the prediction is not mean-square
// stable: the ratio is then not judged). It returns the first bound
// crossed, in the order of Reasons:
//
//   - MaxAbsError: any |e_i| above it;
//   - MaxSecondMoment: the mean of x over the window above it, once the
//     window is full;
//   - MaxRatio: that mean over predicted above it, once the window is full.
//
// Each check is O(1) (on average) and does not allocate.
func (d *Detector) Check(e []float64, x, predicted float64) (Crossing, bool) {
	if b := d.rule.MaxAbsError; b > 0 {
		for _, v := range e {
			if math.Abs(v) > b {
				return Crossing{ReasonAbsError, math.Abs(v), b}, true
			}
		}
	}
	if d.ring == nil {
		return Crossing{}, false
	}
	d.sum += x - d.ring[d.head]
	d.ring[d.head] = x
	d.head++
	if d.head == len(d.ring) {
		// Recompute the sum exactly at each wrap so that rounding does
		// not drift over a long run (O(1) per sample on average).
		d.head, d.full = 0, true
		s := 0.0
		for _, v := range d.ring {
			s += v
		}
		d.sum = s
	}
	if !d.full {
		return Crossing{}, false
	}
	mean := d.sum / float64(len(d.ring))
	if b := d.rule.MaxSecondMoment; b > 0 && mean > b {
		return Crossing{ReasonSecondMoment, mean, b}, true
	}
	if b := d.rule.MaxRatio; b > 0 && !math.IsNaN(predicted) && predicted > 0 {
		if r := mean / predicted; r > b {
			return Crossing{ReasonRatio, r, b}, true
		}
	}
	return Crossing{}, false
}

// Window returns the windowed mean as it stands (Mean NaN until the window
// is full; Predicted and Fired are the caller's to fill); ok is false when
// the rule judges no windowed bound (only max_abs_error, or none, or a nil
// detector).
func (d *Detector) Window() (w Window, ok bool) {
	if d == nil || d.ring == nil {
		return Window{}, false
	}
	w = Window{Mean: math.NaN(), Samples: len(d.ring), Seconds: d.rule.Window}
	if d.full {
		w.Mean = d.sum / float64(len(d.ring))
	}
	return w, true
}
