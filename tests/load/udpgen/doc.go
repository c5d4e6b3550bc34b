// Command udpgen sends load datagrams to one loopback address at a paced
// rate and prints what it sent as JSON.
//
// Each datagram carries the header of package loadkit: the run number, a
// sequence number from 0 and a CLOCK_MONOTONIC send stamp, so that udpsink
// can count losses and reordering and measure one-way latency on the same
// clock.
//
// Pacing: datagram k is due at start + k/rate. The sender sleeps with an
// absolute clock_nanosleep on CLOCK_MONOTONIC (Go's timers round short
// waits up to a millisecond) until the next datagram is due, but never
// wakes more often than once per -tick; at each wake it sends everything due
// by then with sendmmsg, in batches of at most -batch. So 1 k/s goes out one
// at a time on time, and 200 k/s goes out as 20 datagrams every 100 µs.
//
// Place in the flow: it plays the rig's sensor in a load trial
// (tests/load/loadrun): udpgen → the forwarder under test (the relay or a
// baseline) → udpsink.
package main
