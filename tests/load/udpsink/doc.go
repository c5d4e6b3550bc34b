// Command udpsink receives load datagrams on a loopback address and, when
// told to stop (SIGTERM or SIGINT) or after -max-duration, prints as JSON
// what arrived: datagrams received, duplicated and reordered by sequence
// number (RFC 4737 §3, package loadkit), and percentiles of the one-way
// latency, receive CLOCK_MONOTONIC minus the sender's stamp.
//
// It reads with recvmmsg (x/net ipv4 ReadBatch) into a large socket buffer
// (SO_RCVBUFFORCE when allowed, else SO_RCVBUF) so that the sink is not the
// bottleneck of what it measures. The receive stamp is taken once per batch,
// right after the call returns: every datagram of the batch was read then.
// On stop it drains what is already queued before it reports.
//
// Place in the flow: it plays the controller in a load trial
// (tests/load/loadrun): udpgen → the forwarder under test (the relay or a
// baseline) → udpsink, whose report is the trial's measurement.
package main
