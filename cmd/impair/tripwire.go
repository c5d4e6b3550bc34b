package main

import (
	"errors"
	"fmt"
	"log/slog"
	"net"
	"net/netip"

	"github.com/prometheus/client_golang/prometheus"

	"rigwire/emulate/trip"
	"rigwire/profiles"
)

// Results of a trip request, as rigwire_relay_trip_requests_total spells
// them.
const (
	tripAccepted  = "accepted"  // valid, from the trip source: the relay tripped
	tripRepeated  = "repeated"  // valid, but the relay had already tripped
	tripMalformed = "malformed" // not a trip request (format, reason, size)
	tripStranger  = "stranger"  // from a source other than the trip source
)

// tripper is what the trip listener acts on (an *emulate.Relay).
type tripper interface {
	Trip(action profiles.TripAction, reason string) bool
}

// newTripMetrics registers rigwire_relay_trip_requests_total on reg, with
// every result present from the start.
func newTripMetrics(reg prometheus.Registerer) *prometheus.CounterVec {
	c := prometheus.NewCounterVec(prometheus.CounterOpts{
		Name: "rigwire_relay_trip_requests_total",
		Help: "Datagrams that arrived at the trip socket, by result (accepted, repeated, malformed, stranger).",
	}, []string{"result"})
	reg.MustRegister(c)
	for _, r := range []string{tripAccepted, tripRepeated, tripMalformed, tripStranger} {
		c.WithLabelValues(r)
	}
	return c
}

// tripListener reads trip requests from its socket and trips the relay.
type tripListener struct {
	conn   *net.UDPConn
	from   netip.Addr // invalid: loopback addresses only
	action profiles.TripAction
	relay  tripper
	log    *slog.Logger
	count  *prometheus.CounterVec
}

func openTripListener(addr netip.AddrPort, from netip.Addr, action profiles.TripAction, count *prometheus.CounterVec, log *slog.Logger) (*tripListener, error) {
	network := "udp4"
	if addr.Addr().Is6() {
		network = "udp6"
	}
	conn, err := net.ListenUDP(network, net.UDPAddrFromAddrPort(addr))
	if err != nil {
		return nil, fmt.Errorf("trip socket %s: %w", addr, err)
	}
	return &tripListener{conn: conn, from: from, action: action, log: log, count: count}, nil
}

// Addr is the trip socket's address.
func (t *tripListener) Addr() netip.AddrPort {
	ap := t.conn.LocalAddr().(*net.UDPAddr).AddrPort()
	return netip.AddrPortFrom(ap.Addr().Unmap(), ap.Port())
}

// accepts reports whether src may trip the relay.
func (t *tripListener) accepts(src netip.Addr) bool {
	src = src.Unmap()
	if t.from.IsValid() {
		return src == t.from
	}
	return src.IsLoopback()
}

// serve handles trip requests until Close; every datagram is counted once.
func (t *tripListener) serve() {
	buf := make([]byte, trip.MaxLen+1) // a longer datagram reads as MaxLen+1 bytes
	for {
		n, src, err := t.conn.ReadFromUDPAddrPort(buf)
		if err != nil {
			if errors.Is(err, net.ErrClosed) {
				return
			}
			// An ICMP error or a truncation report: not a request.
			t.log.Debug("trip socket read", "err", err)
			continue
		}
		t.handle(buf[:n], src)
	}
}

func (t *tripListener) handle(p []byte, src netip.AddrPort) {
	if !t.accepts(src.Addr()) {
		t.count.WithLabelValues(tripStranger).Inc()
		t.log.Debug("trip request from a stranger ignored", "source", src.String())
		return
	}
	reason, err := trip.Decode(p)
	if err != nil {
		t.count.WithLabelValues(tripMalformed).Inc()
		t.log.Debug("malformed trip request ignored", "source", src.String(), "err", err)
		return
	}
	if !t.relay.Trip(t.action, reason) {
		t.count.WithLabelValues(tripRepeated).Inc()
		return
	}
	t.count.WithLabelValues(tripAccepted).Inc()
	t.log.Warn("TRIPPED by request", "reason", reason, "action", t.action.String(), "source", src.String())
}

// Close ends serve.
func (t *tripListener) Close() { t.conn.Close() }
