package emulate

import (
	"errors"
	"sync/atomic"

	"github.com/prometheus/client_golang/prometheus"

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
	// Observe, when set, is called with every turnaround measured (the
	// sample's sequence number and the turnaround in ns), on the command
	// side's receive goroutine: it must be quick and must not block.
	Observe func(seq uint64, turnaround int64)
}

// check refuses a pairing without a sequence on either side.
func (p *Pairing) check() error {
	if p.Sample.Sequence == nil {
		return errors.New("pairing: the sensor datagrams' layout has no sequence field (decode.sequence): the relay cannot tell which sample a command answers")
	}
	if p.Command.Sequence == nil {
		return errors.New("pairing: the command datagrams' layout has no sequence field (command_decode.sequence): the relay cannot tell which sample a command answers")
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
	fail       [len(pairFailures)]prometheus.Counter
}

type pairSlot struct {
	tag atomic.Uint64
	at  atomic.Int64
}

// Why a datagram could not be paired (rigwire_relay_pairing_failures_total).
const (
	pfSampleNoSeq = iota
	pfCommandNoSeq
	pfCommandUnknown
)

var pairFailures = [...]string{
	pfSampleNoSeq:    "sample_without_sequence",
	pfCommandNoSeq:   "command_without_sequence",
	pfCommandUnknown: "sample_not_released",
}

func newPairer(p Pairing, m *Metrics) *pairer {
	pr := &pairer{p: p, turnaround: m.Turnaround}
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

// released notes that the sample with tag is sent to the controller at t:
// called before the send, so that a controller quicker than the release
// goroutine's return from the send still finds it.
func (pr *pairer) released(tag uint64, t int64) {
	if tag == 0 {
		return
	}
	s := &pr.ring[(tag-1)%pairRing]
	s.tag.Store(0)
	s.at.Store(t)
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
		at := s.at.Load()
		if s.tag.Load() == tag && now >= at {
			turn = now - at
			pr.turnaround.Observe(float64(turn) / 1e9)
			if pr.p.Observe != nil {
				pr.p.Observe(seq, turn)
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
