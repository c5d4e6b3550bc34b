// Package bench runs the relay and the monitor of one rig in one process:
// the relay engine (emulate) impairs the rig's link and hands every sensor
// datagram it accepts, before any impairment, to the monitor engine
// (estimate/engine) through Config.TapFunc, with no tap socket between
// them. It delivers a [Bench]: the prediction it measures against, the
// relay's and the monitor's resolved addresses, one Prometheus registry
// with both's metrics (served by whoever runs the bench), a typed snapshot
// of the relay's counts ([emulate.Stats]), the safety trip armed from the
// monitor to the relay (rules and detection are emulate/trip's), and the
// side-by-side report of predicted against measured.
//
// Place in the flow: loop and profile (profiles) → prediction (estimate) →
// bench: relay (emulate) → in-process tap → monitor engine
// (estimate/engine) → verdict, summary and metrics. The commands monitor
// serve, soak and demo wire it to flags, a metrics endpoint and exit
// codes.
package bench
