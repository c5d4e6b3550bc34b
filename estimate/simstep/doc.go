// Package simstep is the arithmetic of one step of a sampled control loop
// on plain vectors, with its Gaussian noise: the plant's free motion over
// a step plus the sampled process noise, the sensor noise, and the
// discrete controller's update. Two simulators share it so that they move
// the plant, draw the noise and run the controller the same way: the
// prediction's Monte-Carlo check (estimate.Simulate, one period at a time
// on the modes' matrices) and the simulated rig (emulate/rig, over
// sub-intervals that end when a command arrives, in real time on UDP).
//
// It computes no matrices of the model itself: Φ, Γ and W_d of a step
// come from estimate.Discretize (estimate/model.md §3). Nothing here
// allocates except Factor.
//
// Place in the flow: beside the prediction, off the datagram path. The
// prediction's simulator (estimate) and the simulated rig (emulate/rig),
// which feeds the relay real sensor datagrams, both import it; it imports
// only the loop's types (profiles).
package simstep
