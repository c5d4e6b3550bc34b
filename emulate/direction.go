package emulate

import (
	"math"
	"math/rand/v2"
	"sync"
	"sync/atomic"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"rigwire/emulate/internal/timer"
	"rigwire/profiles/markov"
)

// direction impairs the datagrams of one direction of the link: it draws
// each datagram's fate from the channel, sends at once those whose delay
// is zero, and holds the others in its pool and schedule until the release
// goroutine sends them at their due time.
type direction struct {
	name  string
	out   batchConn // the socket released datagrams leave from
	m     *dirMetrics
	rec   *recorder // nil: no record
	epoch time.Time
	spin  int64 // ns: how long before a due time the release goroutine spins instead of sleeping
	lock  bool  // lock the release goroutine to its OS thread (precise waiter)
	w     timer.Waiter

	mu       sync.Mutex
	chain    *chain
	replay   *replayCursor // non-nil: the channel replays a trace (admit.go)
	rng      *rand.Rand    // per-datagram draws
	sched    schedule
	pool     *pool
	armedFor int64 // due time the waiter is armed for; math.MaxInt64 when disarmed
	shown    int   // state the channel-state gauge shows
	gauges   []prometheus.Gauge
	gaugeVec *prometheus.GaugeVec
	draining bool // finish what is scheduled, then end the release goroutine
	abort    bool // end now; what is scheduled is counted as shutdown
	// tripped: the safety trip fired; the channel no longer changes.
	tripped bool
	// stopNew: every new datagram is dropped as tripped (trip.StopCommands).
	stopNew bool
	// lossRun counts the consecutive datagrams the profile dropped so far.
	lossRun int
	// arrivals numbers the datagrams read, 1, 2, … in arrival order (the
	// record's arrival_seq).
	arrivals uint64
	// released is the highest arrival number forwarded so far: a datagram
	// forwarded with a lower one was overtaken (settle). Read and set by
	// the receive and the release goroutines, hence atomic.
	released atomic.Uint64
	// pair, when set, pairs commands with samples (pair.go); pairSide says
	// which this direction carries.
	pair     *pairer
	pairSide int8
	notes    [batchSize]pairNote // admit's per-batch pairing notes (receive goroutine only)
}

// The sides of a pairing.
const (
	pairNone int8 = iota
	pairSamples
	pairCommands
)

// pairNote is what the pairing learnt of one datagram, for the record:
// the tag of the sample it is or answers (sequence + 1; 0: none), for a
// command paired with its sample its turnaround in ns (paired), for a
// sample its sensor-side latency in ns (hasLat). Its zero value, which
// the records of unpaired datagrams carry, says nothing.
type pairNote struct {
	tag       uint64
	turn, lat int64
	paired    bool
	hasLat    bool
}

// latency is the sample's sensor-side latency for the pairer: −1 when
// not measured.
func (n pairNote) latency() int64 {
	if !n.hasLat {
		return -1
	}
	return n.lat
}

// pairNote reads a datagram's sequence for the pairing, and for a command
// observes its turnaround.
func (d *direction) pairNote(payload []byte, now int64) pairNote {
	switch d.pairSide {
	case pairSamples:
		lat := d.pair.latency(payload)
		return pairNote{tag: d.pair.sampleTag(payload), lat: lat, hasLat: lat >= 0}
	case pairCommands:
		tag, turn := d.pair.command(payload, now)
		return pairNote{tag: tag, turn: turn, paired: turn >= 0}
	}
	return pairNote{}
}

type dirConfig struct {
	name        string
	ch          *markov.Channel
	seed        uint64
	stream      uint64 // two streams are used: stream (datagrams) and stream+1 (chain path)
	out         batchConn
	metrics     *Metrics
	rec         *recorder
	epoch       time.Time
	maxInFlight int
	bufLen      int
	spin        time.Duration
	w           timer.Waiter
	lockThread  bool
	pair        *pairer
	pairSide    int8
}

func newDirection(c dirConfig) *direction {
	d := &direction{
		name:     c.name,
		out:      c.out,
		m:        c.metrics.forDirection(c.name),
		rec:      c.rec,
		epoch:    c.epoch,
		spin:     int64(c.spin),
		lock:     c.lockThread,
		w:        c.w,
		rng:      rand.New(rand.NewPCG(c.seed, c.stream)),
		pool:     newPool(c.maxInFlight, c.bufLen),
		armedFor: math.MaxInt64,
		gaugeVec: c.metrics.ChannelState,
		pair:     c.pair,
		pairSide: c.pairSide,
	}
	d.sched.h = make([]*packet, 0, c.maxInFlight)
	d.m.inFlight.Set(0)
	d.setChannelLocked(c.ch, rand.New(rand.NewPCG(c.seed, c.stream+1)), 0)
	return d
}

func (d *direction) now() int64 { return int64(time.Since(d.epoch)) }

func (d *direction) record(x rec) {
	if d.rec != nil {
		x.dir = d.name
		d.rec.add(x)
	}
}

// inFlight is how many datagrams are scheduled.
func (d *direction) inFlight() int {
	d.mu.Lock()
	defer d.mu.Unlock()
	return d.sched.len()
}
