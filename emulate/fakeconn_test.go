package emulate

import (
	"bytes"
	"context"
	"io"
	"log/slog"
	"net/netip"
	"os"
	"sync"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"rigwire/profiles"
)

// fakeConn is an in-memory batchConn, after wireguard-go's conn/bindtest:
// tests push datagrams into it and read what the relay sent, with the
// (possibly fake, under testing/synctest) time of sending.
type fakeConn struct {
	addr netip.AddrPort
	in   chan fakeDatagram

	mu       sync.Mutex
	out      []fakeDatagram
	deadline chan struct{} // closed when the read deadline has passed
	closed   bool
	failTo   netip.AddrPort // writes to this address fail
}

type fakeDatagram struct {
	data []byte
	addr netip.AddrPort // source when pushed, destination when sent
	at   time.Time
}

func newFakeConn(addr string) *fakeConn {
	return &fakeConn{addr: netip.MustParseAddrPort(addr), in: make(chan fakeDatagram, 1<<16), deadline: make(chan struct{})}
}

func (c *fakeConn) push(from netip.AddrPort, data []byte) {
	c.in <- fakeDatagram{data: data, addr: from, at: time.Now()}
}

func (c *fakeConn) readBatch(ms []message) (int, error) {
	var d fakeDatagram
	select {
	case d = <-c.in:
	case <-c.deadline:
		return 0, os.ErrDeadlineExceeded
	}
	n := 0
	for {
		m := &ms[n]
		m.n = copy(m.buf, d.data)
		m.trunc = len(d.data) > len(m.buf)
		m.addr = d.addr
		n++
		if n == len(ms) {
			return n, nil
		}
		select {
		case d = <-c.in:
		default:
			return n, nil
		}
	}
}

func (c *fakeConn) writeBatch(ms []message) (int, error) {
	c.mu.Lock()
	defer c.mu.Unlock()
	for i := range ms {
		if ms[i].addr == c.failTo || !ms[i].addr.IsValid() {
			return i, os.ErrInvalid
		}
		c.out = append(c.out, fakeDatagram{data: append([]byte(nil), ms[i].buf[:ms[i].n]...), addr: ms[i].addr, at: time.Now()})
	}
	return len(ms), nil
}

func (c *fakeConn) sent() []fakeDatagram {
	c.mu.Lock()
	defer c.mu.Unlock()
	return append([]fakeDatagram(nil), c.out...)
}

func (c *fakeConn) localAddr() netip.AddrPort { return c.addr }

func (c *fakeConn) setReadDeadline(t time.Time) error {
	c.mu.Lock()
	defer c.mu.Unlock()
	if !t.IsZero() && !t.After(time.Now()) {
		select {
		case <-c.deadline:
		default:
			close(c.deadline)
		}
	}
	return nil
}

func (c *fakeConn) close() error {
	c.mu.Lock()
	defer c.mu.Unlock()
	c.closed = true
	return nil
}

var (
	sensorAddr     = netip.MustParseAddrPort("192.0.2.10:5000") // documentation range; never dialled
	controllerAddr = netip.MustParseAddrPort("192.0.2.20:6000")
	tapAddr        = netip.MustParseAddrPort("192.0.2.30:7000")
	strangerAddr   = netip.MustParseAddrPort("192.0.2.99:9999")
)

type fakeRig struct {
	relay              *Relay
	listen, up, tapped *fakeConn
	reg                *prometheus.Registry
	record             *bytes.Buffer
	cancel             context.CancelFunc
	abort              chan struct{}
	done               chan error
}

// startFake runs a relay on fake sockets with Go timers and no spin, so
// that testing/synctest's fake clock drives it exactly.
func startFake(t *testing.T, p *profiles.Profile, mod func(*Config)) *fakeRig {
	t.Helper()
	rig := &fakeRig{
		listen: newFakeConn("127.0.0.1:4000"), up: newFakeConn("127.0.0.1:4001"), tapped: newFakeConn("127.0.0.1:4002"),
		reg: prometheus.NewRegistry(), record: new(bytes.Buffer), abort: make(chan struct{}),
	}
	cfg := Config{
		Profile: p, Listen: rig.listen.addr, Controller: controllerAddr, Tap: tapAddr,
		Seed: 7, SeedSet: true, SpinSet: true, Spin: 0,
		Metrics: NewMetrics(rig.reg), Record: rig.record,
		Logger:         slog.New(slog.NewTextHandler(io.Discard, nil)),
		portableTimers: true,
		conns:          &testConns{listen: rig.listen, ctlSide: rig.up, tap: rig.tapped},
	}
	rig.relay, rig.cancel, rig.done = runRelay(t, cfg, mod, rig.abort)
	return rig
}

func (rig *fakeRig) stop(t *testing.T) {
	t.Helper()
	rig.cancel()
	if err := <-rig.done; err != nil {
		t.Fatal(err)
	}
}

func (rig *fakeRig) count(dir, outcome string) int {
	return outcomeCount(rig.relay, dir, outcome)
}
