// Command naivefwd is a baseline for the load script: the plainest UDP
// forwarder in Go, one ReadFrom and one WriteTo per datagram.
//
// Datagrams arriving at -listen are sent on to -to from a second socket,
// as the relay does with a sensor's datagrams; it forwards one way only
// (the load has no replies). It stops on SIGTERM or SIGINT and prints its
// counters as JSON on stderr.
//
// Place in the flow: outside it, beside the relay. In a load trial
// (tests/load/loadrun) it stands where the relay (emulate, run by `impair
// run`) stands, between udpgen and udpsink, so that the relay's rate and
// latency are read against the simplest forwarder there is.
package main
