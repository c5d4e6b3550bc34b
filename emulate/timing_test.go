package emulate

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"log/slog"
	"math/rand/v2"
	"net/netip"
	"strings"
	"testing"
	"testing/synctest"
	"time"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/testutil"

	"rigwire/profiles"
	"rigwire/profiles/laws"
)

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
		reg: prometheus.NewRegistry(), record: new(bytes.Buffer), abort: make(chan struct{}), done: make(chan error, 1),
	}
	cfg := Config{
		Profile: p, Listen: rig.listen.addr, Controller: controllerAddr, Tap: tapAddr,
		Seed: 7, SeedSet: true, SpinSet: true, Spin: 0,
		Metrics: NewMetrics(rig.reg), Record: rig.record,
		Logger:         slog.New(slog.NewTextHandler(io.Discard, nil)),
		portableTimers: true,
		conns:          &testConns{listen: rig.listen, ctlSide: rig.up, tap: rig.tapped},
	}
	if mod != nil {
		mod(&cfg)
	}
	r, err := New(cfg)
	if err != nil {
		t.Fatal(err)
	}
	rig.relay = r
	ctx, cancel := context.WithCancel(context.Background())
	rig.cancel = cancel
	go func() { rig.done <- r.Run(ctx, rig.abort) }()
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
	return int(testutil.ToFloat64(rig.relay.m.Datagrams.WithLabelValues(dir, outcome)))
}

func TestReleaseOnTime(t *testing.T) {
	// Under synctest the clock is exact: a datagram with delay D leaves at
	// arrival + D, to the nanosecond, whatever order they arrived in.
	synctest.Test(t, func(t *testing.T) {
		delays := []time.Duration{5 * time.Millisecond, 1 * time.Millisecond, 3 * time.Millisecond}
		p := &profiles.Profile{
			SensorToController:   oneState(0, &stepDelays{d: delays}),
			ControllerToActuator: oneState(0, nil),
		}
		rig := startFake(t, p, nil)
		start := time.Now()
		for i := range delays {
			rig.listen.push(sensorAddr, fmt.Appendf(nil, "s%d", i))
			synctest.Wait()
		}
		time.Sleep(10 * time.Millisecond)
		synctest.Wait()
		sent := rig.up.sent()
		if len(sent) != 3 {
			t.Fatalf("sent %d, want 3", len(sent))
		}
		wantOrder := []string{"s1", "s2", "s0"}
		for i, d := range sent {
			if string(d.data) != wantOrder[i] {
				t.Errorf("release %d: %q, want %q", i, d.data, wantOrder[i])
			}
			if d.addr != controllerAddr {
				t.Errorf("release %d went to %v", i, d.addr)
			}
		}
		for _, d := range sent {
			var i int
			fmt.Sscanf(string(d.data), "s%d", &i)
			if got := d.at.Sub(start); got != delays[i] {
				t.Errorf("%s released after %v, want %v", d.data, got, delays[i])
			}
		}
		if got := len(rig.tapped.sent()); got != 3 {
			t.Errorf("tap got %d copies, want 3", got)
		}
		rig.stop(t)
		if got := rig.count(profiles.SensorToController, OutcomeForwarded); got != 3 {
			t.Errorf("forwarded counter %d, want 3", got)
		}
	})
}

// stepDelays is a delay law for tests that returns its delays in turn.
type stepDelays struct {
	d []time.Duration
	i int
}

func (s *stepDelays) Kind() string              { return "test" }
func (s *stepDelays) Sample(*rand.Rand) float64 { x := s.d[s.i%len(s.d)]; s.i++; return x.Seconds() }
func (s *stepDelays) CDF(float64) float64       { return 0 }
func (s *stepDelays) Density(float64) float64   { return 0 }
func (s *stepDelays) Atoms() []laws.Atom        { return nil }
func (s *stepDelays) Mean() float64             { return 0 }
func (s *stepDelays) Variance() float64         { return 0 }
func (s *stepDelays) Support() (lo, hi float64) { return 0, 1 }

func TestShutdownDrainsOnTime(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		p := &profiles.Profile{
			SensorToController:   oneState(0, laws.Constant{Value: 0.2}),
			ControllerToActuator: oneState(0, laws.Constant{Value: 0.3}),
		}
		rig := startFake(t, p, nil)
		start := time.Now()
		rig.listen.push(sensorAddr, []byte("sample"))
		synctest.Wait()
		rig.up.push(controllerAddr, []byte("command"))
		synctest.Wait()
		rig.stop(t) // returns only once both are released
		if got := time.Since(start); got != 300*time.Millisecond {
			t.Errorf("Run returned after %v, want 300ms (the last due time)", got)
		}
		up, down := rig.up.sent(), rig.listen.sent()
		if len(up) != 1 || up[0].at.Sub(start) != 200*time.Millisecond {
			t.Errorf("sample: %+v, want one release at 200ms", up)
		}
		if len(down) != 1 || down[0].at.Sub(start) != 300*time.Millisecond || down[0].addr != sensorAddr {
			t.Errorf("command: %+v, want one release at 300ms to the sensor's address", down)
		}
	})
}

func TestAbortCountsWhatIsLeft(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		p := &profiles.Profile{SensorToController: oneState(0, laws.Constant{Value: 10}), ControllerToActuator: oneState(0, nil)}
		rig := startFake(t, p, nil)
		for range 4 {
			rig.listen.push(sensorAddr, []byte("x"))
		}
		synctest.Wait()
		rig.cancel()
		synctest.Wait()
		close(rig.abort)
		if err := <-rig.done; err != nil {
			t.Fatal(err)
		}
		if got := rig.count(profiles.SensorToController, OutcomeShutdown); got != 4 {
			t.Errorf("shutdown counter %d, want 4", got)
		}
	})
}

func TestRejections(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		p := &profiles.Profile{SensorToController: oneState(0, laws.Constant{Value: 0.001}), ControllerToActuator: oneState(0, nil)}
		rig := startFake(t, p, func(c *Config) {
			c.Sensor = sensorAddr
			c.MaxDatagram = 100
			c.MaxInFlight = 3
		})
		rig.listen.push(strangerAddr, []byte("not the rig"))
		rig.up.push(strangerAddr, []byte("not the controller"))
		rig.listen.push(sensorAddr, make([]byte, 101))
		for range 5 { // 3 fit in flight, 2 overflow
			rig.listen.push(sensorAddr, make([]byte, 100))
		}
		synctest.Wait()
		time.Sleep(5 * time.Millisecond)
		synctest.Wait()
		rig.stop(t)
		sc, ca := profiles.SensorToController, profiles.ControllerToActuator
		for _, c := range []struct {
			dir, outcome string
			want         int
		}{
			{sc, OutcomeStranger, 1}, {ca, OutcomeStranger, 1}, {sc, OutcomeOversized, 1},
			{sc, OutcomeOverflow, 2}, {sc, OutcomeForwarded, 3},
		} {
			if got := rig.count(c.dir, c.outcome); got != c.want {
				t.Errorf("%s %s: %d, want %d", c.dir, c.outcome, got, c.want)
			}
		}
		if got := len(rig.tapped.sent()); got != 5 {
			t.Errorf("tap got %d, want the 5 accepted sensor datagrams", got)
		}
		lines := strings.Count(rig.record.String(), "\n") - 3
		if lines != 8 {
			t.Errorf("record has %d lines, want one per datagram (8):\n%s", lines, rig.record)
		}
	})
}

func TestReloadKeepsInFlight(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		slow := &profiles.Profile{SensorToController: oneState(0, laws.Constant{Value: 0.05}), ControllerToActuator: oneState(0, nil)}
		lossy := &profiles.Profile{SensorToController: oneState(1, nil), ControllerToActuator: oneState(0, nil)}
		rig := startFake(t, slow, nil)
		start := time.Now()
		rig.listen.push(sensorAddr, []byte("before"))
		synctest.Wait()
		rig.relay.Reload(lossy)
		rig.listen.push(sensorAddr, []byte("after"))
		synctest.Wait()
		time.Sleep(100 * time.Millisecond)
		synctest.Wait()
		rig.stop(t)
		sent := rig.up.sent()
		if len(sent) != 1 || string(sent[0].data) != "before" || sent[0].at.Sub(start) != 50*time.Millisecond {
			t.Fatalf("sent %+v, want only \"before\" at 50ms", sent)
		}
		if got := rig.count(profiles.SensorToController, OutcomeDropped); got != 1 {
			t.Errorf("dropped %d, want 1 (the datagram after the reload)", got)
		}
	})
}

func TestSendErrorCounted(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		p := &profiles.Profile{SensorToController: oneState(0, nil), ControllerToActuator: oneState(0, nil)}
		rig := startFake(t, p, nil)
		rig.up.failTo = controllerAddr
		rig.listen.push(sensorAddr, []byte("x"))
		synctest.Wait()
		rig.stop(t)
		if got := rig.count(profiles.SensorToController, OutcomeSendError); got != 1 {
			t.Errorf("send errors %d, want 1", got)
		}
	})
}
