package emulate

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"log/slog"
	"math"
	"net"
	"net/netip"
	"strings"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"rigwire/profiles"
	"rigwire/profiles/laws"
	"rigwire/profiles/markov"
)

func oneState(loss float64, d laws.Delay) *markov.Channel {
	if d == nil {
		d = laws.Constant{}
	}
	return &markov.Channel{States: []markov.State{{Name: "only", MeanDwell: math.Inf(1), Loss: loss, Delay: d}}}
}

func listenLoopback(t testing.TB) *net.UDPConn {
	t.Helper()
	c, err := net.ListenUDP("udp4", &net.UDPAddr{IP: net.IPv4(127, 0, 0, 1)})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { c.Close() })
	return c
}

func addrOf(c *net.UDPConn) netip.AddrPort { return c.LocalAddr().(*net.UDPAddr).AddrPort() }

type loopbackRig struct {
	relay      *Relay
	sensor     *net.UDPConn
	controller *net.UDPConn
	tap        *net.UDPConn
	cancel     context.CancelFunc
	done       chan error
}

func startLoopback(t testing.TB, p *profiles.Profile, mod func(*Config)) *loopbackRig {
	t.Helper()
	rig := &loopbackRig{sensor: listenLoopback(t), controller: listenLoopback(t), tap: listenLoopback(t)}
	cfg := Config{
		Profile:    p,
		Listen:     netip.MustParseAddrPort("127.0.0.1:0"),
		Controller: addrOf(rig.controller),
		Tap:        addrOf(rig.tap),
		Seed:       1, SeedSet: true,
		Logger: slog.New(slog.NewTextHandler(io.Discard, nil)),
	}
	rig.relay, rig.cancel, rig.done = runRelay(t, cfg, mod, nil)
	t.Cleanup(func() {
		rig.cancel()
		<-rig.done
	})
	return rig
}

// runRelay opens a relay on cfg, changed by mod when not nil, and runs it
// until the returned cancel is called; Run's error comes on done.
func runRelay(t testing.TB, cfg Config, mod func(*Config), abort <-chan struct{}) (r *Relay, cancel context.CancelFunc, done chan error) {
	t.Helper()
	if mod != nil {
		mod(&cfg)
	}
	r, err := New(cfg)
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done = make(chan error, 1)
	go func() { done <- r.Run(ctx, abort) }()
	return r, cancel, done
}

func (rig *loopbackRig) stop(t *testing.T) {
	t.Helper()
	rig.cancel()
	if err := <-rig.done; err != nil {
		t.Fatal(err)
	}
	rig.done <- nil // for the cleanup
}

func readAll(t *testing.T, c *net.UDPConn, want int, wait time.Duration) [][]byte {
	t.Helper()
	var got [][]byte
	buf := make([]byte, 70000)
	for len(got) < want {
		c.SetReadDeadline(time.Now().Add(wait))
		n, _, err := c.ReadFromUDPAddrPort(buf)
		if err != nil {
			break
		}
		got = append(got, bytes.Clone(buf[:n]))
	}
	return got
}

func TestRelayLoopbackRoundTrip(t *testing.T) {
	p := &profiles.Profile{SensorToController: oneState(0, nil), ControllerToActuator: oneState(0, laws.Constant{Value: 0.002})}
	rig := startLoopback(t, p, nil)
	listen := rig.relay.ListenAddr()
	const n = 50
	for i := range n {
		msg := fmt.Appendf(nil, "sample %d", i)
		if _, err := rig.sensor.WriteToUDPAddrPort(msg, listen); err != nil {
			t.Fatal(err)
		}
	}
	got := readAll(t, rig.controller, n, time.Second)
	if len(got) != n {
		t.Fatalf("controller got %d datagrams, want %d", len(got), n)
	}
	tapped := readAll(t, rig.tap, n, time.Second)
	if len(tapped) != n {
		t.Fatalf("tap got %d datagrams, want %d", len(tapped), n)
	}
	for i := range n {
		want := fmt.Sprintf("sample %d", i)
		if string(got[i]) != want || string(tapped[i]) != want {
			t.Fatalf("datagram %d: controller %q tap %q, want %q", i, got[i], tapped[i], want)
		}
	}
	up := rig.relay.ControllerBindAddr()
	for i := range n {
		if _, err := rig.controller.WriteToUDPAddrPort(fmt.Appendf(nil, "command %d", i), up); err != nil {
			t.Fatal(err)
		}
	}
	cmds := readAll(t, rig.sensor, n, time.Second)
	if len(cmds) != n {
		t.Fatalf("actuator got %d commands, want %d", len(cmds), n)
	}
	rig.stop(t)
}

// Zero-delay datagrams leave from the receive goroutine while delayed ones
// leave from the release goroutine, through the same socket: run under
// -race, this checks the socket's writers are serialised.
func TestRelayMixedDelaysOneSocket(t *testing.T) {
	half, _ := laws.NewMixture([]float64{0.5, 0.5}, []laws.Delay{laws.Constant{}, laws.Constant{Value: 0.0005}})
	p := &profiles.Profile{SensorToController: oneState(0, half), ControllerToActuator: oneState(0, nil)}
	rig := startLoopback(t, p, nil)
	const n = 2000
	got := make(chan int)
	go func() { got <- len(readAll(t, rig.controller, n, time.Second)) }()
	for i := range n {
		rig.sensor.WriteToUDPAddrPort(fmt.Appendf(nil, "%d", i), rig.relay.ListenAddr())
		if i%20 == 0 {
			time.Sleep(time.Millisecond)
		}
	}
	if got := <-got; got != n {
		t.Fatalf("controller got %d of %d", got, n)
	}
}

// panicConn fails the way a bug would: its reads panic once trigger is
// closed.
type panicConn struct {
	*fakeConn
	trigger chan struct{}
}

func (p panicConn) readBatch([]message) (int, error) {
	<-p.trigger
	panic("injected fault")
}

// A receive goroutine that fails ends the run cleanly: Run returns an
// error that says so, and every datagram held is released or counted.
func TestRelayGoroutineFailureEndsRun(t *testing.T) {
	listen := newFakeConn("127.0.0.1:7000")
	ctlSide := newFakeConn("127.0.0.1:7001")
	cfg := Config{
		Profile: cleanProfile(0.05), Listen: listen.addr, Controller: netip.MustParseAddrPort("127.0.0.1:7100"),
		Actuator: netip.MustParseAddrPort("127.0.0.1:7200"),
		Metrics:  NewMetrics(prometheus.NewRegistry()), Logger: slog.New(slog.NewTextHandler(io.Discard, nil)),
		portableTimers: true,
		conns:          &testConns{listen: panicConn{listen, make(chan struct{})}, ctlSide: ctlSide},
	}
	r, err := New(cfg)
	if err != nil {
		t.Fatal(err)
	}
	ctlSide.push(cfg.Controller, []byte("held command"))
	done := make(chan error, 1)
	go func() { done <- r.Run(context.Background(), nil) }()
	for deadline := time.Now().Add(5 * time.Second); ; time.Sleep(time.Millisecond) {
		if _, ca := r.InFlight(); ca == 1 {
			break
		}
		if time.Now().After(deadline) {
			t.Fatal("the command was never held")
		}
	}
	close(cfg.conns.listen.(panicConn).trigger)
	select {
	case err := <-done:
		if err == nil || !strings.Contains(err.Error(), "injected fault") {
			t.Fatalf("Run returned %v, want the goroutine's failure", err)
		}
	case <-time.After(5 * time.Second):
		t.Fatal("Run did not end after a goroutine failed")
	}
	fwd := outcomeCount(r, profiles.ControllerToActuator, OutcomeForwarded)
	shut := outcomeCount(r, profiles.ControllerToActuator, OutcomeShutdown)
	if fwd+shut != 1 {
		t.Errorf("the held command: forwarded %d, shutdown %d; want it in one of them", fwd, shut)
	}
}
