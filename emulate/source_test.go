package emulate

import (
	"fmt"
	"net"
	"net/netip"
	"strings"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus/testutil"

	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// listenOn binds a UDP socket on a loopback address of our choice (the
// whole of 127.0.0.0/8 is loopback on Linux, so a second host is at hand).
func listenOn(t testing.TB, addr string) *net.UDPConn {
	t.Helper()
	c, err := net.ListenUDP("udp4", net.UDPAddrFromAddrPort(netip.MustParseAddrPort(addr)))
	if err != nil {
		t.Skipf("cannot bind %s here: %v", addr, err)
	}
	t.Cleanup(func() { c.Close() })
	return c
}

func outcomeCount(r *Relay, dir, outcome string) int {
	return int(testutil.ToFloat64(r.Metrics().Datagrams.WithLabelValues(dir, outcome)))
}

func send(t testing.TB, c *net.UDPConn, to netip.AddrPort, prefix string, n int) {
	t.Helper()
	for i := range n {
		if _, err := c.WriteToUDPAddrPort(fmt.Appendf(nil, "%s %d", prefix, i), to); err != nil {
			t.Fatal(err)
		}
	}
}

// countPrefix counts the datagrams in got that start with prefix.
func countPrefix(got [][]byte, prefix string) int {
	n := 0
	for _, g := range got {
		if strings.HasPrefix(string(g), prefix+" ") {
			n++
		}
	}
	return n
}

func cleanProfile(commandDelay float64) *profiles.Profile {
	return &profiles.Profile{SensorToController: oneState(0, nil),
		ControllerToActuator: oneState(0, laws.Constant{Value: commandDelay})}
}

// The relay takes only its own rig: strangers at the listen socket, before
// and after the rig's first datagram, and at the controller-facing socket,
// are counted and never forwarded; no command ever goes to a stranger; the
// rig loses nothing.
func TestRelayOnlyItsOwnRig(t *testing.T) {
	const nRig, nStranger = 200, 40
	cases := []struct {
		name          string
		pin           string // --sensor: "" none, "host" the rig's address, "exact" its address and port
		strangerHost  string
		strangerFirst bool // the stranger sends before the rig
	}{
		{name: "no pin, stranger after the rig", strangerHost: "127.0.0.1:0"},
		{name: "pinned host, stranger of another host first", pin: "host", strangerHost: "127.0.0.2:0", strangerFirst: true},
		{name: "pinned address and port, stranger on the same host first", pin: "exact", strangerHost: "127.0.0.1:0", strangerFirst: true},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			rigNode := listenLoopback(t)
			stranger := listenOn(t, tc.strangerHost)
			rig := startLoopback(t, cleanProfile(0.001), func(c *Config) {
				switch tc.pin {
				case "host":
					c.Sensor = netip.AddrPortFrom(addrOf(rigNode).Addr(), 0)
				case "exact":
					c.Sensor = addrOf(rigNode)
				}
			})
			listen, up := rig.relay.ListenAddr(), rig.relay.ControllerBindAddr()
			if tc.strangerFirst {
				send(t, stranger, listen, "stranger", nStranger/2)
				time.Sleep(20 * time.Millisecond)
			}
			send(t, rigNode, listen, "sample", nRig)
			send(t, stranger, listen, "stranger", nStranger-countIf(tc.strangerFirst, nStranger/2))
			// A stranger at the controller-facing socket, posing as the
			// controller.
			send(t, stranger, up, "forged", nStranger)
			got := readAll(t, rig.controller, nRig+2*nStranger, 300*time.Millisecond)
			if n := countPrefix(got, "sample"); n != nRig {
				t.Errorf("controller got %d of the rig's %d samples", n, nRig)
			}
			if n := countPrefix(got, "stranger"); n != 0 {
				t.Errorf("controller got %d of the stranger's datagrams, want 0", n)
			}
			tapped := readAll(t, rig.tap, nRig+nStranger, 200*time.Millisecond)
			if n := countPrefix(tapped, "stranger"); n != 0 || len(tapped) != nRig {
				t.Errorf("tap got %d datagrams (%d of the stranger's), want the rig's %d only", len(tapped), n, nRig)
			}
			send(t, rig.controller, up, "command", nRig)
			cmds := readAll(t, rigNode, nRig, 300*time.Millisecond)
			if n := countPrefix(cmds, "command"); n != nRig {
				t.Errorf("rig got %d of %d commands", n, nRig)
			}
			if n := len(readAll(t, stranger, 1, 100*time.Millisecond)); n != 0 {
				t.Errorf("the stranger received %d datagrams, want 0", n)
			}
			rig.stop(t)
			r := rig.relay
			if n := outcomeCount(r, profiles.SensorToController, OutcomeStranger); n != nStranger {
				t.Errorf("sensor side: %d strangers counted, want %d", n, nStranger)
			}
			if n := outcomeCount(r, profiles.ControllerToActuator, OutcomeStranger); n != nStranger {
				t.Errorf("command side: %d strangers counted, want %d", n, nStranger)
			}
			if n := outcomeCount(r, profiles.ControllerToActuator, OutcomeForwarded); n != nRig {
				t.Errorf("%d commands forwarded, want %d", n, nRig)
			}
			src := addrOf(rigNode).String()
			if v := testutil.ToFloat64(r.Metrics().SensorSource.WithLabelValues(src)); v != 1 {
				t.Errorf("rigwire_relay_sensor_source_info{source=%q} = %g, want 1", src, v)
			}
			if n := testutil.CollectAndCount(r.Metrics().SensorSource); n != 1 {
				t.Errorf("sensor source series: %d, want 1", n)
			}
		})
	}
}

func countIf(b bool, n int) int {
	if b {
		return n
	}
	return 0
}

// A rig node that restarts on a new port gets back in only the documented
// way: after the locked source has been silent for the relock interval.
// Without one it stays a stranger.
func TestRelayRelock(t *testing.T) {
	const relock = 150 * time.Millisecond
	cases := []struct {
		name        string
		relockAfter time.Duration
		wait        time.Duration // silence of the old node before the new one sends again
		wantBack    bool
	}{
		{name: "no relock interval: the restarted node stays a stranger", wait: 2 * relock},
		{name: "sending again too soon: still a stranger", relockAfter: relock, wait: 0},
		{name: "silent past the interval: the restarted node is the sensor", relockAfter: relock, wait: 2 * relock, wantBack: true},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			old := listenLoopback(t)
			rig := startLoopback(t, cleanProfile(0), func(c *Config) { c.RelockAfter = tc.relockAfter })
			listen, up := rig.relay.ListenAddr(), rig.relay.ControllerBindAddr()
			send(t, old, listen, "sample", 10)
			readAll(t, rig.controller, 10, 200*time.Millisecond)
			old.Close()
			time.Sleep(tc.wait)
			restarted := listenLoopback(t)
			send(t, restarted, listen, "again", 10)
			got := readAll(t, rig.controller, 10, 200*time.Millisecond)
			send(t, rig.controller, up, "command", 5)
			cmds := readAll(t, restarted, 5, 200*time.Millisecond)
			rig.stop(t)
			r := rig.relay
			quiet := testutil.ToFloat64(r.Metrics().SensorSourceChanges.WithLabelValues(lockQuiet))
			if tc.wantBack {
				if countPrefix(got, "again") != 10 || len(cmds) != 5 || quiet != 1 {
					t.Errorf("restarted node: %d of 10 samples forwarded, %d of 5 commands, %g quiet relocks; want all and 1", countPrefix(got, "again"), len(cmds), quiet)
				}
				return
			}
			if len(got) != 0 || len(cmds) != 0 || quiet != 0 {
				t.Errorf("restarted node: %d samples forwarded, %d commands, %g relocks; want none", len(got), len(cmds), quiet)
			}
			if n := outcomeCount(r, profiles.SensorToController, OutcomeStranger); n != 10 {
				t.Errorf("%d strangers counted, want 10", n)
			}
		})
	}
}

// A command that arrives before any sensor datagram, with no actuator
// given (a controller that kept sending across a relay restart), is
// counted and dropped, with and without a delaying profile; once the rig
// has sent, commands reach it.
func TestRelayCommandBeforeAnySensor(t *testing.T) {
	for _, delay := range []float64{0, 0.002} {
		t.Run(fmt.Sprintf("command delay %gs", delay), func(t *testing.T) {
			rigNode := listenLoopback(t)
			rig := startLoopback(t, cleanProfile(delay), nil)
			up := rig.relay.ControllerBindAddr()
			send(t, rig.controller, up, "early", 30)
			time.Sleep(50 * time.Millisecond)
			send(t, rigNode, rig.relay.ListenAddr(), "sample", 1)
			readAll(t, rig.controller, 1, 200*time.Millisecond)
			send(t, rig.controller, up, "command", 30)
			cmds := readAll(t, rigNode, 30, 300*time.Millisecond)
			rig.stop(t)
			if countPrefix(cmds, "command") != 30 || countPrefix(cmds, "early") != 0 {
				t.Errorf("rig got %d commands and %d early ones, want 30 and 0", countPrefix(cmds, "command"), countPrefix(cmds, "early"))
			}
			if n := outcomeCount(rig.relay, profiles.ControllerToActuator, OutcomeNoActuator); n != 30 {
				t.Errorf("%d commands counted %s, want 30", n, OutcomeNoActuator)
			}
		})
	}
}
