// Command batchfwd is a baseline for the load script: a UDP forwarder in
// Go that reads with recvmmsg and writes with sendmmsg (x/net ipv4
// ReadBatch and WriteBatch), up to -batch datagrams per system call.
//
// Datagrams arriving at -listen are sent on to -to from a second,
// connected socket, as the relay does with a sensor's datagrams; it
// forwards one way only. It stops on SIGTERM or SIGINT and prints its
// counters as JSON on stderr.
//
// Place in the flow: outside it, beside the relay. In a load trial
// (tests/load/loadrun) it stands where the relay (emulate, run by `impair
// run`) stands, between udpgen and udpsink, so that the relay's rate and
// latency are read against a forwarder that does nothing but batch.
package main
