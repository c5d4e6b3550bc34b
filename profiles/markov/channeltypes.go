package markov

import (
	"rigwire/profiles/laws"
	"rigwire/profiles/trace"
)

// Channel is one direction's channel model: a continuous-time Markov chain
// over States. A direction with plain loss/delay keys is a one-state
// channel (MeanDwell +Inf, no jumps).
type Channel struct {
	States []State
	// Replay is set when the direction replays a recorded trace: the
	// relay gives the i-th datagram the i-th probe's fate. The channel is
	// then one state whose Delay is the trace's empirical law and whose
	// Loss is its loss rate, which is what the prediction sees.
	Replay *trace.Replay
}

// State is one state of a Channel.
type State struct {
	Name string
	// MeanDwell is the mean sojourn time in seconds (exponentially
	// distributed); +Inf for the only state of a one-state channel.
	MeanDwell float64
	// Loss is the probability that a datagram arriving in this state is
	// dropped.
	Loss float64
	// Delay is the law of the delay of a datagram that is not dropped;
	// never nil (no delay is Constant{0}).
	Delay laws.Delay
	// Jump[j] is the probability that, leaving this state, the chain enters
	// state j; Jump[self] = 0, the row sums to 1. Nil for a one-state
	// channel.
	Jump []float64
}
