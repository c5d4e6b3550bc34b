package trip

import (
	"net"
	"net/netip"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/testutil"
)

// loopbackUDP is a UDP socket on 127.0.0.1, closed with the test.
func loopbackUDP(t *testing.T) *net.UDPConn {
	t.Helper()
	c, err := net.ListenUDP("udp4", &net.UDPAddr{IP: net.IPv4(127, 0, 0, 1)})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { c.Close() })
	return c
}

// Send puts Copies requests on the wire, each decoding to the reason.
func TestSend(t *testing.T) {
	sock := loopbackUDP(t)
	conn, err := net.DialUDP("udp4", nil, sock.LocalAddr().(*net.UDPAddr))
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close()
	if n := Send(conn, ReasonRatio, discardLogger()); n != Copies {
		t.Fatalf("sent %d, want %d", n, Copies)
	}
	buf := make([]byte, MaxLen+1)
	for i := range Copies {
		sock.SetReadDeadline(time.Now().Add(10 * time.Second)) // a lost loopback datagram fails, never hangs
		n, err := sock.Read(buf)
		if err != nil {
			t.Fatalf("copy %d: %v", i, err)
		}
		if r, err := Decode(buf[:n]); err != nil || r != ReasonRatio {
			t.Errorf("copy %d: %q, %v", i, r, err)
		}
	}
}

// From the request on the wire to the target tripped and the request
// counted, over a real socket; Close ends Serve.
func TestListenServe(t *testing.T) {
	reg := prometheus.NewRegistry()
	ft := &fakeTripper{}
	l, err := Listen(ListenConfig{Addr: netip.MustParseAddrPort("127.0.0.1:0"), Action: StopCommands, Target: ft,
		Registerer: reg, Logger: discardLogger()})
	if err != nil {
		t.Fatal(err)
	}
	done := make(chan struct{})
	go func() { l.Serve(); close(done) }()
	conn, err := net.DialUDP("udp4", nil, net.UDPAddrFromAddrPort(l.Addr()))
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close()
	if _, err := conn.Write(Encode(ReasonAbsError)); err != nil {
		t.Fatal(err)
	}
	deadline := time.Now().Add(10 * time.Second) // generous: a loopback datagram arrives in microseconds
	for testutil.ToFloat64(l.count.WithLabelValues(resultAccepted)) != 1 {
		if time.Now().After(deadline) {
			t.Fatal("request not counted as accepted")
		}
		time.Sleep(time.Millisecond)
	}
	if n, err := testutil.GatherAndCount(reg, "rigwire_relay_trip_requests_total"); err != nil || n != len(results) {
		t.Errorf("%d series (%v), want %d", n, err, len(results))
	}
	l.Close()
	<-done
	if ft.calls != 1 || ft.action != StopCommands || ft.reason != ReasonAbsError {
		t.Errorf("target %+v", ft)
	}
	// A second listener on the same registry is refused, not a panic.
	if _, err := Listen(ListenConfig{Addr: netip.MustParseAddrPort("127.0.0.1:0"), Target: ft, Registerer: reg}); err == nil {
		t.Error("second registration accepted")
	}
}
