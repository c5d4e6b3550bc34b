// Package emulate is the relay engine: it stands between a rig's sensor
// node, its controller and its actuator, relays their UDP datagrams and
// impairs them as a profile says. Each direction draws every datagram's
// fate (drop, or release after a delay) from a [markov.Channel] (or
// replays a recorded trace), holds delayed datagrams in a bounded pool and
// a release schedule, and sends them on within microseconds of their due
// time. It delivers a [Relay] (New, Run, Reload, Play, Trip), its
// Prometheus [Metrics], a typed [Stats] snapshot read from those same
// counters, and a record file of every datagram's fate.
//
// Place in the flow: profile (profiles, profiles/markov, profiles/laws) →
// emulate, the relay → the impaired datagrams go on to the controller and
// the actuator, and a copy of every accepted sensor datagram goes, before
// any impairment, to the tap (a socket, or Config.TapFunc in process) →
// the monitor (estimate/engine). The in-process bench of both is
// emulate/bench; the command is cmd/impair.
//
// The files follow one datagram, in order:
//
//   - config.go: Config, its checks and defaults.
//   - conn.go, conn_linux.go, conn_other.go: the UDP sockets, opened and
//     read and written in batches (recvmmsg/sendmmsg on Linux).
//   - receive.go: the receive loop of each socket; oversized datagrams,
//     strangers and commands with no actuator known yet are counted and
//     dropped here, and the tap gets its copies.
//   - source.go: which source at the listen socket is the rig's sensor
//     node (the lock, the pin, the relock after silence).
//   - admit.go: the per-datagram decision: the channel's state now, the
//     loss draw, the delay draw or the replay cursor's next recorded fate;
//     a datagram with no delay is sent at once, the others are held.
//   - schedule.go: the hold: the bounded packet pool and the release
//     schedule (a min-heap on due time).
//   - release.go: the release goroutine, which sleeps on a waiter of
//     emulate/internal/timer, spins the last stretch within a budget and
//     sends what is due; settling a datagram's outcome; draining.
//   - channel.go: the Markov chain stepped in continuous time, and the
//     direction's channel-state gauges.
//   - control.go: changes of channel while running: Reload, the scenario
//     steps Play applies, and the clean channel the safety trip puts a
//     direction on (Trip itself is in trip.go).
//   - play.go: a scenario's steps in time; scenarioplay.go: a scenario
//     file ready to play (ScenarioPlan: scaled, steps built, phases
//     printed, a progress line while it plays).
//   - metrics.go, stats.go, record.go: what became of every datagram, as
//     Prometheus metrics, as a snapshot of the same counters, and as one
//     record line each.
//   - direction.go and relay.go tie it together: one direction's state,
//     and the relay's two directions with their goroutines, start and
//     shutdown.
//
// Nothing on the per-datagram path allocates: buffers come from a pool
// sized by the in-flight bound, addresses are netip.AddrPort values, and
// metrics handles are resolved once per direction.
package emulate
