// Package profiles turns network profile files into validated values: the
// delay distributions and the Markov-modulated loss channels that the relay
// draws from and that the prediction takes expectations over; and the loop
// files and scenarios that the monitor reads.
//
// One definition serves both users. A [Delay] can be sampled (fast, without
// allocation, from a source the caller passes in) and it also exposes its
// law exactly: the CDF, the density of its absolutely continuous part, its
// atoms (point masses), its quantile function, its mean and variance, and
// the interval holding its mass. A [Channel] is a finite set of [State]s,
// each with its own loss probability and delay law, switching in
// continuous time with exponential dwell times; a direction with one set of
// parameters is a one-state channel.
//
// All times are in seconds, as float64. In files, durations are Go
// duration strings ("250us", "3ms", "1.5s") or plain numbers of seconds.
// Unknown keys are errors that name the key and its line.
//
// # The network profile file
//
//	name: pick-station-wifi        # free text
//	seed: 42                       # optional: same seed, same decisions
//	sensor_to_controller:          # from the sensor node towards the controller
//	  loss: 0.02                   # i.i.d. drop probability (default 0)
//	  delay: {kind: lognormal, median: 3ms, sigma: 0.4, shift: 1ms}
//	controller_to_actuator:        # from the controller towards the actuator
//	  states:                      # a Markov-modulated channel instead
//	    - {name: clear,  mean_dwell: 4s,    loss: 0.001, delay: {kind: constant, value: 1ms}}
//	    - {name: fading, mean_dwell: 300ms, loss: 0.4,   delay: {kind: uniform, min: 2ms, max: 8ms}}
//
// With more than two states each state also has next: {state: weight, …},
// the jump probabilities (normalised). A direction left out has no loss
// and no delay. A direction may instead replay a measured trace:
// trace: {file: wifi.csv, column: one_way_s, at_end: loop}.
//
// Delay kinds, each with its keys (shift, where allowed, is added to every
// draw): constant (value), uniform (min, max), normal (mean, std; redrawn
// while negative, then shifted), exponential (mean), gamma (shape, scale),
// lognormal (median, sigma), weibull (shape, scale), pareto (shape, scale:
// P(X > x) = (scale/x)^shape for x ≥ scale; no shift), empirical (samples,
// or file: one delay a line, its path relative to the profile), mixture
// (parts: a list of laws each with a weight; weights normalised).
//
// # The loop file
//
//	period: 10ms
//	plant:                       # continuous time: dx = (A x + B u) dt + dw
//	  a: [[0, 1], [0, -2]]
//	  b: [[0], [3]]
//	  c: [[1, 0]]
//	  process_noise: [[0, 0], [0, 0.04]]   # W, an intensity: E[dw dwᵀ] = W dt
//	  sensor_noise: [[1e-6]]               # V, the variance of each sample's noise
//	controller:                  # discrete time, run on each sample used
//	  a: [[1]]                   # a, b, c optional: without them u = d e
//	  b: [[0.01]]
//	  c: [[5]]
//	  d: [[12]]                  # zeros by default when a, b, c are given
//	setpoint: [0.5]              # r, default zeros; e = r − y
//	compute_delay: 0.5ms         # added to every command's delay
//	actuator: {on_loss: hold}    # hold (default) or zero
//	profile: demo-profile.yaml   # a path relative to this file, or inline
//	decode: …                    # where outputs sit in a sensor datagram (LoadLoop)
//	trip: …                      # the monitor's safety trip (looptrip.go)
//
// The model these numbers enter is described in package estimate's
// documentation.
package profiles
