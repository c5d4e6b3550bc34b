package main

import (
	"fmt"
	"log/slog"
	"net"

	"rigwire/cmd/internal/cli"
	"rigwire/emulate/trip"
	"rigwire/estimate/engine"
	"rigwire/profiles"
)

// monitor run's safety trip: the monitor checks every sample against the
// loop's trip section and, with --trip-to, asks the relay to trip.

// armRunTrip arms the loop's safety trip on mon, when the loop has one:
// on the first crossing the trip is logged and, with --trip-to, the trip
// request goes to the relay's trip socket (dialled here, before the run,
// so that the request leaves at once). The returned func closes the
// socket.
func armRunTrip(mon *engine.Monitor, loop *profiles.Loop, tripTo cli.AddrFlag, log *slog.Logger) (func(), error) {
	if !loop.Trip.Enabled {
		return func() {}, nil
	}
	var conn *net.UDPConn
	if tripTo.Given {
		var err error
		if conn, err = net.DialUDP("udp", nil, net.UDPAddrFromAddrPort(tripTo.Addr)); err != nil {
			return nil, fmt.Errorf("--trip-to %s: %w", tripTo.Addr, err)
		}
	}
	closeConn := func() {
		if conn != nil {
			conn.Close()
		}
	}
	if err := mon.SetTrip(loop.Trip, func(ev trip.Event) { sendTrip(conn, ev, log) }); err != nil {
		closeConn()
		return nil, cli.BadInput(fmt.Errorf("%s: %w", loop.File, err))
	}
	return closeConn, nil
}

// sendTrip logs the trip and, when conn is not nil, sends the trip request.
func sendTrip(conn *net.UDPConn, ev trip.Event, log *slog.Logger) {
	to := "nowhere (no --trip-to)"
	sent := 0
	if conn != nil {
		to = conn.RemoteAddr().String()
		sent = trip.Send(conn, ev.Reason, log)
	}
	log.Warn("SAFETY TRIP fired", "reason", ev.Reason, "value", ev.Value, "bound", ev.Bound,
		"phase", ev.Phase, "action", ev.Action, "request_to", to, "copies_sent", sent)
}
