// Package probe measures a network path the way a rig's datagrams cross
// it: a prober sends numbered, timestamped probe datagrams at a fixed rate
// to an echo, which sends each one back stamped with its own receive and
// send times; the prober matches the replies and records each probe's
// fate (its round trip, its one-way delays when the two clocks are
// synchronised, lost, duplicated, reordered) and writes them as a probe
// trace. It holds the probe datagram's wire format, the echo responder,
// the prober and the trace writer; `impair probe` and `impair echo` only
// parse their flags, open the sockets and call it.
//
// Place in the flow: measured link → probe (this package) → probe trace
// (read by profiles/trace) → fitted delay laws and loss (estimate/fit,
// `impair fit`) or a replaying direction of a profile → the relay
// (emulate).
package probe
