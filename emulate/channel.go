package emulate

import (
	"math"
	"math/rand/v2"

	"github.com/prometheus/client_golang/prometheus"

	"rigwire/profiles/markov"
)

// chain steps one direction's Markov-modulated channel in continuous time:
// it stays in a state for an exponentially distributed dwell with the
// state's mean, then jumps to another state with the state's jump
// probabilities (estimate/model.md §2). Time is in nanoseconds on the relay's clock.
//
// The path of the chain is drawn from its own source, apart from the
// per-datagram draws, so that with a given seed the state at any instant is
// the same whatever traffic crosses the relay.
type chain struct {
	ch   *markov.Channel
	rng  *rand.Rand
	cur  int
	next int64 // when the chain leaves cur; math.MaxInt64 if never
}

// newChain starts ch at time t in a state drawn from its stationary law.
func newChain(ch *markov.Channel, rng *rand.Rand, t int64) *chain {
	c := &chain{ch: ch, rng: rng}
	c.cur = 0
	if len(ch.States) > 1 {
		pi := ch.Stationary()
		u, acc := rng.Float64(), 0.0
		c.cur = len(pi) - 1
		for i, p := range pi {
			acc += p
			if u < acc {
				c.cur = i
				break
			}
		}
	}
	c.next = c.dwellEnd(t)
	return c
}

// dwellEnd draws when a sojourn in the current state that starts at t ends.
func (c *chain) dwellEnd(t int64) int64 {
	st := &c.ch.States[c.cur]
	if len(c.ch.States) < 2 || math.IsInf(st.MeanDwell, 1) {
		return math.MaxInt64
	}
	d := st.MeanDwell * c.rng.ExpFloat64() * 1e9
	if d >= float64(math.MaxInt64-t) {
		return math.MaxInt64
	}
	return t + int64(d) + 1 // at least one nanosecond, so time moves on
}

// at advances the chain to time t and returns the state it is in then.
// Times must not go backwards.
func (c *chain) at(t int64) int {
	for t >= c.next {
		jump := c.ch.States[c.cur].Jump
		u, acc := c.rng.Float64(), 0.0
		to := c.cur
		for j, p := range jump {
			if p <= 0 {
				continue
			}
			acc += p
			to = j
			if u < acc {
				break
			}
		}
		c.cur = to
		c.next = c.dwellEnd(c.next)
	}
	return c.cur
}

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
