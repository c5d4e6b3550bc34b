// Package markov is the channel model of one direction of a link: a
// continuous-time Markov chain over states, each with its own loss
// probability and delay law, and the mathematics of it the bench needs
// (generator, transition matrix over an interval, stationary law, long-run
// loss, mean loss burst, lag-one loss correlation).
//
// Place in the flow: a profile file gives each direction one Channel; the
// relay moves through its states in real time and applies the state's loss
// and delay to every datagram (emulate); the prediction builds the jump
// linear system's mode chain from the same Channel (estimate).
package markov
