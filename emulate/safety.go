package emulate

// SafetyCautions are the cautions every command that starts a run prints
// under its own headline: a rig driven through an impaired link can move in
// ways nobody expected.
const SafetyCautions = `  - Keep an emergency stop that does not depend on the emulated link (or on this program), within reach.
  - Make the first runs with the actuator disabled, then at low gains and speeds.
  - Keep guards in place and people out of the machine's reach.
  - Local machine-safety rules and qualified personnel have the last word.
`
