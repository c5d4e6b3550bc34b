package profiles

import "rigwire/profiles/laws"

// Profile is a validated network profile: the two directions of one rig's
// link, each a [Channel].
type Profile struct {
	// Name is free text from the file.
	Name string
	// Seed makes the relay's decisions reproducible when HasSeed is set.
	Seed    uint64
	HasSeed bool
	// SensorToController and ControllerToActuator are never nil: a
	// direction missing from the file is a one-state channel with no loss
	// and no delay.
	SensorToController   *Channel
	ControllerToActuator *Channel
	// File is the path the profile was read from ("" when parsed from
	// memory or inline in a loop file).
	File string
}

// Direction names, as the profile file and the metrics spell them.
const (
	SensorToController   = "sensor_to_controller"
	ControllerToActuator = "controller_to_actuator"
)

// Channel is one direction's channel model: a continuous-time Markov chain
// over States. A direction with plain loss/delay keys is a one-state
// channel (MeanDwell +Inf, no jumps).
type Channel struct {
	States []State
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
