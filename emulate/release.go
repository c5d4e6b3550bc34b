package emulate

import (
	"math"
	"runtime"
	"time"
)

// armLocked wakes the release goroutine d.spin before due.
func (d *direction) armLocked(due, now int64) {
	d.armedFor = due
	d.w.Arm(time.Duration(due - d.spin - now))
}

// sendImmediate sends what admit set aside, from the receive goroutine.
func (d *direction) sendImmediate(imm []message, meta []immediate, arrival int64) {
	if len(imm) == 0 {
		return
	}
	t := d.now()
	if d.pairSide == pairSamples {
		for i := range meta {
			d.pair.released(meta[i].pair.tag, t, meta[i].pair.latency())
		}
	}
	d.sendAll(imm, func(i int, ok bool) {
		d.settle(ok, imm[i].n, arrival, meta[i].due, meta[i].delay, t, meta[i].state, meta[i].seq, meta[i].pair)
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

// settle accounts for one datagram the relay tried to send at time t; seq
// is its arrival number, by which a datagram released after a later
// arrival is counted as reordered.
func (d *direction) settle(ok bool, n int, arrival, due int64, delay float64, t int64, state string, seq uint64, pn pairNote) {
	r := rec{arrival: arrival, due: due, delay: delay, drawn: true, release: t, state: state, seq: seq, pair: pn}
	if ok {
		for {
			top := d.released.Load()
			if seq < top {
				d.m.reordered.Inc()
				break
			}
			if d.released.CompareAndSwap(top, seq) {
				break
			}
		}
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
	if d.pairSide == pairSamples {
		for _, p := range batch {
			d.pair.released(p.pair.tag, t, p.pair.latency())
		}
	}
	d.sendAll(out, func(i int, ok bool) {
		p := batch[i]
		d.settle(ok, p.n, p.arrival, p.due, p.delay, t, p.state, p.seq, p.pair)
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
		d.record(rec{arrival: p.arrival, due: p.due, delay: p.delay, drawn: true, outcome: oShutdown, state: p.state, seq: p.seq, pair: p.pair})
		d.pool.put(p)
	}
	d.m.inFlight.Set(0)
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
