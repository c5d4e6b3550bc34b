package bench

import (
	"context"
	"errors"
	"net"
	"net/netip"
	"testing"
	"time"

	"rigwire/emulate"
	"rigwire/emulate/rig"
	"rigwire/emulate/trip"
	"rigwire/profiles"
)

func udp(t *testing.T) (*net.UDPConn, netip.AddrPort) {
	t.Helper()
	c, err := net.ListenUDP("udp4", &net.UDPAddr{IP: net.IPv4(127, 0, 0, 1)})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { c.Close() })
	return c, c.LocalAddr().(*net.UDPAddr).AddrPort()
}

// The trip armed on the bench goes from the monitor to the relay in
// process: a sample whose error crosses max_abs_error fires it, the relay
// takes the rule's action (stop_commands: a command that comes afterwards
// is dropped as tripped) and the channel closes. Without a rule the
// channel stays open; a rule the monitor refuses is an input error.
func TestBenchTrip(t *testing.T) {
	loop, err := profiles.LoadLoop(demoLoop)
	if err != nil {
		t.Fatal(err)
	}
	ctl, ctlAddr := udp(t)
	b, err := Open(Config{Loop: loop, Listen: netip.MustParseAddrPort("127.0.0.1:0"), Controller: ctlAddr, Logger: quiet()})
	if err != nil {
		t.Fatal(err)
	}
	if ch, err := b.ArmTrip(trip.Rule{}); err != nil {
		t.Fatal(err)
	} else {
		select {
		case <-ch:
			t.Fatal("a trip without a rule closed its channel")
		default:
		}
	}
	var ie *InputError
	if _, err := b.ArmTrip(trip.Rule{Enabled: true, MaxRatio: 2, Window: loop.Period}); !errors.As(err, &ie) {
		t.Fatalf("a window of one period: got %v, want an InputError", err)
	}
	// The setpoint is 0.3 rad: a paddle at 1.3 rad is 1 rad off.
	const bound = 0.5
	tripped, err := b.ArmTrip(trip.Rule{Enabled: true, MaxAbsError: bound, Action: trip.StopCommands})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- b.Run(ctx, nil, 0) }()

	layout, err := rig.NewLayout(loop)
	if err != nil {
		t.Fatal(err)
	}
	node, _ := udp(t)
	listen := b.Addrs().Listen
	for k, y := range []float64{0.31, 0.29, 1.3} {
		if _, err := node.WriteToUDPAddrPort(layout.AppendSample(nil, uint64(k), int64(k)*1e7, []float64{y}), listen); err != nil {
			t.Fatal(err)
		}
	}
	select {
	case <-tripped:
	case <-time.After(30 * time.Second):
		t.Fatal("the trip did not fire")
	}
	if ev := b.Monitor.Tripped(); ev == nil || ev.Reason != trip.ReasonAbsError || ev.Bound != bound {
		t.Fatalf("monitor's event %+v, want %s against %g", ev, trip.ReasonAbsError, bound)
	}
	if _, err := ctl.WriteToUDPAddrPort(rig.AppendCommand(nil, 2, 2e7, []float64{0}), b.Addrs().ControllerBind); err != nil {
		t.Fatal(err)
	}
	var s emulate.Stats
	for deadline := time.Now().Add(30 * time.Second); ; time.Sleep(10 * time.Millisecond) {
		if s = b.Stats(); s.ControllerToActuator.Tripped == 1 || time.Now().After(deadline) {
			break
		}
	}
	cancel()
	if err := <-done; err != nil {
		t.Fatal(err)
	}
	if !s.Tripped || !b.Relay.Tripped() || s.ControllerToActuator.Tripped != 1 {
		t.Errorf("relay tripped %v (stats %v), commands dropped as tripped %d: want true and 1",
			b.Relay.Tripped(), s.Tripped, s.ControllerToActuator.Tripped)
	}
}
