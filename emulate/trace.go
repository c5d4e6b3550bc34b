package emulate

import (
	"rigwire/profiles/markov"
	"rigwire/profiles/trace"
)

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
