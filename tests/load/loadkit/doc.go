// Package loadkit holds what the load tools of tests/load share: the layout
// of a load datagram, a CLOCK_MONOTONIC reading that is cheap enough for the
// hot path, the check that keeps every tool on loopback, and the receiver's
// tally — sequence accounting (received, lost, duplicated, reordered) and
// latency percentiles.
//
// It opens no sockets and reads no flags; the programs beside it do.
//
// Place in the flow: outside it. The load tools beside it (udpgen, the
// baseline forwarders, udpsink, loadrun) measure what the relay (emulate)
// costs on a datagram's path, and this is what they agree on.
package loadkit
