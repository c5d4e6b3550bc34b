// Package links runs one relay process for one or several rigs: it reads
// the links file (each rig's link: its addresses, its profile or
// scenario, its seed, record and trip socket) into validated [Spec]s,
// every error naming the file, the line and the key, and opens and runs
// every link — its relay (emulate), its scenario played step by step,
// its record file, its trip socket (emulate/trip) and its profile
// reloads — with each link's metrics labelled link="NAME" on one
// registry. `impair run` builds one Spec from its flags, or reads a links
// file, and wires the result to signals, a metrics endpoint and exit
// codes.
//
// Place in the flow: links file or flags → links (here) → one relay per
// rig (emulate), each drawing its datagrams' fates from its profile
// (profiles) and tapping the sensor datagrams to the monitor
// (estimate/engine).
//
// The links file:
//
//	metrics: 127.0.0.1:9471          # optional; the --metrics flag overrides it
//	links:
//	  - name: conveyor               # required, unique, [a-z0-9_-]+
//	    listen: 127.0.0.1:7001       # required
//	    controller: 127.0.0.1:7101   # required
//	    actuator: 127.0.0.1:7201     # optional, like the flags: sensor, relock_after, controller_bind, tap
//	    profile: conveyor.yaml       # exactly one of profile and scenario
//	    scenario: conveyor-soak.yaml #   (paths relative to this file)
//	    seed: 11                     # optional
//	    record: conveyor.csv         # optional
//	    trip_listen: 127.0.0.1:7401  # optional, with on_trip (clean|stop_commands)
//	    trip_from: 127.0.0.1         #   and trip_from (default: loopback only)
//
// Names, the local ports the process binds (listen, controller_bind,
// trip_listen) and record paths must be unique across the file.
// profiles/formats.md is the reference for every key.
package links
