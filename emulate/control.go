package emulate

import (
	"math"

	"rigwire/profiles"
	"rigwire/profiles/laws"
	"rigwire/profiles/markov"
)

// Reload puts both directions on p's channels from now on. Datagrams
// already scheduled keep their release times. After the safety trip it
// changes nothing (logged, and counted with result "ignored").
func (r *Relay) Reload(p *profiles.Profile) {
	if r.apply(p, "reload") {
		r.m.Reloads.WithLabelValues("ok").Inc()
	} else {
		r.m.Reloads.WithLabelValues("ignored").Inc()
	}
}

// apply puts both directions on p's channels unless the trip has fired;
// it reports whether it did. why names the caller in the log.
func (r *Relay) apply(p *profiles.Profile, why string) bool {
	r.ctlMu.Lock()
	defer r.ctlMu.Unlock()
	if r.tripped.Load() {
		r.log.Warn("profile change ignored: the safety trip has fired", "by", why)
		return false
	}
	// Trip holds ctlMu too, so both directions are still untripped here.
	r.sc.changeChannel(p.SensorToController)
	r.ca.changeChannel(p.ControllerToActuator)
	r.cfg.Profile = p
	return true
}

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
		d.record(rec{arrival: p.arrival, due: p.due, delay: p.delay, drawn: true, outcome: oTripped, state: p.state, seq: p.seq})
		d.pool.put(p)
	}
	d.m.inFlight.Set(float64(d.pool.inUse()))
}

// cleanChannel forwards everything at once.
var cleanChannel = &markov.Channel{States: []markov.State{
	{Name: tripStateName, MeanDwell: math.Inf(1), Delay: laws.Constant{}},
}}
