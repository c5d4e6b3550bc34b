package engine

import (
	"context"
	"fmt"
	"net"
	"net/netip"
	"testing"
	"time"
)

// With SetSource, Serve decodes only the relay's tap datagrams: a
// stranger's, over real UDP, are counted and never decoded, whether the
// pin names the tap's address and port or its address alone.
func TestServeTakesOnlyItsSource(t *testing.T) {
	for _, withPort := range []bool{true, false} {
		t.Run(fmt.Sprintf("pin with port %v", withPort), func(t *testing.T) {
			m, err := New(testLoop(t, textDecode), stablePred(0.0025), Options{})
			if err != nil {
				t.Fatal(err)
			}
			conn, err := net.ListenUDP("udp4", &net.UDPAddr{IP: net.IPv4(127, 0, 0, 1)})
			if err != nil {
				t.Fatal(err)
			}
			tap, err := net.ListenUDP("udp4", &net.UDPAddr{IP: net.IPv4(127, 0, 0, 1)})
			if err != nil {
				t.Fatal(err)
			}
			defer tap.Close()
			stranger, err := net.ListenUDP("udp4", &net.UDPAddr{IP: net.IPv4(127, 0, 0, 2)})
			if err != nil {
				t.Skipf("no second loopback address here: %v", err)
			}
			defer stranger.Close()
			pin := tap.LocalAddr().(*net.UDPAddr).AddrPort()
			if !withPort {
				pin = netip.AddrPortFrom(pin.Addr(), 0)
			}
			m.SetSource(pin)
			ctx, cancel := context.WithCancel(context.Background())
			done := make(chan error, 1)
			go func() { done <- m.Serve(ctx, conn) }()
			to := conn.LocalAddr().(*net.UDPAddr)
			const n = 100
			for i := range n {
				tap.WriteToUDP(fmt.Appendf(nil, "%d,0.8", i), to)
				stranger.WriteToUDP(fmt.Appendf(nil, "%d,5.0", i+1000), to)
			}
			deadline := time.Now().Add(3 * time.Second)
			for {
				s := m.Summary()
				if s.Datagrams+s.Strangers >= 2*n || time.Now().After(deadline) {
					break
				}
				time.Sleep(5 * time.Millisecond)
			}
			cancel()
			<-done
			s := m.Summary()
			if s.Datagrams != n || s.Strangers != n || s.Samples != n {
				t.Errorf("datagrams %d, strangers %d, samples %d; want %d each", s.Datagrams, s.Strangers, s.Samples, n)
			}
			if s.ErrorSecondMoment == nil || *s.ErrorSecondMoment > 1e-20 {
				t.Errorf("E[eᵀe] %v: the stranger's values got in", s.ErrorSecondMoment)
			}
		})
	}
}
