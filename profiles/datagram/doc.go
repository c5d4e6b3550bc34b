// Package datagram is the layout of a rig's sensor datagrams, as a loop
// file's decode section states it (text fields or binary offsets, the
// outputs and the sample counter), and the decoder the monitor runs on
// every datagram the relay taps: it never allocates, never panics, and
// sorts every datagram that does not decode into one fixed reason.
//
// Place in the flow: relay tap → datagram.Layout.Output → the monitor
// engine's error and estimators (estimate/engine). profiles parses a loop
// file's decode section into a Layout; the simulated rig writes datagrams
// in the same layouts (emulate/rig).
package datagram
