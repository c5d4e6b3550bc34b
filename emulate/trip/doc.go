// Package trip is rigwire's safety trip, in one place: the software guard
// that ends an impaired run when the tracking error leaves the bounds the
// loop file sets, and what carries it from the monitor to the relay.
//
// It delivers:
//
//   - the rule: Rule (the loop file's trip section: max_abs_error,
//     max_second_moment, max_ratio, window, action) and Action (Clean,
//     StopCommands), read and checked by Parse, which the loop loader of
//     package profiles calls with the section's position, so errors name
//     file, line and key; ParseAction for the same words in the links
//     file and `impair run --on-trip`;
//   - the detection: Detector checks each sample's error e, eᵀe and the
//     predicted E[eᵀe] in force against the rule (the windowed mean over
//     ⌈window/period⌉ samples, O(1) and allocation-free per sample) and
//     returns the first Crossing; Window is its windowed mean as it stands;
//     Event is a firing as the monitor reports it. The monitor engine
//     (estimate/engine: Monitor.SetTrip, Tripped, TripWindow) feeds it
//     under its lock and keeps what is the engine's own: the latch, the
//     sequence number, the running phase the trip cuts short, its metrics
//     and calling fire outside its lock;
//   - the request datagram, "rigwire-trip 1 <reason>": Encode, Decode, and
//     Send, which sends Copies copies over a connected UDP socket
//     (`monitor run --trip-to`);
//   - the relay's trip socket: Listen opens a Listener (`impair run
//     --trip-listen`, the links file's trip_listen) that believes only its
//     From address (loopback by default), decodes each datagram, trips its
//     Target and counts every datagram once in
//     rigwire_relay_trip_requests_total{result} (accepted, repeated,
//     malformed, stranger);
//   - the safety cautions every command that starts a run prints
//     (Cautions under the command's headline, RelayCaution for a command
//     whose relay forwards the rig's datagrams, or Reminder once the
//     operator has read them): the trip is a software guard, never the
//     emergency stop.
//
// The relay's action is emulate.Relay.Trip, a Target: latched, it takes
// effect before the next datagram is admitted. With Clean both directions
// forward everything from then on without loss or delay; with
// StopCommands the commands (controller → actuator), those held included,
// are dropped and counted as tripped while the sensor datagrams pass
// clean. Profile reloads and scenario steps no longer change the link.
//
// Place in the flow: loop file (trip section, Parse) → the monitor checks
// every decoded sample (Detector, inside estimate/engine) → it fires once:
// trip request datagram (Send/Encode) → the relay's trip socket (Listener,
// Decode) → emulate.Relay.Trip stops the commands or forwards clean. In
// the in-process bench (monitor soak, serve, demo) the monitor's fire
// calls emulate.Relay.Trip directly, without the datagram. This package
// imports no other rigwire package but profiles/yamlpos and profiles/laws
// (it sits below both profiles and emulate, which import it).
package trip
