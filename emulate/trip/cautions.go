package trip

// The safety trip is a software guard inside rigwire, not a stop: these
// are the cautions that hold whether or not a loop has a trip.

// Cautions are the cautions every command that starts a run prints under
// its own headline: a rig driven through an impaired link can move in
// ways nobody expected.
const Cautions = `  - Keep an emergency stop that does not depend on the emulated link (or on this program), within reach.
  - Make the first runs with the actuator disabled, then at low gains and speeds.
  - Keep guards in place and people out of the machine's reach.
  - Local machine-safety rules and qualified personnel have the last word.
`

// RelayCaution is what a command prints before its relay forwards a rig's
// datagrams (impair run, monitor serve): the headline, then Cautions.
const RelayCaution = "SAFETY: the relay will delay and drop the commands that move your rig.\n" + Cautions

// Reminder is the one line a command prints instead of the cautions once
// the operator has said they were read (a flag of the command): the
// cautions still hold, shortened, never gone.
const Reminder = "SAFETY (cautions acknowledged): e-stop independent of the link within reach; actuator off or low gains first; guards in place; local safety rules apply.\n"
