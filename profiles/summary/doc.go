// Package summary describes what a network profile will do to a rig's
// datagrams, in the figures a person checks before relaying through it:
// for each direction and state the loss and the delay's mean, median, p99
// and p99.9 and the share of datagrams delayed past the next one's send
// time; for each direction the share of time in each state, the long-run
// loss, the mean length of a run of lost datagrams and the chance that a
// datagram is lost when the one before it was. It is the report of
// `impair check`.
//
// Place in the flow: profile file → profiles (parsed and validated) →
// summary (here: read by a person) → the relay (emulate) and the
// prediction (estimate) use the same profile. The late share is computed
// with laws.ProbBelow, the function the prediction uses for a stale
// sample, so the two agree on every law.
package summary
