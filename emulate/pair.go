package emulate

import (
	"errors"
	"sync/atomic"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"rigwire/emulate/internal/timer"
	"rigwire/profiles"
	"rigwire/profiles/datagram"
)

// Pairing says where the relay finds a sample's sequence number in a
// sensor datagram and, in a command datagram, the sequence number of the
// sample the command answers (the loop file's decode and command_decode).
// With it the relay measures the controller's turnaround: from its release
// of sample k to the controller to the arrival of the command that answers
// k — the controller's computing time plus the two hops between relay and
// controller, what the prediction's compute delay stands for.
type Pairing struct {
	Sample, Command datagram.Layout
	// Clock, when not SampleClockNone, is the clock of the sample times
	// the sensor datagrams carry (Sample.SampleTime): the relay then also
	// measures the sensor-side latency, sample time → arrival at the
	// relay (rigwire_relay_sensor_latency_seconds).
	Clock SampleClock
	// Observe, when set, is called with every turnaround measured (the
	// sample's sequence number, the turnaround in ns and the sample's
	// sensor-side latency in ns, −1 when not measured), on the command
	// side's receive goroutine: it must be quick and must not block.
	Observe func(seq uint64, turnaround, sensorLatency int64)
}

// SampleClock is the clock a sensor datagram's sample time is read on.
type SampleClock int

const (
	// SampleClockNone: the sample times are not compared with the relay's
	// clock.
	SampleClockNone SampleClock = iota
	// SampleClockMonotonic: CLOCK_MONOTONIC of this host (the rig's node
	// runs on the relay's host, as the simulated rig does).
	SampleClockMonotonic
	// SampleClockRealtime: Unix time (CLOCK_REALTIME), the node's clock
	// synchronised with the relay's (PTP, or NTP to well below the
	// latencies measured).
	SampleClockRealtime
)

// ParseSampleClock reads a sample clock's name: none, monotonic or
// realtime.
func ParseSampleClock(s string) (SampleClock, bool) {
	switch s {
	case "none", "":
		return SampleClockNone, true
	case "monotonic":
		return SampleClockMonotonic, true
	case "realtime":
		return SampleClockRealtime, true
	}
	return SampleClockNone, false
}

// Check refuses a pairing without a sequence on either side, or with a
// sample clock but no sample time to read.
func (p *Pairing) Check() error {
	if p.Sample.Sequence == nil {
		return errors.New("pairing: the sensor datagrams' layout has no sequence field (decode.sequence): the relay cannot tell which sample a command answers")
	}
	if p.Command.Sequence == nil {
		return errors.New("pairing: the command datagrams' layout has no sequence field (command_decode.sequence): the relay cannot tell which sample a command answers")
	}
	if p.Clock != SampleClockNone && p.Sample.SampleTime == nil {
		return errors.New("pairing: a sample clock is given but the sensor datagrams' layout has no sample time (decode.sample_time): there is nothing to compare with the relay's clock")
	}
	return nil
}

// pairRing is how many recent samples the relay remembers for pairing: at
// a 1 ms period, four seconds. A command for an older sample is counted
// as unpaired.
const pairRing = 1 << 12

// pairer holds the release time of the recent samples, indexed by their
// sequence number, written by the sensor direction's goroutines and read
// by the command direction's receive goroutine without a lock: each slot
// stores its tag (sequence + 1, 0 while being written) around the time, so
// a reader that sees the same tag before and after reading the time has a
// consistent pair. No allocation per datagram.
type pairer struct {
	p          Pairing
	ring       [pairRing]pairSlot
	turnaround prometheus.Observer
	latHist    prometheus.Observer
	fail       [len(pairFailures)]prometheus.Counter
}

type pairSlot struct {
	tag atomic.Uint64
	at  atomic.Int64
	lat atomic.Int64 // the sample's sensor-side latency + 1 (0: not measured)
}

// Why a datagram could not be paired (rigwire_relay_pairing_failures_total).
const (
	pfSampleNoSeq = iota
	pfCommandNoSeq
	pfCommandUnknown
	pfSampleNoTime
	pfSampleAhead
)

var pairFailures = [...]string{
	pfSampleNoSeq:    "sample_without_sequence",
	pfCommandNoSeq:   "command_without_sequence",
	pfCommandUnknown: "sample_not_released",
	pfSampleNoTime:   "sample_without_time",
	pfSampleAhead:    "sample_time_ahead",
}

func newPairer(p Pairing, m *Metrics) *pairer {
	pr := &pairer{p: p, turnaround: m.Turnaround, latHist: m.SensorLatency}
	for i, r := range pairFailures {
		pr.fail[i] = m.PairingFailures.WithLabelValues(r)
	}
	return pr
}

// sampleTag is a sensor datagram's tag, its sequence + 1; 0 (counted)
// when it carries none that decodes.
func (pr *pairer) sampleTag(payload []byte) uint64 {
	seq, ok, err := pr.p.Sample.Seq(payload)
	if err != nil || !ok || seq == ^uint64(0) {
		pr.fail[pfSampleNoSeq].Inc()
		return 0
	}
	return seq + 1
}

// latency is a sensor datagram's sensor-side latency in ns, its sample
// time to now on the pairing's clock, observed in seconds; −1 (counted by
// reason) when it carries no sample time or one ahead of the relay's
// clock, or when no clock is set.
func (pr *pairer) latency(payload []byte) int64 {
	if pr.p.Clock == SampleClockNone {
		return -1
	}
	tk, ok, err := pr.p.Sample.Time(payload)
	if err != nil || !ok {
		pr.fail[pfSampleNoTime].Inc()
		return -1
	}
	var now int64
	if pr.p.Clock == SampleClockMonotonic {
		now = timer.Now()
	} else {
		now = time.Now().UnixNano()
	}
	if now < tk {
		pr.fail[pfSampleAhead].Inc()
		return -1
	}
	pr.latHist.Observe(float64(now-tk) / 1e9)
	return now - tk
}

// released notes that the sample with tag, whose sensor-side latency was
// lat (−1: unknown), is sent to the controller at t: called before the
// send, so that a controller quicker than the release goroutine's return
// from the send still finds it.
func (pr *pairer) released(tag uint64, t, lat int64) {
	if tag == 0 {
		return
	}
	s := &pr.ring[(tag-1)%pairRing]
	s.tag.Store(0)
	s.at.Store(t)
	s.lat.Store(lat + 1)
	s.tag.Store(tag)
}

// command pairs a command that arrived at now with its sample: the tag of
// the sample it answers (0 when it carries none) and the turnaround in ns,
// observed in seconds (−1 when it cannot be paired, counted by reason).
func (pr *pairer) command(payload []byte, now int64) (tag uint64, turn int64) {
	seq, ok, err := pr.p.Command.Seq(payload)
	if err != nil || !ok || seq == ^uint64(0) {
		pr.fail[pfCommandNoSeq].Inc()
		return 0, -1
	}
	tag = seq + 1
	s := &pr.ring[seq%pairRing]
	if s.tag.Load() == tag {
		at, lat := s.at.Load(), s.lat.Load()-1
		if s.tag.Load() == tag && now >= at {
			turn = now - at
			pr.turnaround.Observe(float64(turn) / 1e9)
			if pr.p.Observe != nil {
				pr.p.Observe(seq, turn, lat)
			}
			return tag, turn
		}
	}
	pr.fail[pfCommandUnknown].Inc()
	return tag, -1
}

// pairSideOf is the pairing side of the direction called name.
func pairSideOf(pr *pairer, name string) int8 {
	switch {
	case pr == nil:
		return pairNone
	case name == profiles.SensorToController:
		return pairSamples
	case name == profiles.ControllerToActuator:
		return pairCommands
	}
	return pairNone
}
