package trip

import (
	"errors"
	"fmt"
	"log/slog"
	"net"
	"net/netip"

	"github.com/prometheus/client_golang/prometheus"
)

// Results of a trip request, as rigwire_relay_trip_requests_total spells
// them.
const (
	resultAccepted  = "accepted"  // valid, from the trip source: the relay tripped
	resultRepeated  = "repeated"  // valid, but the relay had already tripped
	resultMalformed = "malformed" // not a trip request (format, reason, size)
	resultStranger  = "stranger"  // from a source other than the trip source
)

// results are the results in the metric's order.
var results = [...]string{resultAccepted, resultRepeated, resultMalformed, resultStranger}

// Target is what a listener trips: the relay (*emulate.Relay). Trip acts
// the first time and returns true; later calls return false and change
// nothing (the trip is latched).
type Target interface {
	Trip(action Action, reason string) bool
}

// ListenConfig is a trip socket: where it listens, whom it believes, what
// it trips and how.
type ListenConfig struct {
	// Addr is the trip socket's address (port 0: any free port).
	Addr netip.AddrPort
	// From is the only source that may trip; invalid: loopback sources
	// only.
	From netip.Addr
	// Action is what Target does when tripped.
	Action Action
	Target Target
	// Registerer gets rigwire_relay_trip_requests_total (required).
	Registerer prometheus.Registerer
	Logger     *slog.Logger // nil: slog.Default()
}

// Listener reads trip requests from its UDP socket and trips its target.
// Every datagram that arrives is counted once in
// rigwire_relay_trip_requests_total{result}: accepted, repeated,
// malformed or stranger.
type Listener struct {
	conn   *net.UDPConn
	from   netip.Addr // invalid: loopback addresses only
	action Action
	target Target
	log    *slog.Logger
	count  *prometheus.CounterVec
}

// newRequestsMetric registers rigwire_relay_trip_requests_total on reg,
// with every result present from the start.
func newRequestsMetric(reg prometheus.Registerer) (*prometheus.CounterVec, error) {
	c := prometheus.NewCounterVec(prometheus.CounterOpts{
		Name: "rigwire_relay_trip_requests_total",
		Help: "Datagrams that arrived at the trip socket, by result (accepted, repeated, malformed, stranger).",
	}, []string{"result"})
	if err := reg.Register(c); err != nil {
		return nil, fmt.Errorf("trip socket metrics: %w", err)
	}
	for _, r := range results {
		c.WithLabelValues(r)
	}
	return c, nil
}

// Listen registers the listener's metric and opens its socket; Serve
// then handles requests until Close.
func Listen(cfg ListenConfig) (*Listener, error) {
	if cfg.Target == nil || cfg.Registerer == nil {
		return nil, errors.New("trip socket: no target or no metrics registerer")
	}
	log := cfg.Logger
	if log == nil {
		log = slog.Default()
	}
	count, err := newRequestsMetric(cfg.Registerer)
	if err != nil {
		return nil, err
	}
	network := "udp4"
	if cfg.Addr.Addr().Is6() {
		network = "udp6"
	}
	conn, err := net.ListenUDP(network, net.UDPAddrFromAddrPort(cfg.Addr))
	if err != nil {
		return nil, fmt.Errorf("trip socket %s: %w", cfg.Addr, err)
	}
	return &Listener{conn: conn, from: cfg.From, action: cfg.Action, target: cfg.Target, log: log, count: count}, nil
}

// Addr is the trip socket's address.
func (l *Listener) Addr() netip.AddrPort {
	ap := l.conn.LocalAddr().(*net.UDPAddr).AddrPort()
	return netip.AddrPortFrom(ap.Addr().Unmap(), ap.Port())
}

// accepts reports whether src may trip the target.
func (l *Listener) accepts(src netip.Addr) bool {
	src = src.Unmap()
	if l.from.IsValid() {
		return src == l.from
	}
	return src.IsLoopback()
}

// Serve handles trip requests until Close; every datagram is counted once.
func (l *Listener) Serve() {
	buf := make([]byte, MaxLen+1) // a longer datagram reads as MaxLen+1 bytes
	for {
		n, src, err := l.conn.ReadFromUDPAddrPort(buf)
		if err != nil {
			if errors.Is(err, net.ErrClosed) {
				return
			}
			// An ICMP error or a truncation report: not a request.
			l.log.Debug("trip socket read", "err", err)
			continue
		}
		l.handle(buf[:n], src)
	}
}

func (l *Listener) handle(p []byte, src netip.AddrPort) {
	if !l.accepts(src.Addr()) {
		l.count.WithLabelValues(resultStranger).Inc()
		l.log.Debug("trip request from a stranger ignored", "source", src.String())
		return
	}
	reason, err := Decode(p)
	if err != nil {
		l.count.WithLabelValues(resultMalformed).Inc()
		l.log.Debug("malformed trip request ignored", "source", src.String(), "err", err)
		return
	}
	if !l.target.Trip(l.action, reason) {
		l.count.WithLabelValues(resultRepeated).Inc()
		return
	}
	l.count.WithLabelValues(resultAccepted).Inc()
	l.log.Warn("TRIPPED by request", "reason", reason, "action", l.action.String(), "source", src.String())
}

// Close ends Serve.
func (l *Listener) Close() { l.conn.Close() }
