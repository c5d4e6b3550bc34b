package profiles

import "rigwire/profiles/markov"

// Profile is a validated network profile: the two directions of one rig's
// link, each a [markov.Channel].
type Profile struct {
	// Name is free text from the file.
	Name string
	// Seed makes the relay's decisions reproducible when HasSeed is set.
	Seed    uint64
	HasSeed bool
	// SensorToController and ControllerToActuator are never nil: a
	// direction missing from the file is a one-state channel with no loss
	// and no delay.
	SensorToController   *markov.Channel
	ControllerToActuator *markov.Channel
	// File is the path the profile was read from ("" when parsed from
	// memory or inline in a loop file).
	File string
}

// Direction names, as the profile file and the metrics spell them.
const (
	SensorToController   = "sensor_to_controller"
	ControllerToActuator = "controller_to_actuator"
)
