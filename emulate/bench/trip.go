package bench

import (
	"fmt"
	"sync"

	"rigwire/emulate/trip"
)

// ArmTrip arms the safety trip rule (the loop's trip section) when it is
// enabled: the monitor checks every decoded sample against it, and on the
// first crossing the relay takes the rule's action at once (before its next
// datagram), the trip is logged and the returned channel closes. Without
// an enabled rule the channel never closes. A rule the monitor refuses is
// an InputError naming the loop file.
//
// The trip is a software guard, no emergency stop: see trip.Cautions.
func (b *Bench) ArmTrip(rule trip.Rule) (<-chan struct{}, error) {
	tripped := make(chan struct{})
	if !rule.Enabled {
		return tripped, nil
	}
	var once sync.Once
	err := b.Monitor.SetTrip(rule, func(ev trip.Event) {
		b.Relay.Trip(rule.Action, ev.Reason)
		b.log.Warn("safety trip", "reason", ev.Reason, "value", ev.Value, "bound", ev.Bound,
			"phase", ev.Phase, "action", rule.Action.String())
		once.Do(func() { close(tripped) })
	})
	if err != nil {
		return nil, &InputError{fmt.Errorf("%s: trip: %w", b.Loop.File, err)}
	}
	return tripped, nil
}
