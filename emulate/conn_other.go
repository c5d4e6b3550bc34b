//go:build !linux

package emulate

import (
	"net"
	"net/netip"
	"time"
)

// udpConn is the portable batchConn: one datagram per call. The relay
// offers buffers one byte longer than the largest datagram it accepts, so a
// full buffer means the datagram was too long.
type udpConn struct{ uc *net.UDPConn }

func newBatchConn(uc *net.UDPConn) (batchConn, error) { return &udpConn{uc: uc}, nil }

func (c *udpConn) readBatch(ms []message) (int, error) {
	if len(ms) == 0 {
		return 0, nil
	}
	n, addr, err := c.uc.ReadFromUDPAddrPort(ms[0].buf)
	if err != nil {
		return 0, err
	}
	ms[0].n, ms[0].trunc = n, n == len(ms[0].buf)
	ms[0].addr = netip.AddrPortFrom(addr.Addr().Unmap(), addr.Port())
	return 1, nil
}

func (c *udpConn) writeBatch(ms []message) (int, error) {
	for i := range ms {
		if _, err := c.uc.WriteToUDPAddrPort(ms[i].buf[:ms[i].n], ms[i].addr); err != nil {
			return i, err
		}
	}
	return len(ms), nil
}

func (c *udpConn) localAddr() netip.AddrPort {
	return c.uc.LocalAddr().(*net.UDPAddr).AddrPort()
}

func (c *udpConn) setReadDeadline(t time.Time) error { return c.uc.SetReadDeadline(t) }
func (c *udpConn) close() error                      { return c.uc.Close() }
