// Package trip is rigwire's safety trip: the software guard that ends a
// run when the tracking error leaves its bounds, and the request datagram
// that carries it from the monitor to the relay.
//
// Place in the flow: loop file (trip section) → the monitor checks every
// sample → trip request datagram (Encode) → the relay's trip socket
// (Decode) → the relay stops the commands or forwards clean.
package trip
