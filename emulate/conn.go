package emulate

import (
	"fmt"
	"net"
	"net/netip"
	"time"
)

// message is one datagram of a batch. For reads, buf is the buffer to fill
// (its full length is offered to the kernel) and n, addr and trunc are set;
// for writes, buf[:n] is sent to addr.
type message struct {
	buf   []byte
	n     int
	addr  netip.AddrPort
	trunc bool // the datagram was longer than buf and was cut
}

// batchConn is a UDP socket read and written in batches. On Linux one
// system call moves a whole batch (recvmmsg/sendmmsg); elsewhere a batch is
// one message. Implementations do not allocate per call.
type batchConn interface {
	// readBatch blocks until at least one datagram is there, fills up to
	// len(ms) messages and returns how many.
	readBatch(ms []message) (int, error)
	// writeBatch sends ms in order. It returns how many were handed to
	// the kernel; on an error, ms[sent] is the message that failed and the
	// caller decides whether to go on with ms[sent+1:].
	writeBatch(ms []message) (sent int, err error)
	localAddr() netip.AddrPort
	setReadDeadline(t time.Time) error
	close() error
}

// batchSize is how many datagrams one system call moves at most.
const batchSize = 64

func (r *Relay) openSockets() error {
	if r.cfg.conns != nil {
		r.listen, r.up, r.tap = r.cfg.conns.listen, r.cfg.conns.ctlSide, r.cfg.conns.tap
		return nil
	}
	var err error
	if r.listen, err = openUDP(r.cfg.Listen); err != nil {
		return fmt.Errorf("listen %s: %w", r.cfg.Listen, err)
	}
	up := r.cfg.ControllerBind
	if !up.IsValid() {
		up = ephemeralFor(r.cfg.Controller)
	}
	if r.up, err = openUDP(up); err != nil {
		return fmt.Errorf("controller-facing socket %s: %w", up, err)
	}
	if r.cfg.Tap.IsValid() {
		if r.tap, err = openUDP(ephemeralFor(r.cfg.Tap)); err != nil {
			return fmt.Errorf("tap socket: %w", err)
		}
	}
	return nil
}

// unmapped spells an IPv4-mapped IPv6 address as IPv4, as the sockets
// report sources.
func unmapped(ap netip.AddrPort) netip.AddrPort {
	if !ap.IsValid() {
		return ap
	}
	return netip.AddrPortFrom(ap.Addr().Unmap(), ap.Port())
}

// ephemeralFor is a local address with an ephemeral port from which dst
// can be reached: loopback for a loopback destination, else any address
// of dst's family.
func ephemeralFor(dst netip.AddrPort) netip.AddrPort {
	a := dst.Addr()
	switch {
	case a.IsLoopback():
		return netip.AddrPortFrom(a, 0)
	case a.Is4() || a.Is4In6():
		return netip.AddrPortFrom(netip.IPv4Unspecified(), 0)
	default:
		return netip.AddrPortFrom(netip.IPv6Unspecified(), 0)
	}
}

func openUDP(ap netip.AddrPort) (batchConn, error) {
	network := "udp4"
	if ap.Addr().Is6() && !ap.Addr().Is4In6() {
		network = "udp6"
	}
	uc, err := net.ListenUDP(network, net.UDPAddrFromAddrPort(ap))
	if err != nil {
		return nil, err
	}
	_ = uc.SetReadBuffer(4 << 20)
	_ = uc.SetWriteBuffer(4 << 20)
	c, err := newBatchConn(uc)
	if err != nil {
		uc.Close()
		return nil, err
	}
	return c, nil
}

func (r *Relay) closeSockets() {
	for _, c := range []batchConn{r.listen, r.up, r.tap} {
		if c != nil {
			c.close()
		}
	}
}
