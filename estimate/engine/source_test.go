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
// stranger's, over real UDP, are counted under their reason and never
// decoded, whether the pin names the tap's address and port or its
// address alone; without a pin every source is decoded.
func TestServeTakesOnlyItsSource(t *testing.T) {
	lo1, lo2 := net.IPv4(127, 0, 0, 1), net.IPv4(127, 0, 0, 2)
	cases := []struct {
		name       string
		pin        string // "none", "host" or "host:port" (the tap's)
		strangerIP net.IP
		reason     string // the strangers' reason; "" when they are decoded
	}{
		{"address pinned, stranger on another host", "host", lo2, "other_host"},
		{"address and port pinned, stranger on another host", "host:port", lo2, "other_host"},
		{"address and port pinned, stranger on another port", "host:port", lo1, "other_port"},
		{"address pinned, another port of it is the tap's too", "host", lo1, ""},
		{"nothing pinned, every source decoded", "none", lo2, ""},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			m, err := New(testLoop(t, textDecode), stablePred(0.0025), Options{})
			if err != nil {
				t.Fatal(err)
			}
			reg := registered(t, m)
			conn, err := net.ListenUDP("udp4", &net.UDPAddr{IP: lo1})
			if err != nil {
				t.Fatal(err)
			}
			tap, err := net.ListenUDP("udp4", &net.UDPAddr{IP: lo1})
			if err != nil {
				t.Fatal(err)
			}
			defer tap.Close()
			stranger, err := net.ListenUDP("udp4", &net.UDPAddr{IP: c.strangerIP})
			if err != nil {
				t.Skipf("cannot bind %s here: %v", c.strangerIP, err)
			}
			defer stranger.Close()
			pin := tap.LocalAddr().(*net.UDPAddr).AddrPort()
			switch c.pin {
			case "host":
				m.SetSource(netip.AddrPortFrom(pin.Addr(), 0))
			case "host:port":
				m.SetSource(pin)
			}
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
			if err := <-done; err != nil {
				t.Fatal(err)
			}
			s := m.Summary()
			got := gatherAll(t, reg)
			if c.reason == "" {
				if s.Datagrams != 2*n || s.Strangers != 0 || s.Samples != 2*n {
					t.Errorf("datagrams %d, strangers %d, samples %d; want %d, 0, %d", s.Datagrams, s.Strangers, s.Samples, 2*n, 2*n)
				}
				return
			}
			if s.Datagrams != n || s.Strangers != n || s.Samples != n {
				t.Errorf("datagrams %d, strangers %d, samples %d; want %d each", s.Datagrams, s.Strangers, s.Samples, n)
			}
			for _, r := range StrangerReasons {
				want := 0.0
				if r == c.reason {
					want = n
				}
				if v, ok := got.get(namePrefix+"stranger_datagrams_total", "reason="+r); !ok || v != want {
					t.Errorf("stranger_datagrams_total{reason=%q} = %v (served %v), want %v", r, v, ok, want)
				}
			}
			if s.ErrorSecondMoment == nil || *s.ErrorSecondMoment > 1e-20 {
				t.Errorf("E[eᵀe] %v: the stranger's values got in", s.ErrorSecondMoment)
			}
			checkCountsAddUp(t, s)
		})
	}
}

// The datagram path Serve takes (feedFrom: the source check and the feed
// under one lock) allocates nothing, for the pinned source's datagrams
// as for a stranger's.
func TestServePathDoesNotAllocate(t *testing.T) {
	tap := netip.MustParseAddrPort("127.0.0.1:40000")
	cases := []struct {
		name string
		src  netip.AddrPort
	}{
		{"the source", tap},
		{"another host", netip.MustParseAddrPort("127.0.0.2:40000")},
		{"another port", netip.MustParseAddrPort("127.0.0.1:40001")},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			m, err := New(testLoop(t, textDecode), stablePred(0.0025), Options{})
			if err != nil {
				t.Fatal(err)
			}
			m.SetSource(tap)
			payload, now := []byte("1,0.8\n"), time.Now()
			if n := testing.AllocsPerRun(1000, func() { m.feedFrom(c.src, payload, now) }); n != 0 {
				t.Errorf("%v allocations per datagram", n)
			}
		})
	}
}
