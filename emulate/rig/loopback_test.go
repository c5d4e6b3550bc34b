package rig_test

import (
	"net"
	"net/netip"
	"testing"
)

// udpLoopback is a UDP socket on an ephemeral loopback port, closed when
// the test ends: the other end of the link for a node or a controller.
func udpLoopback(t testing.TB) *net.UDPConn {
	t.Helper()
	c, err := net.ListenUDP("udp4", &net.UDPAddr{IP: net.IPv4(127, 0, 0, 1)})
	if err != nil {
		t.Fatal(err)
	}
	c.SetReadBuffer(8 << 20)
	t.Cleanup(func() { c.Close() })
	return c
}

func apOf(c *net.UDPConn) netip.AddrPort { return c.LocalAddr().(*net.UDPAddr).AddrPort() }
