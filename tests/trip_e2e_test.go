package tests

import (
	"encoding/json"
	"fmt"
	"net"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"
)

// tripLoop is a first-order pump-pressure loop (invented) whose samples
// the test writes itself, with a safety trip on |e| > 0.5. The network
// loses half of everything and holds the rest 50 ms, five periods, so a
// datagram forwarded clean is told apart from an impaired one by its
// latency alone.
const tripLoop = `period: 10ms
plant: {a: [[-1]], b: [[1]], c: [[1]]}
controller: {d: [[0.5]]}
setpoint: [0]
profile:
  seed: 5
  sensor_to_controller: {loss: 0.5, delay: {kind: constant, value: 50ms}}
  controller_to_actuator: {loss: 0.5, delay: {kind: constant, value: 50ms}}
decode:
  format: text
  sequence: {field: 0}
  outputs: [{field: 2}]
trip:
  max_abs_error: 0.5
  action: %s
`

const tripScenario = `name: pump-trip
profile:
  seed: 5
  sensor_to_controller: {loss: 0.5, delay: {kind: constant, value: 50ms}}
  controller_to_actuator: {loss: 0.5, delay: {kind: constant, value: 50ms}}
phases:
  - {name: impaired, duration: 30s}
  - {name: recovery, duration: 30s, check: {tolerance: 0.2}}
`

// TestTripWithinOnePeriod drives `monitor soak` with samples the test
// writes as the sensor node (every 10 ms, |e| = 0.01 except sample 100,
// |e| = 1) and answers as the controller. Sample 100 crosses the bound;
// sample 101, sent one period later, must already pass the relay as the
// trip action says: clean (no loss, no delay, for samples and commands) or
// stop_commands (samples clean, no command reaches the actuator any more).
// The soak then ends with exit status 8 and names the sample that tripped;
// its phase is judged on the samples up to the trip only (the later ones
// counted apart), the phase after it is listed as not run, in the summary,
// the table and the report; `monitor serve` does the same with the loop's
// own profile.
func TestTripWithinOnePeriod(t *testing.T) {
	for _, action := range []string{"clean", "stop_commands"} {
		t.Run(action, func(t *testing.T) {
			t.Parallel()
			tripRun(t, action, "soak")
		})
	}
	// monitor serve (relay and monitor, no scenario) arms the same trip.
	t.Run("serve/clean", func(t *testing.T) {
		t.Parallel()
		tripRun(t, "clean", "serve")
	})
}

func tripRun(t *testing.T, action, command string) {
	mon := buildCmd(t, "monitor")
	dir := t.TempDir()
	loop, scen := filepath.Join(dir, "loop.yaml"), filepath.Join(dir, "scenario.yaml")
	if err := os.WriteFile(loop, fmt.Appendf(nil, tripLoop, action), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(scen, []byte(tripScenario), 0o644); err != nil {
		t.Fatal(err)
	}
	ctl, err := net.ListenUDP("udp4", &net.UDPAddr{IP: net.IPv4(127, 0, 0, 1)})
	if err != nil {
		t.Fatal(err)
	}
	defer ctl.Close()
	node, err := net.ListenUDP("udp4", &net.UDPAddr{IP: net.IPv4(127, 0, 0, 1)})
	if err != nil {
		t.Fatal(err)
	}
	defer node.Close()
	relayAddr := freePort(t, "udp")
	summary := filepath.Join(dir, "summary.json")
	args := []string{command, "--loop", loop, "--listen", relayAddr,
		"--controller", ctl.LocalAddr().String(), "--metrics", "off", "--summary", summary, "--progress", "0"}
	reportDir := filepath.Join(dir, "report")
	if command == "soak" {
		args = append(args, "--scenario", scen, "--after-trip", "1s", "--report", reportDir)
	} else {
		args = append(args, "--duration", "3s")
	}
	soak := start(t, mon, args...)
	time.Sleep(500 * time.Millisecond)

	var mu sync.Mutex
	sent := map[int]time.Time{}
	atCtl := map[int]time.Time{}  // sample k reached the controller
	atNode := map[int]time.Time{} // command k reached the actuator
	go func() {
		buf := make([]byte, 256)
		for {
			n, from, err := ctl.ReadFromUDP(buf)
			if err != nil {
				return
			}
			k, _ := strconv.Atoi(strings.SplitN(string(buf[:n]), ",", 2)[0])
			mu.Lock()
			atCtl[k] = time.Now()
			mu.Unlock()
			ctl.WriteToUDP([]byte(strconv.Itoa(k)), from) // the command for sample k
		}
	}()
	go func() {
		buf := make([]byte, 256)
		for {
			n, _, err := node.ReadFromUDP(buf)
			if err != nil {
				return
			}
			k, _ := strconv.Atoi(string(buf[:n]))
			mu.Lock()
			atNode[k] = time.Now()
			mu.Unlock()
		}
	}()
	ra, err := net.ResolveUDPAddr("udp4", relayAddr)
	if err != nil {
		t.Fatal(err)
	}
	const crossing, last = 100, 160
	tick := time.NewTicker(10 * time.Millisecond)
	for k := 0; k <= last; k++ {
		<-tick.C
		y := 0.01
		if k == crossing {
			y = 1
		}
		mu.Lock()
		sent[k] = time.Now()
		mu.Unlock()
		if _, err := node.WriteToUDP(fmt.Appendf(nil, "%d,%.3f,%g", k, float64(k)*0.01, y), ra); err != nil {
			t.Fatal(err)
		}
	}
	tick.Stop()
	code := soak.wait(t, 20*time.Second)
	time.Sleep(100 * time.Millisecond)
	if code != 8 {
		t.Fatalf("monitor %s exited %d, want 8 (safety trip):\n%s", command, code, soak.out.String())
	}

	mu.Lock()
	defer mu.Unlock()
	// Before the crossing the profile held: about half lost, the rest 50 ms late.
	before := 0
	for k := 0; k < crossing; k++ {
		if at, ok := atCtl[k]; ok {
			before++
			if d := at.Sub(sent[k]); d < 45*time.Millisecond {
				t.Errorf("sample %d before the trip passed in %s, want the profile's 50 ms", k, d)
			}
		}
	}
	if before < 25 || before > 75 {
		t.Errorf("%d of %d samples before the trip reached the controller, want about half", before, crossing)
	}
	// From the next sample on (one period after the crossing) all pass at once.
	for k := crossing + 1; k <= last; k++ {
		at, ok := atCtl[k]
		if !ok {
			t.Errorf("sample %d, after the trip, did not reach the controller", k)
			continue
		}
		if d := at.Sub(sent[k]); d > 25*time.Millisecond {
			t.Errorf("sample %d after the trip took %s, want clean forwarding (the profile's delay is 50 ms)", k, d)
		}
	}
	cmds := 0
	for k := crossing + 1; k <= last; k++ {
		if _, ok := atNode[k]; ok {
			cmds++
		}
	}
	switch action {
	case "clean":
		if cmds != last-crossing {
			t.Errorf("%d of %d commands after the trip reached the actuator, want all (clean forwarding)", cmds, last-crossing)
		}
	case "stop_commands":
		for k, at := range atNode {
			if at.After(sent[crossing+1]) {
				t.Errorf("command %d reached the actuator at %s, after the trip (stop_commands)", k, at.Sub(sent[crossing+1]))
			}
		}
	}
	b, err := os.ReadFile(summary)
	if err != nil {
		t.Fatal(err)
	}
	var s soakResult
	if err := json.Unmarshal(b, &s); err != nil {
		t.Fatal(err)
	}
	if s.Trip == nil || s.Trip.Reason != "abs_error" || s.Trip.Sequence == nil || *s.Trip.Sequence != crossing || s.Trip.Action != action {
		t.Errorf("summary trip %+v, want abs_error at sequence %d with action %s", s.Trip, crossing, action)
	}
	if !strings.Contains(soak.out.String(), "safety trip") {
		t.Errorf("the soak's output does not say it tripped:\n%s", soak.out.String())
	}
	if command != "soak" {
		return
	}
	// Samples 0…100 reached the monitor before the trip (its tap sees them
	// before impairment; loopback may lose one), 101…160 after it.
	if len(s.Phases) != 2 {
		t.Fatalf("phases %+v, want impaired and recovery", s.Phases)
	}
	imp, rec := s.Phases[0], s.Phases[1]
	if imp.Name != "impaired" || imp.CutShort != "trip" || imp.Samples < crossing-5 || imp.Samples > crossing+1 ||
		imp.AfterTripSamples < last-crossing-10 || imp.AfterTripSamples > last-crossing ||
		!strings.Contains(imp.Reason, "cut short by the safety trip") {
		t.Errorf("impaired: %+v; want cut by the trip, about %d samples judged and %d after the trip", imp, crossing+1, last-crossing)
	}
	if rec.Name != "recovery" || rec.Verdict != "not_run" || rec.Samples != 0 || rec.StartSeconds != nil ||
		!strings.Contains(rec.Reason, `not run: the safety trip (abs_error) ended the soak in phase "impaired"`) {
		t.Errorf("recovery: %+v, want not run", rec)
	}
	if s.AfterTripSamples != imp.AfterTripSamples {
		t.Errorf("run after_trip_samples %d, phase %d", s.AfterTripSamples, imp.AfterTripSamples)
	}
	out := soak.out.String()
	for _, re := range []string{`(?m)^impaired\s+pass\s+\d+ .*cut by trip \(\d+ after it\)`, `(?m)^recovery\s+not run\s+0 `} {
		if !regexp.MustCompile(re).MatchString(out) {
			t.Errorf("the soak's table lacks %s:\n%s", re, out)
		}
	}
	page, err := os.ReadFile(filepath.Join(reportDir, "report.html"))
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"TRIPPED", "cut by trip", "not run", "recovery", "not an emergency stop"} {
		if !strings.Contains(string(page), want) {
			t.Errorf("report.html lacks %q", want)
		}
	}
}
