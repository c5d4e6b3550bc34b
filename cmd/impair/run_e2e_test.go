package main

// Process-level tests of `impair run`: the test binary runs itself as the
// impair command (IMPAIR_TEST_MAIN=1), over real UDP on loopback.

import (
	"bufio"
	"bytes"
	"fmt"
	"io"
	"net"
	"net/http"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"rigwire/emulate/trip"
)

func TestMain(m *testing.M) {
	if os.Getenv("IMPAIR_TEST_MAIN") == "1" {
		os.Exit(dispatch(os.Args[1:], os.Stdout, os.Stderr))
	}
	os.Exit(m.Run())
}

// impairProc is `impair` started by a test.
type impairProc struct {
	t       *testing.T
	cmd     *exec.Cmd
	mu      sync.Mutex
	stderr  bytes.Buffer
	metrics chan string // the metrics URL, once logged
	done    chan struct{}
	err     error
}

var metricsURL = regexp.MustCompile(`msg=metrics url=(\S+)`)

func startImpair(t *testing.T, args ...string) *impairProc {
	t.Helper()
	exe, err := os.Executable()
	if err != nil {
		t.Fatal(err)
	}
	p := &impairProc{t: t, metrics: make(chan string, 1), done: make(chan struct{})}
	p.cmd = exec.Command(exe, args...)
	p.cmd.Env = append(os.Environ(), "IMPAIR_TEST_MAIN=1")
	pr, pw := io.Pipe()
	p.cmd.Stderr = pw
	if err := p.cmd.Start(); err != nil {
		t.Fatal(err)
	}
	go func() {
		sc := bufio.NewScanner(pr)
		sent := false
		for sc.Scan() {
			line := sc.Text()
			p.mu.Lock()
			p.stderr.WriteString(line + "\n")
			p.mu.Unlock()
			if m := metricsURL.FindStringSubmatch(line); m != nil && !sent {
				p.metrics <- m[1]
				sent = true
			}
		}
	}()
	go func() {
		p.err = p.cmd.Wait()
		pw.Close()
		close(p.done)
	}()
	t.Cleanup(func() {
		select {
		case <-p.done:
		default:
			p.cmd.Process.Kill()
			<-p.done
		}
		if t.Failed() {
			t.Logf("impair stderr:\n%s", p.output())
		}
	})
	return p
}

func (p *impairProc) output() string {
	p.mu.Lock()
	defer p.mu.Unlock()
	return p.stderr.String()
}

// metricsURL waits for the metrics endpoint.
func (p *impairProc) metricsURL() string {
	p.t.Helper()
	select {
	case u := <-p.metrics:
		return u
	case <-p.done:
		p.t.Fatalf("impair exited before serving metrics: %v", p.err)
	case <-time.After(20 * time.Second):
		p.t.Fatal("no metrics URL logged")
	}
	return ""
}

// stop sends SIGTERM and waits for the exit status.
func (p *impairProc) stop() int {
	p.t.Helper()
	p.cmd.Process.Signal(syscall.SIGTERM)
	return p.wait()
}

func (p *impairProc) wait() int {
	p.t.Helper()
	select {
	case <-p.done:
	case <-time.After(20 * time.Second):
		p.t.Fatal("impair did not exit")
	}
	if p.err == nil {
		return 0
	}
	if ee, ok := p.err.(*exec.ExitError); ok {
		return ee.ExitCode()
	}
	p.t.Fatal(p.err)
	return -1
}

// udp opens a socket on loopback (host "127.0.0.1" or another 127/8 address).
func udp(t *testing.T, host string) *net.UDPConn {
	t.Helper()
	c, err := net.ListenUDP("udp4", &net.UDPAddr{IP: net.ParseIP(host)})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { c.Close() })
	return c
}

// freePort is a UDP port free a moment ago on 127.0.0.1.
func freePort(t *testing.T) string {
	t.Helper()
	c, err := net.ListenUDP("udp4", &net.UDPAddr{IP: net.IPv4(127, 0, 0, 1)})
	if err != nil {
		t.Fatal(err)
	}
	defer c.Close()
	return c.LocalAddr().String()
}

func sendTo(t *testing.T, c *net.UDPConn, addr string, p []byte) {
	t.Helper()
	ua, err := net.ResolveUDPAddr("udp4", addr)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := c.WriteToUDP(p, ua); err != nil {
		t.Fatal(err)
	}
}

// countReceived reads c until quiet for the given time and returns how many
// datagrams arrived.
func countReceived(c *net.UDPConn, want int, quiet time.Duration) int {
	buf := make([]byte, 2048)
	n := 0
	for {
		c.SetReadDeadline(time.Now().Add(quiet))
		if _, _, err := c.ReadFromUDP(buf); err != nil {
			return n
		}
		n++
		if want > 0 && n >= want {
			return n
		}
	}
}

// scrape returns the metric samples of url as "name{labels}" → value.
func scrape(t *testing.T, url string) map[string]float64 {
	t.Helper()
	resp, err := http.Get(url)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	out := map[string]float64{}
	sc := bufio.NewScanner(resp.Body)
	for sc.Scan() {
		line := sc.Text()
		if line == "" || line[0] == '#' {
			continue
		}
		i := strings.LastIndexByte(line, ' ')
		v, err := strconv.ParseFloat(line[i+1:], 64)
		if err != nil {
			t.Fatalf("metric line %q: %v", line, err)
		}
		out[line[:i]] = v
	}
	return out
}

// sample finds the series of name with all the given labels
// (`link="a"`…); ok false when there is none.
func sample(m map[string]float64, name string, labels ...string) (float64, bool) {
	for k, v := range m {
		if !strings.HasPrefix(k, name+"{") && k != name {
			continue
		}
		all := true
		for _, l := range labels {
			all = all && strings.Contains(k, l)
		}
		if all {
			return v, true
		}
	}
	return 0, false
}

func writeFile(t *testing.T, dir, name, data string) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, []byte(data), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

const (
	passProfile  = "name: pass\n"
	blockProfile = "name: block\nsensor_to_controller: {loss: 1}\n"
)

func TestRunLinksTwoRigs(t *testing.T) {
	dir := t.TempDir()
	writeFile(t, dir, "pass.yaml", passProfile)
	writeFile(t, dir, "block.yaml", blockProfile)
	ctlA, ctlB := udp(t, "127.0.0.1"), udp(t, "127.0.0.1")
	listenA, listenB := freePort(t), freePort(t)
	links := writeFile(t, dir, "rigs.yaml", fmt.Sprintf(`metrics: 127.0.0.1:0
links:
  - {name: conveyor, listen: %s, controller: %s, profile: pass.yaml, seed: 1}
  - {name: pump, listen: %s, controller: %s, profile: block.yaml}
`, listenA, ctlA.LocalAddr(), listenB, ctlB.LocalAddr()))
	p := startImpair(t, "run", "--links", links)
	url := p.metricsURL()

	sensor := udp(t, "127.0.0.1")
	const n = 50
	for i := range n {
		sendTo(t, sensor, listenA, []byte(fmt.Sprintf("a%d", i)))
		sendTo(t, sensor, listenB, []byte(fmt.Sprintf("b%d", i)))
	}
	if got := countReceived(ctlA, n, 3*time.Second); got != n {
		t.Errorf("conveyor (loss 0): controller got %d of %d", got, n)
	}
	if got := countReceived(ctlB, 0, 300*time.Millisecond); got != 0 {
		t.Errorf("pump (loss 1): controller got %d, want 0", got)
	}
	m := scrape(t, url)
	const dg = "rigwire_relay_datagrams_total"
	if v, ok := sample(m, dg, `link="conveyor"`, `direction="sensor_to_controller"`, `outcome="forwarded"`); !ok || v != n {
		t.Errorf("conveyor forwarded: %v %v, want %d", v, ok, n)
	}
	if v, ok := sample(m, dg, `link="pump"`, `direction="sensor_to_controller"`, `outcome="dropped"`); !ok || v != n {
		t.Errorf("pump dropped: %v %v, want %d", v, ok, n)
	}
	if v, ok := sample(m, dg, `link="pump"`, `direction="sensor_to_controller"`, `outcome="forwarded"`); ok && v != 0 {
		t.Errorf("pump forwarded %v", v)
	}
	if _, ok := sample(m, "go_goroutines"); !ok {
		t.Error("no process-wide go_goroutines")
	}
	if code := p.stop(); code != 0 {
		t.Errorf("exit status %d after SIGTERM", code)
	}
}

func TestRunSingleLinkNoLinkLabel(t *testing.T) {
	dir := t.TempDir()
	prof := writeFile(t, dir, "pass.yaml", passProfile)
	ctl := udp(t, "127.0.0.1")
	listen := freePort(t)
	p := startImpair(t, "run", "--profile", prof, "--listen", listen, "--controller", ctl.LocalAddr().String(), "--metrics", "127.0.0.1:0")
	url := p.metricsURL()
	sendTo(t, udp(t, "127.0.0.1"), listen, []byte("x"))
	if got := countReceived(ctl, 1, 3*time.Second); got != 1 {
		t.Errorf("forwarded %d of 1", got)
	}
	for k := range scrape(t, url) {
		if strings.Contains(k, "link=") {
			t.Errorf("single-link series with a link label: %s", k)
		}
	}
	if code := p.stop(); code != 0 {
		t.Errorf("exit status %d", code)
	}
}

func TestRunTripWire(t *testing.T) {
	dir := t.TempDir()
	prof := writeFile(t, dir, "block.yaml", blockProfile)
	ctl := udp(t, "127.0.0.1")
	listen, tripSock := freePort(t), freePort(t)
	p := startImpair(t, "run", "--profile", prof, "--listen", listen, "--controller", ctl.LocalAddr().String(),
		"--metrics", "127.0.0.1:0", "--trip-listen", tripSock, "--trip-from", "127.0.0.2", "--on-trip", "clean")
	url := p.metricsURL()
	sensor := udp(t, "127.0.0.1")
	send := func(k int) {
		for i := range k {
			sendTo(t, sensor, listen, []byte(fmt.Sprintf("s%d", i)))
		}
	}
	send(10)
	if got := countReceived(ctl, 0, 300*time.Millisecond); got != 0 {
		t.Fatalf("loss 1 forwarded %d before the trip", got)
	}

	stranger := udp(t, "127.0.0.1") // not --trip-from
	sendTo(t, stranger, tripSock, trip.Encode("max_abs_error"))
	rig := udp(t, "127.0.0.2")
	sendTo(t, rig, tripSock, []byte("rigwire-trip 1 Not A Reason"))
	sendTo(t, rig, tripSock, []byte("hello"))
	sendTo(t, rig, tripSock, bytes.Repeat([]byte("rigwire-trip 1 x"), 1000)) // oversized
	sendTo(t, rig, tripSock, nil)
	waitMetric(t, url, "rigwire_relay_trip_requests_total", 4, `result="malformed"`)
	m := scrape(t, url)
	if v, _ := sample(m, "rigwire_relay_trip_requests_total", `result="stranger"`); v != 1 {
		t.Errorf("stranger: %v, want 1", v)
	}
	if v, _ := sample(m, "rigwire_relay_trip_requests_total", `result="accepted"`); v != 0 {
		t.Errorf("accepted before a valid request: %v", v)
	}
	send(10)
	if got := countReceived(ctl, 0, 300*time.Millisecond); got != 0 {
		t.Fatalf("forwarded %d after invalid trip requests", got)
	}

	for range 3 { // the monitor sends 3 copies
		sendTo(t, rig, tripSock, trip.Encode("max_ratio"))
	}
	waitMetric(t, url, "rigwire_relay_trip_requests_total", 2, `result="repeated"`)
	m = scrape(t, url)
	if v, _ := sample(m, "rigwire_relay_trip_requests_total", `result="accepted"`); v != 1 {
		t.Errorf("accepted: %v, want 1", v)
	}
	send(10)
	if got := countReceived(ctl, 10, 3*time.Second); got != 10 {
		t.Errorf("after the clean trip the controller got %d of 10", got)
	}
	if code := p.stop(); code != 0 {
		t.Errorf("exit status %d", code)
	}
	if !strings.Contains(p.output(), "TRIPPED by request") || !strings.Contains(p.output(), "reason=max_ratio") {
		t.Error("no warning about the trip in the log")
	}
}

// waitMetric waits until the series reaches want (tolerant bound: 10 s).
func waitMetric(t *testing.T, url, name string, want float64, labels ...string) {
	t.Helper()
	deadline := time.Now().Add(10 * time.Second)
	for {
		v, _ := sample(scrape(t, url), name, labels...)
		if v >= want {
			return
		}
		if time.Now().After(deadline) {
			t.Fatalf("%s%v = %v, want %v", name, labels, v, want)
		}
		time.Sleep(20 * time.Millisecond)
	}
}

func TestRunScenario(t *testing.T) {
	dir := t.TempDir()
	writeFile(t, dir, "block.yaml", blockProfile)
	scen := writeFile(t, dir, "gate.yaml", `name: conveyor-gate
profile: block.yaml
phases:
  - name: blocked
    duration: 4s
  - name: open
    duration: 4s
    set: {sensor_to_controller.loss: 0}
`)
	ctl := udp(t, "127.0.0.1")
	listen := freePort(t)
	p := startImpair(t, "run", "--scenario", scen, "--time-scale", "0.5", "--exit-after-scenario",
		"--listen", listen, "--controller", ctl.LocalAddr().String(), "--metrics", "127.0.0.1:0")
	url := p.metricsURL()
	p.cmd.Process.Signal(syscall.SIGHUP) // ignored during a scenario
	sensor := udp(t, "127.0.0.1")
	// Send until the open phase forwards one (tolerant bound).
	deadline := time.Now().Add(15 * time.Second)
	got := 0
	for got == 0 {
		if time.Now().After(deadline) {
			t.Fatal("nothing forwarded in the open phase")
		}
		sendTo(t, sensor, listen, []byte("y"))
		got = countReceived(ctl, 1, 20*time.Millisecond)
	}
	m := scrape(t, url)
	if v, ok := sample(m, "rigwire_relay_scenario_phase", `phase="open"`); !ok || v != 1 {
		t.Errorf("rigwire_relay_scenario_phase{phase=\"open\"} = %v %v, want 1", v, ok)
	}
	if v, ok := sample(m, "rigwire_relay_scenario_phase", `phase="blocked"`); !ok || v != 0 {
		t.Errorf("rigwire_relay_scenario_phase{phase=\"blocked\"} = %v %v, want 0", v, ok)
	}
	// Now in the open phase: everything passes.
	for range 10 {
		sendTo(t, sensor, listen, []byte("z"))
	}
	if n := countReceived(ctl, 10, 3*time.Second); n != 10 {
		t.Errorf("open phase forwarded %d of 10", n)
	}
	// --exit-after-scenario: exits 0 by itself.
	if code := p.wait(); code != 0 {
		t.Errorf("exit status %d", code)
	}
	out := p.output()
	for _, want := range []string{
		"scenario conveyor-gate (" + scen + "): 2 phases, 4s, time scale 0.5",
		"phase 1/2 blocked: 2s",
		"phase 2/2 open: 2s",
		"scenario conveyor-gate: phase 2/2 open, 4s of 4s (ended)",
		"the scenario ended (--exit-after-scenario)",
		"SIGHUP ignored: the link plays a scenario",
	} {
		if !strings.Contains(out, want) {
			t.Errorf("output lacks %q", want)
		}
	}
}

func TestRunBadFlags(t *testing.T) {
	dir := t.TempDir()
	prof := writeFile(t, dir, "pass.yaml", passProfile)
	links := writeFile(t, dir, "l.yaml", "links:\n  - {name: a, listen: 127.0.0.1:7001, controller: 127.0.0.1:7101, profile: pass.yaml}\n")
	for _, tc := range []struct {
		args []string
		want string
	}{
		{[]string{}, "one of them is required"},
		{[]string{"--profile", prof, "--scenario", prof}, "want exactly one of them"},
		{[]string{"--links", links, "--listen", "127.0.0.1:1"}, "--listen: not with --links"},
		{[]string{"--profile", prof, "--listen", "127.0.0.1:1", "--controller", "127.0.0.1:2", "--time-scale", "2"}, "--time-scale: only with a scenario"},
		{[]string{"--scenario", prof, "--listen", "127.0.0.1:1", "--controller", "127.0.0.1:2", "--time-scale", "0"}, "--time-scale: want a factor > 0 and ≤ 100"},
		{[]string{"--scenario", prof, "--listen", "127.0.0.1:1", "--controller", "127.0.0.1:2", "--time-scale", "101"}, "--time-scale: want a factor > 0 and ≤ 100"},
		{[]string{"--profile", prof, "--listen", "127.0.0.1:1", "--controller", "127.0.0.1:2", "--exit-after-scenario"}, "--exit-after-scenario: only with a scenario"},
		{[]string{"--profile", prof, "--listen", "127.0.0.1:1", "--controller", "127.0.0.1:2", "--on-trip", "clean"}, "--on-trip: only with --trip-listen"},
		{[]string{"--profile", prof, "--listen", "127.0.0.1:1", "--controller", "127.0.0.1:2", "--trip-listen", "127.0.0.1:3", "--on-trip", "halt"}, "--on-trip: want clean or stop_commands"},
		{[]string{"--links", filepath.Join(dir, "missing.yaml")}, "reading links file"},
	} {
		var stderr bytes.Buffer
		code := dispatch(append([]string{"run"}, tc.args...), io.Discard, &stderr)
		if code != 2 || !strings.Contains(stderr.String(), tc.want) {
			t.Errorf("impair run %q: status %d, stderr %q; want 2 and %q", tc.args, code, stderr.String(), tc.want)
		}
	}
}

// In a links file, a link's trip socket trips only that link; with
// stop_commands its commands stop and its sensor datagrams still pass, and
// the trip counter carries the link label.
func TestRunLinksTripStopCommands(t *testing.T) {
	dir := t.TempDir()
	writeFile(t, dir, "pass.yaml", passProfile)
	ctlA, ctlB := udp(t, "127.0.0.1"), udp(t, "127.0.0.1")
	listenA, listenB, tripA := freePort(t), freePort(t), freePort(t)
	links := writeFile(t, dir, "rigs.yaml", fmt.Sprintf(`links:
  - {name: diverter, listen: %s, controller: %s, profile: pass.yaml, trip_listen: %s, on_trip: stop_commands}
  - {name: pick-arm, listen: %s, controller: %s, profile: pass.yaml}
`, listenA, ctlA.LocalAddr(), tripA, listenB, ctlB.LocalAddr()))
	p := startImpair(t, "run", "--links", links, "--metrics", "127.0.0.1:0")
	url := p.metricsURL()
	actA, actB := udp(t, "127.0.0.1"), udp(t, "127.0.0.1") // sensor nodes, which also take the commands

	// roundTrip: the node sends a sample, the controller answers it with a
	// command to the relay's controller-facing socket; it returns whether the
	// command reached the node.
	roundTrip := func(node, ctl *net.UDPConn, listen string) bool {
		t.Helper()
		sendTo(t, node, listen, []byte("sample"))
		buf := make([]byte, 64)
		ctl.SetReadDeadline(time.Now().Add(3 * time.Second))
		_, up, err := ctl.ReadFromUDP(buf)
		if err != nil {
			t.Fatalf("sample not forwarded: %v", err)
		}
		if _, err := ctl.WriteToUDP([]byte("command"), up); err != nil {
			t.Fatal(err)
		}
		return countReceived(node, 1, 500*time.Millisecond) == 1
	}
	if !roundTrip(actA, ctlA, listenA) || !roundTrip(actB, ctlB, listenB) {
		t.Fatal("commands not forwarded before the trip")
	}
	sendTo(t, udp(t, "127.0.0.1"), tripA, trip.Encode("max_abs_error"))
	waitMetric(t, url, "rigwire_relay_trip_requests_total", 1, `link="diverter"`, `result="accepted"`)
	if roundTrip(actA, ctlA, listenA) {
		t.Error("diverter: a command passed after stop_commands")
	}
	if !roundTrip(actB, ctlB, listenB) {
		t.Error("pick-arm: its commands stopped too")
	}
	m := scrape(t, url)
	if v, ok := sample(m, "rigwire_relay_datagrams_total", `link="diverter"`, `direction="controller_to_actuator"`, `outcome="tripped"`); !ok || v != 1 {
		t.Errorf("diverter tripped commands: %v %v, want 1", v, ok)
	}
	if _, ok := sample(m, "rigwire_relay_trip_requests_total", `link="pick-arm"`); ok {
		t.Error("pick-arm has a trip counter without a trip socket")
	}
	if code := p.stop(); code != 0 {
		t.Errorf("exit status %d", code)
	}
}

// A scenario link in a links file: its phase metric carries the link
// label, and with --exit-after-scenario the whole process (the profile
// link too) drains and exits 0 when it ends.
func TestRunLinksScenario(t *testing.T) {
	dir := t.TempDir()
	writeFile(t, dir, "block.yaml", blockProfile)
	writeFile(t, dir, "pass.yaml", passProfile)
	writeFile(t, dir, "gate.yaml", `name: pump-gate
profile: block.yaml
phases:
  - {name: blocked, duration: 4s}
  - {name: open, duration: 8s, set: {sensor_to_controller.loss: 0}}
`)
	ctlA, ctlB := udp(t, "127.0.0.1"), udp(t, "127.0.0.1")
	listenA, listenB := freePort(t), freePort(t)
	links := writeFile(t, dir, "rigs.yaml", fmt.Sprintf(`metrics: 127.0.0.1:0
links:
  - {name: pump, listen: %s, controller: %s, scenario: gate.yaml}
  - {name: conveyor, listen: %s, controller: %s, profile: pass.yaml}
`, listenA, ctlA.LocalAddr(), listenB, ctlB.LocalAddr()))
	p := startImpair(t, "run", "--links", links, "--time-scale", "0.25", "--exit-after-scenario")
	url := p.metricsURL()
	waitMetric(t, url, "rigwire_relay_scenario_phase", 1, `link="pump"`, `phase="open"`)
	m := scrape(t, url)
	if _, ok := sample(m, "rigwire_relay_scenario_phase", `link="conveyor"`, `phase="open"`); ok {
		t.Error("the profile link has the scenario's phase")
	}
	sensor := udp(t, "127.0.0.1")
	sendTo(t, sensor, listenA, []byte("a"))
	sendTo(t, sensor, listenB, []byte("b"))
	if countReceived(ctlA, 1, 3*time.Second) != 1 || countReceived(ctlB, 1, 3*time.Second) != 1 {
		t.Error("open phase / profile link did not forward")
	}
	if code := p.wait(); code != 0 {
		t.Errorf("exit status %d", code)
	}
	if out := p.output(); !strings.Contains(out, "link pump: scenario pump-gate") || !strings.Contains(out, "link=pump") {
		t.Error("scenario phases not printed with the link's name")
	}
}
