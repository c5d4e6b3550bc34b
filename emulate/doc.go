// Package emulate relays a rig's UDP datagrams and impairs them: each
// direction draws every datagram's fate (drop, or release after a delay)
// from a [markov.Channel], holds delayed datagrams in a bounded pool and a
// release schedule, and sends them on within microseconds of their due time.
//
// Files are cut by concern: conn*.go batch the sockets, channel.go steps
// the Markov channel in continuous time, schedule.go orders pending
// releases (the release goroutine sleeps until the next one on a waiter of
// emulate/internal/timer), direction.go ties one direction together,
// relay.go wires two directions, a tap and a recorder
// to the sockets, trip.go is the latched safety trip, play.go plays a
// scenario's steps, metrics.go and record.go say what happened to every
// datagram.
//
// Nothing on the per-datagram path allocates: buffers come from a pool
// sized by the in-flight bound, addresses are netip.AddrPort values, and
// metrics handles are resolved once per direction.
package emulate
