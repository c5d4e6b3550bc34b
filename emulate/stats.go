package emulate

import (
	"github.com/prometheus/client_golang/prometheus"
	dto "github.com/prometheus/client_model/go"

	"rigwire/profiles"
)

// Stats is a snapshot of what the relay has done since New, read from the
// very counters, gauges and histograms its metrics export (no second
// bookkeeping, so a snapshot and a scrape at the same moment agree).
// Counters are read one after another while the relay runs: a snapshot
// taken under traffic is a consistent count per field, not across fields.
type Stats struct {
	SensorToController   DirectionStats
	ControllerToActuator DirectionStats
	// Tap: copies of accepted sensor datagrams handed to the tap socket
	// (rigwire_relay_tap_datagrams_total).
	TapSent, TapSendErrors uint64
	// RecordLost: records the record file's writer could not keep up with.
	RecordLost uint64
	// Reloads by result (rigwire_relay_profile_reloads_total).
	ReloadsOK, ReloadErrors, ReloadsIgnored uint64
	// ScenarioSteps applied by Play.
	ScenarioSteps uint64
	// SensorSourceFirst and SensorSourceQuiet count the sensor source
	// changes by reason (the first to send; a relock after silence).
	SensorSourceFirst, SensorSourceQuiet uint64
	// Tripped: the safety trip has fired.
	Tripped bool
	// Turnaround: the controller's turnarounds measured by the pairing
	// (rigwire_relay_controller_turnaround_seconds); PairingFailures the
	// datagrams it could not pair, by reason
	// (rigwire_relay_pairing_failures_total). Both empty without one.
	Turnaround      Histogram
	PairingFailures map[string]uint64
}

// DirectionStats is one direction's part of a Stats. Every datagram the
// relay read in this direction is counted under exactly one outcome (the
// Outcome constants; Outcomes lists them in that order).
type DirectionStats struct {
	Direction  string // profiles.SensorToController or profiles.ControllerToActuator
	Forwarded  uint64 // released to its destination
	Dropped    uint64 // lost by the profile's loss draw
	Overflow   uint64 // the in-flight bound was reached
	Stranger   uint64 // from a source that is not the rig's
	Oversized  uint64 // longer than the largest datagram accepted
	SendError  uint64 // the kernel refused to send it
	Shutdown   uint64 // still held when a forced stop came
	Tripped    uint64 // dropped because the safety trip stopped commands
	NoActuator uint64 // a command before the actuator's address was known
	// ForwardedBytes: payload bytes released.
	ForwardedBytes uint64
	// Reordered: forwarded datagrams released after a datagram of the same
	// direction that arrived later (overtaken; also counted as Forwarded).
	Reordered uint64
	// InFlight: datagrams held now, waiting for their release time.
	InFlight int
	// Delay: the delays drawn (seconds); Lateness: actual minus due
	// release time of each forwarded datagram (seconds); LossRuns: lengths
	// of the runs of consecutive datagrams the profile dropped.
	Delay, Lateness, LossRuns Histogram
}

// Histogram is a snapshot of one of the relay's histograms.
type Histogram struct {
	Count uint64
	Sum   float64
	// Buckets: cumulative counts at each upper bound, ascending (the +Inf
	// bucket is Count).
	Buckets []Bucket
}

// Bucket is one cumulative bucket of a Histogram.
type Bucket struct {
	UpperBound float64
	Count      uint64
}

// OutcomeCount is one outcome's count in a direction.
type OutcomeCount struct {
	Outcome string // an Outcome constant
	Count   uint64
}

// Outcomes lists every outcome with its count, in the order of the
// Outcome constants (zeros included).
func (d DirectionStats) Outcomes() []OutcomeCount {
	out := make([]OutcomeCount, len(outcomeIndex))
	for i, name := range outcomeIndex {
		out[i] = OutcomeCount{Outcome: name, Count: *d.outcome(outcomeID(i))}
	}
	return out
}

// Read is how many datagrams the relay read in this direction: the sum of
// the outcomes.
func (d DirectionStats) Read() uint64 {
	var n uint64
	for i := range outcomeIndex {
		n += *d.outcome(outcomeID(i))
	}
	return n
}

// Directions are the two directions, sensor to controller first.
func (s Stats) Directions() []DirectionStats {
	return []DirectionStats{s.SensorToController, s.ControllerToActuator}
}

func (d *DirectionStats) outcome(o outcomeID) *uint64 {
	switch o {
	case oForwarded:
		return &d.Forwarded
	case oDropped:
		return &d.Dropped
	case oOverflow:
		return &d.Overflow
	case oStranger:
		return &d.Stranger
	case oOversized:
		return &d.Oversized
	case oSendError:
		return &d.SendError
	case oShutdown:
		return &d.Shutdown
	case oTripped:
		return &d.Tripped
	case oNoActuator:
		return &d.NoActuator
	}
	panic("emulate: an outcome without a field in DirectionStats")
}

// Stats reads the relay's counters now. It may be called from any
// goroutine, while the relay runs or after.
func (r *Relay) Stats() Stats {
	s := Stats{
		SensorToController:   r.sc.m.stats(profiles.SensorToController),
		ControllerToActuator: r.ca.m.stats(profiles.ControllerToActuator),
		TapSent:              counterValue(r.tapSent),
		TapSendErrors:        counterValue(r.tapFailed),
		RecordLost:           counterValue(r.m.RecordLost),
		ReloadsOK:            counterValue(r.m.Reloads.WithLabelValues("ok")),
		ReloadErrors:         counterValue(r.m.Reloads.WithLabelValues("error")),
		ReloadsIgnored:       counterValue(r.m.Reloads.WithLabelValues("ignored")),
		ScenarioSteps:        counterValue(r.m.ScenarioSteps),
		SensorSourceFirst:    counterValue(r.m.SensorSourceChanges.WithLabelValues(lockFirst)),
		SensorSourceQuiet:    counterValue(r.m.SensorSourceChanges.WithLabelValues(lockQuiet)),
		Tripped:              metricValue(r.m.Tripped).GetGauge().GetValue() == 1,
	}
	if r.pair != nil {
		s.Turnaround = histogramValue(r.m.Turnaround)
		s.PairingFailures = map[string]uint64{}
		for i, name := range pairFailures {
			s.PairingFailures[name] = counterValue(r.pair.fail[i])
		}
	}
	return s
}

// stats reads one direction's handles.
func (dm *dirMetrics) stats(name string) DirectionStats {
	d := DirectionStats{Direction: name}
	for i, c := range dm.outcome {
		*d.outcome(outcomeID(i)) = counterValue(c)
	}
	d.ForwardedBytes = counterValue(dm.bytes)
	d.Reordered = counterValue(dm.reordered)
	d.InFlight = int(metricValue(dm.inFlight).GetGauge().GetValue())
	d.Delay = histogramValue(dm.delay)
	d.Lateness = histogramValue(dm.lateness)
	d.LossRuns = histogramValue(dm.lossRuns)
	return d
}

// metricValue is what a metric would export now.
func metricValue(m prometheus.Metric) *dto.Metric {
	var out dto.Metric
	_ = m.Write(&out) // counters, gauges and histograms of client_golang do not fail
	return &out
}

func counterValue(c prometheus.Counter) uint64 {
	return uint64(metricValue(c).GetCounter().GetValue())
}

func histogramValue(o prometheus.Observer) Histogram {
	m, ok := o.(prometheus.Metric)
	if !ok {
		return Histogram{}
	}
	h := metricValue(m).GetHistogram()
	out := Histogram{Count: h.GetSampleCount(), Sum: h.GetSampleSum()}
	for _, b := range h.GetBucket() {
		out.Buckets = append(out.Buckets, Bucket{UpperBound: b.GetUpperBound(), Count: b.GetCumulativeCount()})
	}
	return out
}
