package emulate

import (
	"math"
	"math/rand/v2"
	"net/netip"
	"runtime"
	"sync"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"rigwire/emulate/internal/timer"
	"rigwire/profiles/laws"
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
	replay   *replayCursor // non-nil: the channel replays a trace (trace.go)
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
	// stopNew: every new datagram is dropped as tripped (TripStopCommands).
	stopNew bool
	// lossRun counts the consecutive datagrams the profile dropped so far.
	lossRun int
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
	}
	d.sched.h = make([]*packet, 0, c.maxInFlight)
	d.m.inFlight.Set(0)
	d.setChannelLocked(c.ch, rand.New(rand.NewPCG(c.seed, c.stream+1)), 0)
	return d
}

func (d *direction) now() int64 { return int64(time.Since(d.epoch)) }

// setChannelLocked puts the direction on channel ch from time t, in a state
// drawn from its stationary law, and relabels the state gauges.
func (d *direction) setChannelLocked(ch *markov.Channel, chainRng *rand.Rand, t int64) {
	if d.chain != nil {
		for _, st := range d.chain.ch.States {
			d.gaugeVec.DeleteLabelValues(d.name, st.Name)
		}
		chainRng = d.chain.rng
	}
	d.chain = newChain(ch, chainRng, t)
	d.replay = newReplayCursor(ch)
	d.gauges = make([]prometheus.Gauge, len(ch.States))
	for i, st := range ch.States {
		d.gauges[i] = d.gaugeVec.WithLabelValues(d.name, st.Name)
		d.gauges[i].Set(0)
	}
	d.shown = d.chain.cur
	d.gauges[d.shown].Set(1)
}

// immediate is a datagram to be sent without delay from the receive
// goroutine, with what its record needs.
type immediate struct {
	delay float64
	due   int64
	state string
}

// admit draws the fate of the datagrams in acc, all read at time now, and
// bound for dst. Datagrams with no delay are appended to imm (pointing at
// acc's buffers, to be sent by the caller before it reads again), with
// their meta in meta; the others are copied into the pool and scheduled.
func (d *direction) admit(acc []message, dst netip.AddrPort, now int64, imm []message, meta []immediate) ([]message, []immediate) {
	d.mu.Lock()
	cur := d.chain.at(now)
	if cur != d.shown {
		d.gauges[d.shown].Set(0)
		d.gauges[cur].Set(1)
		d.shown = cur
	}
	st := &d.chain.ch.States[cur]
	stateName := st.Name
	for i := range acc {
		m := &acc[i]
		if d.stopNew {
			d.m.outcome[oTripped].Inc()
			d.record(rec{arrival: now, outcome: oTripped, state: stateName})
			continue
		}
		lost, delay := d.fateLocked(st)
		if lost {
			d.lossRun++
			d.m.outcome[oDropped].Inc()
			d.record(rec{arrival: now, outcome: oDropped, state: stateName})
			continue
		}
		if d.lossRun > 0 {
			d.m.lossRuns.Observe(float64(d.lossRun))
			d.lossRun = 0
		}
		d.m.delay.Observe(delay)
		due := now + int64(delay*1e9)
		if due <= now {
			imm = append(imm, message{buf: m.buf, n: m.n, addr: dst})
			meta = append(meta, immediate{delay: delay, due: due, state: stateName})
			continue
		}
		p := d.pool.get()
		if p == nil {
			d.m.outcome[oOverflow].Inc()
			d.record(rec{arrival: now, outcome: oOverflow, state: stateName, delay: delay, due: due, drawn: true})
			continue
		}
		p.n = copy(p.buf, m.buf[:m.n])
		p.dst, p.arrival, p.due, p.delay, p.state = dst, now, due, delay, stateName
		d.sched.push(p)
		if d.sched.peek() == p && due < d.armedFor {
			d.armLocked(due, now)
		}
	}
	d.m.inFlight.Set(float64(d.pool.inUse()))
	d.mu.Unlock()
	return imm, meta
}

// armLocked wakes the release goroutine d.spin before due.
func (d *direction) armLocked(due, now int64) {
	d.armedFor = due
	d.w.Arm(time.Duration(due - d.spin - now))
}

func (d *direction) record(x rec) {
	if d.rec != nil {
		x.dir = d.name
		d.rec.add(x)
	}
}

// sendImmediate sends what admit set aside, from the receive goroutine.
func (d *direction) sendImmediate(imm []message, meta []immediate, arrival int64) {
	if len(imm) == 0 {
		return
	}
	t := d.now()
	d.sendAll(imm, func(i int, ok bool) {
		d.settle(ok, imm[i].n, arrival, meta[i].due, meta[i].delay, t, meta[i].state)
	})
}

// sendAll writes ms, skipping over messages the kernel refuses, and
// reports each message's result to done.
func (d *direction) sendAll(ms []message, done func(i int, ok bool)) {
	base := 0
	for base < len(ms) {
		sent, err := d.out.writeBatch(ms[base:])
		for i := base; i < base+sent; i++ {
			done(i, true)
		}
		base += sent
		if err != nil && base < len(ms) {
			done(base, false)
			base++
		}
	}
}

// settle accounts for one datagram the relay tried to send at time t.
func (d *direction) settle(ok bool, n int, arrival, due int64, delay float64, t int64, state string) {
	r := rec{arrival: arrival, due: due, delay: delay, drawn: true, release: t, state: state}
	if ok {
		d.m.outcome[oForwarded].Inc()
		d.m.bytes.Add(float64(n))
		d.m.lateness.Observe(float64(t-due) / 1e9)
		r.outcome = oForwarded
	} else {
		d.m.outcome[oSendError].Inc()
		r.outcome = oSendError
	}
	d.record(r)
}

// releaseLoop sends scheduled datagrams at their due time until the
// direction is drained (or aborted). It sleeps on the waiter until d.spin
// before the earliest due time, then spins the rest of the way.
func (d *direction) releaseLoop() {
	if d.lock {
		runtime.LockOSThread()
		defer runtime.UnlockOSThread()
	}
	var batch [batchSize]*packet
	var out [batchSize]message
	var sb spinBudget
	for {
		d.mu.Lock()
		if d.abort {
			d.abortLocked()
			d.mu.Unlock()
			return
		}
		now := d.now()
		k := d.popDueLocked(now, batch[:])
		if k == 0 {
			if d.sched.len() == 0 {
				if d.draining {
					d.mu.Unlock()
					return
				}
				d.armedFor = math.MaxInt64
				d.w.Disarm()
				d.mu.Unlock()
				d.w.Wait()
				continue
			}
			due := d.sched.peek().due
			if due-now <= d.spin {
				if sb.allow(now) {
					d.mu.Unlock()
					for d.now() < due {
					}
					sb.spent += d.now() - now
					continue
				}
				// Over the spin budget: sleep all the way to the due time.
				d.armedFor = due
				d.w.Arm(time.Duration(due - now))
				d.mu.Unlock()
				d.w.Wait()
				continue
			}
			d.armLocked(due, now)
			d.mu.Unlock()
			d.w.Wait()
			continue
		}
		d.mu.Unlock()
		d.sendPopped(batch[:k], out[:k])
	}
}

// popDueLocked moves the datagrams due by now, earliest first, from the
// schedule to batch and returns how many.
func (d *direction) popDueLocked(now int64, batch []*packet) int {
	k := 0
	for k < len(batch) && d.sched.len() > 0 && d.sched.peek().due <= now {
		batch[k] = d.sched.pop()
		k++
	}
	return k
}

// sendPopped sends the popped datagrams, accounts for them and gives their
// buffers back to the pool.
func (d *direction) sendPopped(batch []*packet, out []message) {
	for i, p := range batch {
		out[i] = message{buf: p.buf, n: p.n, addr: p.dst}
	}
	t := d.now()
	d.sendAll(out, func(i int, ok bool) {
		p := batch[i]
		d.settle(ok, p.n, p.arrival, p.due, p.delay, t, p.state)
	})
	d.mu.Lock()
	for i := range batch {
		d.pool.put(batch[i])
		batch[i] = nil
	}
	d.m.inFlight.Set(float64(d.pool.inUse()))
	d.mu.Unlock()
}

// abortLocked counts what is still scheduled as lost to shutdown.
func (d *direction) abortLocked() {
	for d.sched.len() > 0 {
		p := d.sched.pop()
		d.m.outcome[oShutdown].Inc()
		d.record(rec{arrival: p.arrival, due: p.due, delay: p.delay, drawn: true, outcome: oShutdown, state: p.state})
		d.pool.put(p)
	}
	d.m.inFlight.Set(0)
}

// tripStateName is the state of the clean channel a trip puts a direction on.
const tripStateName = "clean"

// trip puts the direction on a clean channel (no loss, no delay) for good;
// with stop it also drops every new datagram and what it holds now, all
// counted as tripped. Datagrams already held otherwise keep their release
// times. Later setChannel calls are refused (changeChannel).
func (d *direction) trip(stop bool) {
	d.mu.Lock()
	defer d.mu.Unlock()
	d.setChannelLocked(cleanChannel, nil, d.now())
	d.tripped = true
	if !stop {
		return
	}
	d.stopNew = true
	for d.sched.len() > 0 {
		p := d.sched.pop()
		d.m.outcome[oTripped].Inc()
		d.record(rec{arrival: p.arrival, due: p.due, delay: p.delay, drawn: true, outcome: oTripped, state: p.state})
		d.pool.put(p)
	}
	d.m.inFlight.Set(float64(d.pool.inUse()))
}

// cleanChannel forwards everything at once.
var cleanChannel = &markov.Channel{States: []markov.State{
	{Name: tripStateName, MeanDwell: math.Inf(1), Delay: laws.Constant{}},
}}

// changeChannel puts the direction on ch from now on, unless the trip has
// fired; it reports whether it did.
func (d *direction) changeChannel(ch *markov.Channel) bool {
	d.mu.Lock()
	defer d.mu.Unlock()
	if d.tripped {
		return false
	}
	d.setChannelLocked(ch, nil, d.now())
	return true
}

// stop asks the release goroutine to finish: drain releases everything
// scheduled on time first; otherwise it ends at once.
func (d *direction) stop(drain bool) {
	d.mu.Lock()
	d.draining = true
	if !drain {
		d.abort = true
	}
	d.armedFor = 0
	d.w.Arm(0)
	d.mu.Unlock()
}

// inFlight is how many datagrams are scheduled.
func (d *direction) inFlight() int {
	d.mu.Lock()
	defer d.mu.Unlock()
	return d.sched.len()
}

// spinBudget caps the time the release goroutine spends spinning: at most
// spinShare of each spinWindow. At a few thousand releases a second every
// release gets its final spin (and leaves within a microsecond or so of its
// due time); at tens of thousands the spins would add up to a whole core,
// so past the budget the goroutine sleeps to the due time on the timer and
// releases come up to the timer's wake-up latency late (tens of µs with a
// timerfd) instead.
type spinBudget struct {
	start, spent int64 // ns: the current window's start, and the time spun in it
}

const (
	spinWindow = int64(100 * time.Millisecond)
	spinShare  = 0.10
)

func (b *spinBudget) allow(now int64) bool {
	if now-b.start >= spinWindow {
		b.start, b.spent = now, 0
	}
	return float64(b.spent) < spinShare*float64(spinWindow)
}
