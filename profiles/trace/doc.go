// Package trace reads probe traces (the CSV files `impair probe` writes:
// one line per probe with its send time, fate and delays) and turns one
// column of a trace into a Replay, the fates a relay direction plays back
// in order.
//
// Place in the flow: measured link → probe trace → fitted laws (estimate/fit)
// or a replaying direction of a profile (profiles parses `trace:` into a
// markov.Channel whose Replay is set; emulate plays it back datagram by
// datagram; the prediction sees its empirical law).
package trace
