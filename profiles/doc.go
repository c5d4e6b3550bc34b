// Package profiles reads the files a run starts from and turns them into
// validated values: network profiles (each direction of a link a
// [markov.Channel] of loss probabilities and [laws.Delay] laws), loop files
// (plant, controller, setpoint, compute delay, the network, the layout of
// the rig's sensor datagrams and the safety trip) and soak scenarios
// (phases, ramps, checks). Every error names the file, the line and the
// key. It also writes profile files ([Draft], [Write]; `impair fit` makes
// them).
//
// One definition serves both users of a profile: the relay samples a
// delay law per datagram (fast, without allocation) and the prediction
// takes expectations over the same law exactly (its CDF, density, atoms,
// quantile, moments). The laws themselves are in profiles/laws, the
// channels in profiles/markov, probe traces and their replay in
// profiles/trace, the sensor datagram layout and its decoder in
// profiles/datagram, and the positioned YAML reader and capped input files
// every loader uses in profiles/yamlpos; this package holds only the file
// formats. Every example file of the project is in profiles/examples.
//
// Place in the flow: the first stage. Profile, loop and scenario files →
// profiles (here) → the relay draws each datagram's fate from a profile's
// channels (emulate); the prediction takes a loop (estimate); the monitor
// engine decodes the rig's datagrams with the loop's layout and judges
// against its checks (estimate/engine); a soak steps through a scenario.
//
// All times are in seconds, as float64. In files, durations are Go
// duration strings ("250us", "3ms", "1.5s") or plain numbers of seconds.
// Unknown keys are errors that name the key and its line and list the
// keys accepted there.
//
// The sketches below are a reminder; profiles/formats.md is the reference for
// every key of every file (type, unit, default, bounds, meaning), with
// complete examples.
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
// # Files: what is read, and how much
//
// Every file the project reads — a profile, a loop, a scenario, a links
// file, a lab topology, an empirical law's samples, a probe trace — is
// read through [yamlpos.ReadInputFile] or [yamlpos.OpenInputFile]. Only a regular file is
// read (a symbolic link is followed to one): a named pipe, a directory, a
// device or a socket is refused with its kind named ("profile x.yaml: not
// a regular file (a named pipe)"), and a pipe is never opened in a way
// that could wait for a writer. A file larger than its cap is refused
// before a byte of it is read:
//
//	YAML files (profile, loop, scenario, links, lab topology)   1 MiB   yamlpos.MaxYAMLBytes
//	empirical samples file (file: of kind empirical)           16 MiB   yamlpos.MaxSamplesBytes
//	probe trace (impair fit, trace: of a direction)              1 GiB   yamlpos.MaxTraceBytes
//
// A YAML file holds at most [yamlpos.MaxNodes] values (100000, aliases
// expanded); the values are counted before the file is parsed, so a file
// of too many values is refused without building it. An empirical law has
// at most [laws.MaxSamples] delays (100000), inline or in its file, and every
// delay of every source — inline, a samples file, a trace — is finite and
// in [0, laws.MaxDelay] (1 h); a trace has at most [trace.MaxTraceProbes] probes, the
// most `impair probe` sends. A scenario builds one profile per step; its
// steps together may hold at most [MaxScenarioValues] values (each step
// counts its profile's YAML values and the delays its laws hold), checked
// before any step is built.
//
// Messages name the file, the line and the key; they quote at most a
// short, escaped token of the input ([yamlpos.Token]: 40 characters), and never
// repeat a line of a samples or trace file that does not look like a
// number or a word, so pointing a key at an unrelated file shows none of
// it.
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
//	trip: …                      # the monitor's safety trip (read by emulate/trip.Parse)
//
// The model these numbers enter is described in estimate/model.md (the plant
// and controller §1 and §3, the network §2).
package profiles
