package fit

import (
	"fmt"
	"path/filepath"
	"strconv"

	"rigwire/profiles"
	"rigwire/profiles/laws"
	"rigwire/profiles/trace"
)

// TraceDelay says which delay of a probe trace is fitted.
type TraceDelay int

const (
	// OneWay fits the outbound one-way delays (one_way_s); the trace must
	// declare synchronised clocks.
	OneWay TraceDelay = iota
	// HalfRTT fits half of each round trip (assumes symmetric paths).
	HalfRTT
	// RoundTrip fits the whole round trip as one direction's delay.
	RoundTrip
)

// TraceFit is a profile fitted to a probe trace: the candidate delay laws
// and the loss models, and, for a burst channel, the mean dwells of its
// two states.
type TraceFit struct {
	Trace    *trace.Trace
	Column   string  // the trace column fitted
	What     string  // what the delays are ("half the round trip")
	Interval float64 // the trace's probe interval, seconds (0: not known)
	Delays   []DelayFit
	Loss     LossFit
	// DwellOK: the loss is a burst channel whose dwells Good and Bad
	// (seconds) reproduce its p and r at the probe interval.
	DwellOK   bool
	Good, Bad float64
}

// Trace fits delays and losses to tr. The delays are those of which; the
// losses those of the whole round trip (a probe is lost when no reply
// came back). Errors name the trace file.
func Trace(tr *trace.Trace, which TraceDelay) (*TraceFit, error) {
	r := &TraceFit{Trace: tr}
	scale := 1.0
	switch which {
	case OneWay:
		r.Column, r.What = "one_way_s", "one-way delay"
		if !tr.ClocksSynced {
			return nil, fmt.Errorf("%s: one-way delays need synchronised clocks, and the trace does not declare them (clocks_synced: true)", tr.File)
		}
	case HalfRTT:
		r.Column, r.What, scale = "rtt_s", "half the round trip", 0.5
	case RoundTrip:
		r.Column, r.What = "rtt_s", "round trip"
	default:
		return nil, fmt.Errorf("fitting a trace: unknown delay %d", which)
	}
	delays, lost, err := tr.Fates(r.Column)
	if err != nil {
		return nil, err
	}
	var kept []float64
	for i, l := range lost {
		if !l {
			kept = append(kept, scale*delays[i])
		}
	}
	if len(kept) < MinFitSamples {
		return nil, fmt.Errorf("%s: %d delivered probes, want at least %d to fit delays", tr.File, len(kept), MinFitSamples)
	}
	if r.Delays, err = Delays(kept); err != nil {
		return nil, fmt.Errorf("%s: %w", tr.File, err)
	}
	if r.Loss, err = Loss(lost); err != nil {
		return nil, fmt.Errorf("%s: %w", tr.File, err)
	}
	r.Interval = tr.ProbeInterval()
	if r.Loss.Burst && r.Interval > 0 {
		if r.Good, r.Bad, err = r.Loss.Dwell(r.Interval); err == nil {
			r.DwellOK = true
		}
	}
	return r, nil
}

// Directions a fitted channel can go to: one of the profile's, or both.
const BothDirections = "both"

// Draft is the fitted profile named name, ready for profiles.Write: the
// best delay law (smallest AIC) with the chosen loss model — a two-state
// good/burst channel when the losses come in bursts and the dwells are
// known, else i.i.d. loss — on direction (profiles.SensorToController,
// profiles.ControllerToActuator or BothDirections; the other one left
// clean), with comments saying where it came from.
func (r *TraceFit) Draft(name, direction string) profiles.Draft {
	best := r.Delays[0]
	d := profiles.Draft{Name: name, Comments: []string{
		fmt.Sprintf("fitted by impair fit from %s: %d probes, %s, probe interval %s", filepath.Base(r.Trace.File), r.Loss.N, r.What, traceSeconds.Format(r.Interval)),
		fmt.Sprintf("delay: %s chosen by AIC; KS D = %.4f, p = %.3g (conservative: parameters estimated)", best.Kind, best.KS, best.KSP),
	}}
	if r.DwellOK {
		d.Comments = append(d.Comments, fmt.Sprintf("loss: simplified Gilbert channel, p = %.4g, r = %.4g per probe; long-run loss %.4g, mean burst %.3g probes", r.Loss.P, r.Loss.R, r.Loss.LongRunLoss, r.Loss.MeanBurst))
	} else {
		d.Comments = append(d.Comments, fmt.Sprintf("loss: i.i.d., %.4g", r.Loss.Loss))
	}
	law := profiles.DraftDelay{Kind: best.Kind, Keys: best.Names, Values: best.Params}
	ch := &profiles.DraftChannel{Loss: r.Loss.Loss, Delay: law}
	if r.DwellOK {
		ch = &profiles.DraftChannel{States: []profiles.DraftState{
			{Name: "good", MeanDwell: r.Good, Loss: 0, Delay: law},
			{Name: "burst", MeanDwell: r.Bad, Loss: 1, Delay: law},
		}}
	}
	if direction == profiles.SensorToController || direction == BothDirections {
		d.SensorToController = ch
	}
	if direction == profiles.ControllerToActuator || direction == BothDirections {
		d.ControllerToActuator = ch
	}
	return d
}

// traceSeconds writes the fit's times (the probe interval, the burst
// channel's dwells) with the one seconds formatter: in seconds, six
// significant digits as the profile's numbers, a space before the unit.
var traceSeconds = laws.Seconds{Unit: "s", Digits: 6, Space: true}

// num writes a number with 6 significant digits.
func num(x float64) string { return strconv.FormatFloat(x, 'g', 6, 64) }
