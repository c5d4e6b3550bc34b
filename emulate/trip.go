package emulate

import "rigwire/emulate/trip"

// Trip fires the relay's safety trip: the relay's side of package trip
// (which holds the rule, the detection, the request datagram and the
// listener that calls Trip). With trip.Clean both directions forward
// everything from now on without loss or delay (datagrams already held
// keep their release times); with trip.StopCommands the commands
// (controller → actuator) held now and every later one are dropped,
// counted with outcome tripped, and the sensor datagrams pass clean. The
// trip is latched: the first call acts and returns true, later ones
// return false and change nothing. From then on Reload and scenario steps
// leave the channels alone. *Relay is a trip.Target.
//
// Trip takes effect before the next datagram is admitted. It may be called
// from any goroutine, Config.TapFunc included (the receive loop holds no
// lock while it calls the tap).
func (r *Relay) Trip(action trip.Action, reason string) bool {
	r.ctlMu.Lock()
	defer r.ctlMu.Unlock()
	if r.tripped.Load() {
		return false
	}
	r.tripped.Store(true)
	r.ca.trip(action == trip.StopCommands)
	r.sc.trip(false)
	r.m.Tripped.Set(1)
	r.log.Warn("safety trip", "action", action.String(), "reason", reason)
	return true
}

// Tripped reports whether the safety trip has fired.
func (r *Relay) Tripped() bool { return r.tripped.Load() }

var _ trip.Target = (*Relay)(nil)
