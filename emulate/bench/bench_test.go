package bench

import (
	"bytes"
	"context"
	"errors"
	"io"
	"log/slog"
	"net/netip"
	"regexp"
	"strings"
	"sync"
	"testing"
	"time"

	"rigwire/emulate/rig"
	"rigwire/emulate/trip"
	"rigwire/profiles"
)

// demoLoop is the demo's loop (a parcel diverter over a warehouse Wi-Fi
// profile), loaded from the one place the examples live.
const demoLoop = "../../profiles/examples/demo/diverter.yaml"

func quiet() *slog.Logger { return slog.New(slog.NewTextHandler(io.Discard, nil)) }

// A short loopback run with the simulated rig: the bench resolves its
// addresses, the relay's snapshot accounts for every datagram the rig
// sent (each counted once, under one outcome), the monitor decoded every
// sensor datagram the relay accepted, one registry holds both's metrics,
// and the report shows the comparison and the relay's counts.
func TestBenchLoopback(t *testing.T) {
	loop, err := profiles.LoadLoop(demoLoop)
	if err != nil {
		t.Fatal(err)
	}
	st, err := rig.SteadyStart(loop)
	if err != nil {
		t.Fatal(err)
	}
	ctl, err := rig.NewController(rig.ControllerConfig{Loop: loop, Start: st, Logger: quiet()})
	if err != nil {
		t.Fatal(err)
	}
	b, err := Open(Config{Loop: loop, Listen: netip.MustParseAddrPort("127.0.0.1:0"), Controller: ctl.LocalAddr(),
		Tolerance: 0.1, Logger: quiet()})
	if err != nil {
		t.Fatal(err)
	}
	a := b.Addrs()
	for _, c := range []struct {
		name string
		ap   netip.AddrPort
	}{{"listen", a.Listen}, {"controller bind", a.ControllerBind}} {
		if !c.ap.Addr().IsLoopback() || c.ap.Port() == 0 {
			t.Errorf("%s %s: want a loopback address with its port resolved", c.name, c.ap)
		}
	}
	if a.Controller != ctl.LocalAddr() || a.Actuator.IsValid() {
		t.Errorf("controller %s, actuator %s: want %s and none", a.Controller, a.Actuator, ctl.LocalAddr())
	}
	const periods = 100 // 1 s of the diverter's 10 ms period
	node, err := rig.NewNode(rig.NodeConfig{Loop: loop, Relay: a.Listen, Periods: periods, Seed: 7, Start: st, Logger: quiet()})
	if err != nil {
		t.Fatal(err)
	}
	var progress bytes.Buffer
	benchCtx, stopBench := context.WithCancel(context.Background())
	ctlCtx, stopCtl := context.WithCancel(context.Background())
	var wg sync.WaitGroup
	var benchErr, ctlErr error
	wg.Add(2)
	go func() { defer wg.Done(); ctlErr = ctl.Run(ctlCtx) }()
	go func() { defer wg.Done(); benchErr = b.Run(benchCtx, &progress, 200*time.Millisecond) }()
	nodeErr := node.Run(context.Background())
	settle(t, b, ctl)
	stopBench()
	stopCtl()
	wg.Wait()
	if err := errors.Join(nodeErr, benchErr, ctlErr); err != nil {
		t.Fatal(err)
	}

	s := b.Stats()
	sc, ca := s.SensorToController, s.ControllerToActuator
	ns, cs := node.Stats(), ctl.Stats()
	sum := b.Monitor.Summary()
	for _, c := range []struct {
		name      string
		got, want uint64
	}{
		{"sensor datagrams read by the relay, sent by the node", sc.Read(), ns.Samples},
		{"commands read by the relay, sent by the controller", ca.Read(), cs.Used - cs.SendError},
		{"strangers", sc.Stranger + ca.Stranger, 0},
		{"datagrams the monitor got, the relay accepted", uint64(sum.Datagrams), sc.Read() - sc.Oversized - sc.Stranger},
		{"held after the drain", uint64(sc.InFlight + ca.InFlight), 0},
	} {
		if c.got != c.want {
			t.Errorf("%s: %d, want %d", c.name, c.got, c.want)
		}
	}
	if ns.Samples != periods || sc.Forwarded == 0 || ca.Forwarded == 0 {
		t.Fatalf("node sent %d (want %d), relay forwarded %d and %d: the run did not go through", ns.Samples, periods, sc.Forwarded, ca.Forwarded)
	}

	names := map[string]bool{}
	fams, err := b.Registry.Gather()
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range fams {
		names[f.GetName()] = true
	}
	for _, n := range []string{"rigwire_relay_datagrams_total", "rigwire_monitor_samples_total", "go_goroutines"} {
		if !names[n] {
			t.Errorf("the bench's registry lacks %s", n)
		}
	}

	var out bytes.Buffer
	b.WriteReport(&out, sum)
	for _, re := range []*regexp.Regexp{
		regexp.MustCompile(`(?m)^E\[eᵀe\]\s+\S+\s+\S+\s+(\[\S+, \S+\]|-)$`),
		regexp.MustCompile(`(?m)^verdict: (agree|above|below|inconclusive) \(prediction against the measured interval widened by 0\.1 of its bounds\): \S`),
		regexp.MustCompile(`(?m)^  controller_to_actuator\s+dropped \d+, forwarded \d+`),
		regexp.MustCompile(`(?m)^  sensor_to_controller\s+dropped \d+, forwarded \d+`),
	} {
		if !re.MatchString(out.String()) {
			t.Errorf("the report lacks %s:\n%s", re, out.String())
		}
	}
	if !regexp.MustCompile(`(?m)^\s+\d+s  samples \d+`).MatchString(progress.String()) {
		t.Errorf("no progress line every 200 ms in a 1 s run:\n%s", progress.String())
	}
}

// A loop the monitor cannot use is the caller's input error, told apart
// from an error of the run.
func TestBenchInputError(t *testing.T) {
	loop, err := profiles.LoadLoop(demoLoop)
	if err != nil {
		t.Fatal(err)
	}
	l := *loop
	l.Decode.Format = "" // no decode section
	_, err = Open(Config{Loop: &l, Listen: netip.MustParseAddrPort("127.0.0.1:0"),
		Controller: netip.MustParseAddrPort("127.0.0.1:9"), Logger: quiet()})
	var ie *InputError
	if !errors.As(err, &ie) || !regexp.MustCompile(`diverter\.yaml: .*decode: missing`).MatchString(err.Error()) {
		t.Fatalf("got %v, want an InputError naming the file and the missing decode section", err)
	}
}

// settle waits, after the node's last sample, until the relay holds
// nothing and has read every command the controller sent, twice in a row
// 50 ms apart (longer than the controller's compute delay), so that no
// command is still on its way when the bench stops reading.
func settle(t *testing.T, b *Bench, ctl *rig.Controller) {
	t.Helper()
	calm := 0
	for deadline := time.Now().Add(30 * time.Second); calm < 2; time.Sleep(50 * time.Millisecond) {
		if time.Now().After(deadline) {
			t.Fatalf("the relay did not settle: %+v, controller %+v", b.Stats(), ctl.Stats())
		}
		s, cs := b.Stats(), ctl.Stats()
		if s.SensorToController.InFlight == 0 && s.ControllerToActuator.InFlight == 0 &&
			s.ControllerToActuator.Read() == cs.Used-cs.SendError {
			calm++
		} else {
			calm = 0
		}
	}
}

// A relay that fails ends Run with its error while the progress line is
// on, without waiting for ctx to end. The fault is injected in the trip
// hook, which the relay's receive goroutine calls through the tap, as a
// bug there would.
func TestBenchRunEndsWhenRelayFails(t *testing.T) {
	loop, err := profiles.LoadLoop(demoLoop)
	if err != nil {
		t.Fatal(err)
	}
	_, ctlAddr := udp(t)
	b, err := Open(Config{Loop: loop, Listen: netip.MustParseAddrPort("127.0.0.1:0"), Controller: ctlAddr, Logger: quiet()})
	if err != nil {
		t.Fatal(err)
	}
	if err := b.Monitor.SetTrip(trip.Rule{Enabled: true, MaxAbsError: 0.5}, func(trip.Event) { panic("injected fault") }); err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second) // only if Run never returns on its own
	defer cancel()
	done := make(chan error, 1)
	go func() { done <- b.Run(ctx, io.Discard, 10*time.Millisecond) }()
	layout, err := rig.NewLayout(loop)
	if err != nil {
		t.Fatal(err)
	}
	node, _ := udp(t)
	// The setpoint is 0.3 rad: 1.3 rad is 1 rad off, beyond the bound.
	for k, y := range []float64{0.31, 1.3} {
		if _, err := node.WriteToUDPAddrPort(layout.AppendSample(nil, uint64(k), int64(k)*1e7, []float64{y}), b.Addrs().Listen); err != nil {
			t.Fatal(err)
		}
	}
	err = <-done
	if err == nil || !strings.Contains(err.Error(), "injected fault") {
		t.Fatalf("Run returned %v, want the relay's failure", err)
	}
	if ctx.Err() != nil {
		t.Errorf("Run returned only once ctx had ended (%v), not when the relay failed", ctx.Err())
	}
}
