package main

// Process-level tests of what `impair run` lets through and what it keeps
// safe: strangers, address families, record files, reloads off the signal
// path. Real processes, real UDP on loopback.

import (
	"bytes"
	"fmt"
	"io"
	"net"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"rigwire/emulate"
)

// Two rigs in one links file, each the other's stranger: each link
// forwards only its own rig's samples, sends commands only to it, and
// counts the other rig's datagrams as strangers.
func TestRunLinksEachRigTheOthersStranger(t *testing.T) {
	dir := t.TempDir()
	writeFile(t, dir, "pass.yaml", passProfile)
	ctlA, ctlB := udp(t, "127.0.0.1"), udp(t, "127.0.0.1")
	listenA, listenB := freePort(t), freePort(t)
	links := writeFile(t, dir, "rigs.yaml", fmt.Sprintf(`metrics: 127.0.0.1:0
links:
  - {name: conveyor, listen: %s, controller: %s, profile: pass.yaml}
  - {name: pump, listen: %s, controller: %s, profile: pass.yaml}
`, listenA, ctlA.LocalAddr(), listenB, ctlB.LocalAddr()))
	p := startImpair(t, "run", "--links", links)
	url := p.metricsURL()
	const dg = "rigwire_relay_datagrams_total"

	rigA, rigB := udp(t, "127.0.0.1"), udp(t, "127.0.0.1")
	const n = 40
	// Each rig's first datagram locks its own link; then each sends to the
	// other's link as well.
	sendTo(t, rigA, listenA, []byte("a-first"))
	sendTo(t, rigB, listenB, []byte("b-first"))
	upA, upB := relaySource(t, ctlA), relaySource(t, ctlB)
	for i := range n {
		sendTo(t, rigA, listenA, []byte(fmt.Sprintf("a%d", i)))
		sendTo(t, rigA, listenB, []byte(fmt.Sprintf("a-stray%d", i)))
		sendTo(t, rigB, listenB, []byte(fmt.Sprintf("b%d", i)))
		sendTo(t, rigB, listenA, []byte(fmt.Sprintf("b-stray%d", i)))
	}
	if got := countReceived(ctlA, 0, 300*time.Millisecond); got != n {
		t.Errorf("conveyor's controller got %d, want its rig's %d only", got, n)
	}
	if got := countReceived(ctlB, 0, 300*time.Millisecond); got != n {
		t.Errorf("pump's controller got %d, want its rig's %d only", got, n)
	}
	// Commands: each controller answers the relay's controller-facing
	// socket it heard from; each rig gets its own controller's commands
	// only. A rig posing as the other link's controller is a stranger too.
	for i := range n {
		sendTo(t, ctlA, upA, []byte(fmt.Sprintf("cmd-a%d", i)))
		sendTo(t, ctlB, upB, []byte(fmt.Sprintf("cmd-b%d", i)))
		sendTo(t, rigA, upB, []byte(fmt.Sprintf("forged%d", i)))
	}
	if got := countReceived(rigA, 0, 300*time.Millisecond); got != n {
		t.Errorf("conveyor's rig got %d datagrams, want its %d commands only", got, n)
	}
	if got := countReceived(rigB, 0, 300*time.Millisecond); got != n {
		t.Errorf("pump's rig got %d datagrams, want its %d commands only", got, n)
	}
	m := scrape(t, url)
	if v, _ := sample(m, dg, `link="pump"`, `direction="controller_to_actuator"`, `outcome="stranger"`); v != n {
		t.Errorf("pump: %g forged commands counted as strangers, want %d", v, n)
	}
	for _, link := range []string{"conveyor", "pump"} {
		if v, _ := sample(m, dg, `link="`+link+`"`, `direction="sensor_to_controller"`, `outcome="stranger"`); v != n {
			t.Errorf("%s: %g strangers counted, want %d", link, v, n)
		}
		if v, _ := sample(m, dg, `link="`+link+`"`, `direction="sensor_to_controller"`, `outcome="forwarded"`); v != n+1 {
			t.Errorf("%s: %g forwarded, want %d", link, v, n+1)
		}
	}
	want := map[string]string{"conveyor": rigA.LocalAddr().String(), "pump": rigB.LocalAddr().String()}
	for link, src := range want {
		if v, ok := sample(m, "rigwire_relay_sensor_source_info", `link="`+link+`"`, `source="`+src+`"`); !ok || v != 1 {
			t.Errorf("%s: sensor source %s not exported (%v %v)", link, src, v, ok)
		}
	}
	if code := p.stop(); code != 0 {
		t.Errorf("exit status %d", code)
	}
}

// Addresses one socket would have to serve in two families are refused at
// start with the flags or the file's line named.
func TestRunMixedFamiliesRefused(t *testing.T) {
	dir := t.TempDir()
	prof := writeFile(t, dir, "pass.yaml", passProfile)
	base := []string{"run", "--profile", prof, "--metrics", "off"}
	links := writeFile(t, dir, "l.yaml", "links:\n  - name: a\n    listen: 127.0.0.1:7001\n    controller: 127.0.0.1:7101\n    actuator: \"[::1]:7201\"\n    profile: pass.yaml\n")
	for _, tc := range []struct {
		name string
		args []string
		want string
	}{
		{"IPv6 actuator, IPv4 listen", []string{"--listen", "127.0.0.1:0", "--controller", "127.0.0.1:7101", "--actuator", "[::1]:7201"}, "--actuator: [::1]:7201 is IPv6 but --listen 127.0.0.1:0 is IPv4"},
		{"IPv6 sensor, IPv4 listen", []string{"--listen", "127.0.0.1:0", "--controller", "127.0.0.1:7101", "--sensor", "::1"}, "--sensor: ::1 is IPv6"},
		{"IPv4 actuator, IPv6 listen", []string{"--listen", "[::1]:0", "--controller", "127.0.0.1:7101", "--actuator", "127.0.0.1:7201"}, "--actuator: 127.0.0.1:7201 is IPv4"},
		{"IPv6 controller, IPv4 controller-facing socket", []string{"--listen", "127.0.0.1:0", "--controller", "[::1]:7101", "--controller-bind", "127.0.0.1:0"}, "is IPv4 but --controller [::1]:7101 is IPv6"},
		{"links file", []string{"--links", links}, "l.yaml:2: links[0]: actuator: [::1]:7201 is IPv6 but listen"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			args := append(append([]string(nil), base...), tc.args...)
			if tc.args[0] == "--links" {
				args = []string{"run", "--links", links, "--metrics", "off"}
			}
			var stderr bytes.Buffer
			code := dispatch(args, io.Discard, &stderr)
			if code != 2 || !strings.Contains(stderr.String(), tc.want) {
				t.Errorf("status %d, stderr %q; want 2 and %q", code, stderr.String(), tc.want)
			}
		})
	}
}

const oldRecord = "# rigwire relay record v1\n# an earlier run\narrival_s,direction,state,decision,delay_s,due_s,release_s\n0.1,sensor_to_controller,only,forwarded,0,0.1,0.1\n"

// A record is created only once every socket is up, never over an input
// of the run or a file that is not a record, and never shared by links.
func TestRunRecordSafety(t *testing.T) {
	dir := t.TempDir()
	prof := writeFile(t, dir, "pass.yaml", passProfile)
	notes := writeFile(t, dir, "notes.txt", "calibration notes, not a record\n")
	busy := udp(t, "127.0.0.1") // a listen address already in use
	ctl := udp(t, "127.0.0.1")
	run := func(args ...string) (int, string) {
		var stderr bytes.Buffer
		code := dispatch(append([]string{"run"}, args...), io.Discard, &stderr)
		return code, stderr.String()
	}
	t.Run("a start that fails keeps the earlier record", func(t *testing.T) {
		rec := writeFile(t, dir, "earlier.csv", oldRecord)
		code, out := run("--profile", prof, "--listen", busy.LocalAddr().String(), "--controller", ctl.LocalAddr().String(),
			"--metrics", "off", "--record", rec)
		if code == 0 || !strings.Contains(out, "address already in use") {
			t.Fatalf("status %d, stderr %q; want a failure to bind", code, out)
		}
		if b, _ := os.ReadFile(rec); string(b) != oldRecord {
			t.Errorf("the earlier record changed: %q", b)
		}
		if left, _ := filepath.Glob(filepath.Join(dir, ".earlier.csv.*")); len(left) != 0 {
			t.Errorf("partial files left behind: %v", left)
		}
	})
	for _, tc := range []struct {
		name, record, want string
	}{
		{"the profile itself", prof, "that is an input of the run"},
		{"the profile by another spelling", filepath.Join(dir, ".", "pass.yaml"), "that is an input of the run"},
		{"a file that is not a record", notes, "exists and is not a relay record"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			before, _ := os.ReadFile(tc.record)
			code, out := run("--profile", prof, "--listen", "127.0.0.1:0", "--controller", ctl.LocalAddr().String(),
				"--metrics", "off", "--record", tc.record)
			if code != 2 || !strings.Contains(out, tc.want) {
				t.Errorf("status %d, stderr %q; want 2 and %q", code, out, tc.want)
			}
			if after, _ := os.ReadFile(tc.record); !bytes.Equal(before, after) {
				t.Error("the file changed")
			}
		})
	}
	t.Run("two links with one record", func(t *testing.T) {
		links := writeFile(t, dir, "dup.yaml", `links:
  - {name: a, listen: 127.0.0.1:0, controller: 127.0.0.1:7101, profile: pass.yaml, record: both.csv}
  - {name: b, listen: 127.0.0.1:0, controller: 127.0.0.1:7102, profile: pass.yaml, record: ./both.csv}
`)
		code, out := run("--links", links, "--metrics", "off")
		if code != 2 || !strings.Contains(out, `dup.yaml:3: links[1]: record: `) || !strings.Contains(out, `already the record of link "a"`) {
			t.Errorf("status %d, stderr %q; want 2 and the second link's record named", code, out)
		}
	})
	t.Run("a run that starts replaces the earlier record", func(t *testing.T) {
		rec := writeFile(t, dir, "replaced.csv", oldRecord)
		p := startImpair(t, "run", "--profile", prof, "--listen", freePort(t), "--controller", ctl.LocalAddr().String(),
			"--metrics", "127.0.0.1:0", "--record", rec)
		p.metricsURL()
		if code := p.stop(); code != 0 {
			t.Fatalf("exit status %d", code)
		}
		b, _ := os.ReadFile(rec)
		if !strings.HasPrefix(string(b), emulate.RecordHeader) || strings.Contains(string(b), "an earlier run") {
			t.Errorf("record after the run: %q", b)
		}
	})
}

// A profile path that became a named pipe: SIGHUP's reload is refused
// with a clear error (or at worst blocks off the signal path), and SIGTERM
// still stops the relay at once.
func TestRunReloadOfFifoThenSigterm(t *testing.T) {
	dir := t.TempDir()
	prof := writeFile(t, dir, "pass.yaml", passProfile)
	ctl := udp(t, "127.0.0.1")
	p := startImpair(t, "run", "--profile", prof, "--listen", freePort(t), "--controller", ctl.LocalAddr().String(),
		"--metrics", "127.0.0.1:0")
	p.metricsURL()
	if err := os.Remove(prof); err != nil {
		t.Fatal(err)
	}
	if err := syscall.Mkfifo(prof, 0o644); err != nil {
		t.Skipf("cannot make a named pipe here: %v", err)
	}
	p.cmd.Process.Signal(syscall.SIGHUP)
	deadline := time.Now().Add(5 * time.Second)
	for !strings.Contains(p.output(), "reload refused") && time.Now().Before(deadline) {
		time.Sleep(20 * time.Millisecond)
	}
	if out := p.output(); !strings.Contains(out, "reload refused") || !strings.Contains(out, "not a regular file") {
		t.Errorf("no clear refusal of the named pipe in the log")
	}
	start := time.Now()
	p.cmd.Process.Signal(syscall.SIGTERM)
	select {
	case <-p.done:
	case <-time.After(5 * time.Second):
		t.Fatal("SIGTERM did not stop the relay within 5 s")
	}
	// The issue asks for an exit within a second; allow some slack for a
	// loaded CI host.
	if took := time.Since(start); took > 2*time.Second {
		t.Errorf("SIGTERM took %s", took)
	}
}

// relaySource reads one datagram at a controller and returns where it came
// from: the relay's controller-facing socket.
func relaySource(t *testing.T, c *net.UDPConn) string {
	t.Helper()
	buf := make([]byte, 2048)
	c.SetReadDeadline(time.Now().Add(3 * time.Second))
	_, src, err := c.ReadFromUDP(buf)
	if err != nil {
		t.Fatalf("no datagram at the controller: %v", err)
	}
	return src.String()
}

// The safety cautions are printed in full by default and as one line with
// --cautions-read; never left out.
func TestRunCautions(t *testing.T) {
	dir := t.TempDir()
	prof := writeFile(t, dir, "pass.yaml", passProfile)
	ctl := udp(t, "127.0.0.1")
	for _, tc := range []struct {
		name     string
		flags    []string
		want     string
		wantNone string
	}{
		{"default: in full", nil, "Keep an emergency stop that does not depend on the emulated link", "cautions acknowledged"},
		{"read: one line", []string{"--cautions-read"}, "SAFETY (cautions acknowledged): e-stop independent of the link", "Keep guards in place"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			args := append([]string{"run", "--profile", prof, "--listen", freePort(t), "--controller", ctl.LocalAddr().String(),
				"--metrics", "127.0.0.1:0"}, tc.flags...)
			p := startImpair(t, args...)
			p.metricsURL()
			deadline := time.Now().Add(5 * time.Second)
			for !strings.Contains(p.output(), "msg=relaying") && time.Now().Before(deadline) {
				time.Sleep(10 * time.Millisecond)
			}
			p.stop()
			out := p.output()
			if !strings.Contains(out, tc.want) || strings.Contains(out, tc.wantNone) {
				t.Errorf("output has %q: %v, has %q: %v", tc.want, strings.Contains(out, tc.want), tc.wantNone, strings.Contains(out, tc.wantNone))
			}
		})
	}
}

// --metrics "" (an unset variable in an env file) and an address with no
// host (every interface) are refused as bad usage, saying how to turn
// metrics off; so is the same in a links file.
func TestRunMetricsAddressRefused(t *testing.T) {
	dir := t.TempDir()
	prof := writeFile(t, dir, "pass.yaml", passProfile)
	links := writeFile(t, dir, "l.yaml", "metrics: \":9471\"\nlinks:\n  - {name: a, listen: 127.0.0.1:0, controller: 127.0.0.1:7101, profile: pass.yaml}\n")
	for _, tc := range []struct {
		name string
		args []string
		want string
	}{
		{"empty", []string{"--profile", prof, "--listen", "127.0.0.1:0", "--controller", "127.0.0.1:7101", "--metrics", ""}, `"off" for no metrics endpoint`},
		{"no host", []string{"--profile", prof, "--listen", "127.0.0.1:0", "--controller", "127.0.0.1:7101", "--metrics", ":9471"}, `":9471" has no host; give one (127.0.0.1 for this machine only, 0.0.0.0 or [::] for every interface), or "off" for no metrics endpoint`},
		{"links file, no host", []string{"--links", links}, `l.yaml:1: metrics: ":9471" has no host; give one (127.0.0.1 for this machine only, 0.0.0.0 or [::] for every interface), or "off" for no metrics endpoint`},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var stderr bytes.Buffer
			code := dispatch(append([]string{"run"}, tc.args...), io.Discard, &stderr)
			if code != 2 || !strings.Contains(stderr.String(), tc.want) {
				t.Errorf("status %d, stderr %q; want 2 and %q", code, stderr.String(), tc.want)
			}
		})
	}
}

// --sensor names one sender: an unspecified address would pin a source no
// datagram ever comes from (every datagram a stranger), so it is refused,
// as are an empty value and a port alone; so is the links file's sensor.
func TestRunSensorPinRefused(t *testing.T) {
	dir := t.TempDir()
	prof := writeFile(t, dir, "pass.yaml", passProfile)
	links := writeFile(t, dir, "l.yaml", "links:\n  - {name: a, listen: 127.0.0.1:0, controller: 127.0.0.1:7101, sensor: 0.0.0.0, profile: pass.yaml}\n")
	base := []string{"run", "--profile", prof, "--listen", "127.0.0.1:0", "--controller", "127.0.0.1:7101", "--metrics", "off"}
	for _, tc := range []struct {
		name string
		args []string
		want string
	}{
		{"unspecified", append(append([]string(nil), base...), "--sensor", "0.0.0.0"), `"0.0.0.0" is no sender's address`},
		{"empty", append(append([]string(nil), base...), "--sensor", ""), "empty; want HOST or HOST:PORT of the rig's sensor node"},
		{"port alone", append(append([]string(nil), base...), "--sensor", ":7000"), `":7000" has no host`},
		{"links file", []string{"run", "--links", links, "--metrics", "off"}, `l.yaml:2: links[0].sensor: "0.0.0.0" is no sender's address`},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var stderr bytes.Buffer
			code := dispatch(tc.args, io.Discard, &stderr)
			if code != 2 || !strings.Contains(stderr.String(), tc.want) {
				t.Errorf("status %d, stderr %q; want 2 and %q", code, stderr.String(), tc.want)
			}
		})
	}
}
