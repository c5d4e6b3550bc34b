package engine

import (
	"context"
	"errors"
	"net"
	"net/netip"
)

// Serve reads datagrams from conn and feeds them to the monitor until ctx
// ends (it then closes conn) or conn fails. Its buffer is one datagram
// longer than MaxDatagram, so that a longer datagram (truncated by the
// read) is seen as oversized; nothing is allocated per datagram, the
// source check (SetSource) and the feed take the monitor's lock once, and
// memory stays fixed whatever the rate: a flood costs CPU, and the kernel
// drops what the socket buffer cannot hold.
func (m *Monitor) Serve(ctx context.Context, conn *net.UDPConn) error {
	stop := context.AfterFunc(ctx, func() { conn.Close() })
	defer stop()
	buf := make([]byte, m.opts.MaxDatagram+1)
	for {
		n, src, err := conn.ReadFromUDPAddrPort(buf)
		if err != nil {
			if errors.Is(err, net.ErrClosed) && ctx.Err() != nil {
				return nil
			}
			var ne net.Error
			if errors.As(err, &ne) && ne.Timeout() {
				continue
			}
			return err
		}
		m.feedFrom(src, buf[:n], m.now())
	}
}

// StrangerReasons label the datagrams Serve does not decode because
// they are not from the source set with SetSource: StrangerOtherHost
// from another address, StrangerOtherPort from the source's address but
// another port (only when the source names a port).
var StrangerReasons = [...]string{StrangerOtherHost: "other_host", StrangerOtherPort: "other_port"}

// Indices in StrangerReasons.
const (
	StrangerOtherHost = iota
	StrangerOtherPort
)

// SetSource makes Serve take datagrams only from src (the relay's tap
// socket): with a port, that source alone; with port 0, any port of its
// address (the relay sends its taps from an ephemeral port). Datagrams
// from anyone else are counted as strangers (by reason, StrangerReasons)
// and never decoded. Zero: every source.
func (m *Monitor) SetSource(src netip.AddrPort) {
	m.mu.Lock()
	defer m.mu.Unlock()
	m.source = netip.AddrPortFrom(src.Addr().Unmap(), src.Port())
}

// stranger reports whether a datagram from src is not from the source
// set with SetSource, counting it by reason when so. Under the lock.
func (m *Monitor) stranger(src netip.AddrPort) bool {
	pin := m.source
	if !pin.IsValid() {
		return false
	}
	switch a := src.Addr().Unmap(); {
	case a != pin.Addr():
		m.strangers[StrangerOtherHost]++
	case pin.Port() != 0 && src.Port() != pin.Port():
		m.strangers[StrangerOtherPort]++
	default:
		return false
	}
	return true
}

// strangerTotal is the datagrams counted as strangers, every reason
// together. Under the lock.
func (m *Monitor) strangerTotal() int64 {
	var n int64
	for _, c := range m.strangers {
		n += c
	}
	return n
}

// Source is the source set with SetSource (zero: every source).
func (m *Monitor) Source() netip.AddrPort {
	m.mu.Lock()
	defer m.mu.Unlock()
	return m.source
}
