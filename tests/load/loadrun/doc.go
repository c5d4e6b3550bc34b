// Command loadrun measures the relay's bars side by side with baseline
// forwarders, on loopback: the highest rate sustained below a loss bound,
// the added one-way latency over a direct path, and the release lateness
// and CPU share of the relay when it holds datagrams for 1–5 ms.
//
// Each trial starts its own sink, forwarder and generator (udpsink,
// naivefwd/batchfwd/socat/impair, udpgen) on fresh loopback ports, and
// stops them all before the next. The measurement repeats -reps times with
// the order of the forwarders rotated; figures are medians over the
// repetitions and comparisons are medians of the same-run ratios. Progress
// goes to stderr, the tables to stdout. tests/load.sh builds the binaries
// and runs it.
//
// Place in the flow: outside it; it measures one stage of it. Each trial
// is udpgen → forwarder (the relay of emulate, run as `impair run`, or a
// baseline) → udpsink, and the tables say what the relay costs on the
// datagram's path.
package main
