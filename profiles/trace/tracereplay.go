package trace

import (
	"fmt"
	"math/rand/v2"
	"rigwire/profiles/laws"
	"strconv"
)

// What a replaying direction does once the trace is used up.
const (
	AtEndLoop  = "loop"  // start again from the first probe
	AtEndStop  = "stop"  // lose every datagram from then on
	AtEndClean = "clean" // forward every datagram from then on, undelayed
)

// Replay is a direction that replays a recorded trace: the i-th datagram
// the relay sees in that direction gets the i-th probe's fate, lost or
// delayed by the delay recorded in Column. The profile writes it as
//
//	sensor_to_controller:
//	  trace: {file: wifi.csv, column: one_way_s, at_end: loop}
//
// (column default one_way_s, at_end default loop). A direction with a
// trace is a one-state markov.Channel whose state has Loss = the trace's
// loss rate and Delay = this Replay, and whose Replay field is set.
//
// As a Delay (what the prediction and `impair check` see), a Replay is the
// empirical law of the trace's delivered delays, the same as kind
// empirical with those samples; with the State's loss this treats the
// trace as i.i.d. loss at its loss rate and i.i.d. delays from its
// empirical law. Only the relay replays it in order (emulate asks for
// Fates and keeps its own cursor); Sample draws from the empirical law.
type Replay struct {
	laws.Delay        // the empirical law of the delivered delays
	File       string // as written in the profile
	Column     string
	AtEnd      string
	Delays     []float64 // per probe, in order; 0 where lost
	Lost       []bool
	LossRate   float64
	Delivered  int
}

func (r *Replay) Kind() string { return "trace" }

// Sample draws from the empirical law of the delivered delays (not in
// order: see Replay).
func (r *Replay) Sample(rng *rand.Rand) float64 { return r.Delay.Sample(rng) }

func (r *Replay) String() string {
	return fmt.Sprintf("trace %s column %s (%d probes, %d delivered, loss %s), at end %s", r.File, r.Column, len(r.Lost), r.Delivered, strconv.FormatFloat(r.LossRate, 'g', 4, 64), r.AtEnd)
}

// NewReplay builds a Replay from the fates of a trace's column.
func NewReplay(file, column, atEnd string, delays []float64, lost []bool) (*Replay, error) {
	if len(delays) != len(lost) || len(lost) == 0 {
		return nil, fmt.Errorf("trace replay: want as many delays as fates, at least one")
	}
	switch atEnd {
	case AtEndLoop, AtEndStop, AtEndClean:
	default:
		return nil, fmt.Errorf("trace replay: at_end: want loop, stop or clean, got %q", atEnd)
	}
	r := &Replay{File: file, Column: column, AtEnd: atEnd, Delays: delays, Lost: lost}
	var kept []float64
	for i, l := range lost {
		if !l {
			kept = append(kept, delays[i])
		}
	}
	r.Delivered = len(kept)
	r.LossRate = 1 - float64(len(kept))/float64(len(lost))
	if len(kept) == 0 {
		r.Delay = laws.Constant{} // every probe lost: the delay never matters
		return r, nil
	}
	law, err := laws.NewEmpirical(kept, 0)
	if err != nil {
		return nil, fmt.Errorf("trace replay: %w", err)
	}
	r.Delay = law
	return r, nil
}
