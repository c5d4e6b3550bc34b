package emulate

import (
	"net/netip"

	"rigwire/profiles/markov"
	"rigwire/profiles/trace"
)

// immediate is a datagram to be sent without delay from the receive
// goroutine, with what its record needs.
type immediate struct {
	delay float64
	due   int64
	state string
	seq   uint64 // arrival number
	pair  pairNote
}

// admit draws the fate of the datagrams in acc, all read at time now, and
// bound for dst. Datagrams with no delay are appended to imm (pointing at
// acc's buffers, to be sent by the caller before it reads again), with
// their meta in meta; the others are copied into the pool and scheduled.
func (d *direction) admit(acc []message, dst netip.AddrPort, now int64, imm []message, meta []immediate) ([]message, []immediate) {
	// The pairing decodes and observes before the lock, which the release
	// goroutine waits on; notes is owned by the one receive goroutine.
	if d.pairSide != pairNone {
		for i := range acc {
			d.notes[i] = d.pairNote(acc[i].buf[:acc[i].n], now)
		}
	}
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
		d.arrivals++
		seq := d.arrivals
		var pn pairNote
		if d.pairSide != pairNone {
			pn = d.notes[i]
		}
		if d.stopNew {
			d.m.outcome[oTripped].Inc()
			d.record(rec{arrival: now, outcome: oTripped, state: stateName, seq: seq, pair: pn})
			continue
		}
		lost, delay := d.fateLocked(st)
		if lost {
			d.lossRun++
			d.m.outcome[oDropped].Inc()
			d.record(rec{arrival: now, outcome: oDropped, state: stateName, seq: seq, pair: pn})
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
			meta = append(meta, immediate{delay: delay, due: due, state: stateName, seq: seq, pair: pn})
			continue
		}
		p := d.pool.get()
		if p == nil {
			d.m.outcome[oOverflow].Inc()
			d.record(rec{arrival: now, outcome: oOverflow, state: stateName, delay: delay, due: due, drawn: true, seq: seq, pair: pn})
			continue
		}
		p.n = copy(p.buf, m.buf[:m.n])
		p.dst, p.arrival, p.due, p.delay, p.state, p.seq, p.pair = dst, now, due, delay, stateName, seq, pn
		d.sched.push(p)
		if d.sched.peek() == p && due < d.armedFor {
			d.armLocked(due, now)
		}
	}
	d.m.inFlight.Set(float64(d.pool.inUse()))
	d.mu.Unlock()
	return imm, meta
}

// fateLocked decides one datagram's fate: the next recorded one when the
// direction replays a trace, else a loss draw and, if kept, a delay draw
// from state st (in that order, so a seed gives the same decisions as
// before traces existed).
func (d *direction) fateLocked(st *markov.State) (lost bool, delay float64) {
	if d.replay != nil {
		return d.replay.next()
	}
	if st.Loss > 0 && d.rng.Float64() < st.Loss {
		return true, 0
	}
	return false, st.Delay.Sample(d.rng)
}

// replayCursor walks a recorded trace's fates in order, one per datagram:
// the relay's side of a direction that replays a trace
// (trace.Replay). It is guarded by its direction's mutex. A profile
// reload (SIGHUP) sets a new channel and so starts the trace again from
// its first probe.
type replayCursor struct {
	r *trace.Replay
	i int // next fate
}

// newReplayCursor returns a cursor at the start of ch's trace, or nil when
// ch does not replay one.
func newReplayCursor(ch *markov.Channel) *replayCursor {
	rp := ch.Replay
	if rp == nil {
		return nil
	}
	return &replayCursor{r: rp}
}

// next returns the next recorded fate; past the end it starts again
// (at_end loop), loses everything (stop) or delivers at once (clean).
func (c *replayCursor) next() (lost bool, delay float64) {
	if c.i >= len(c.r.Lost) {
		switch c.r.AtEnd {
		case trace.AtEndLoop:
			c.i = 0
		case trace.AtEndStop:
			return true, 0
		default:
			return false, 0
		}
	}
	lost, delay = c.r.Lost[c.i], c.r.Delays[c.i]
	c.i++
	return lost, delay
}
