package tests

import (
	"encoding/json"
	"fmt"
	"image/png"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"
)

// soakResult is the part of `monitor soak`'s summary the tests read.
type soakResult struct {
	Samples int64 `json:"samples"`
	Phases  []struct {
		Name             string   `json:"name"`
		Verdict          string   `json:"verdict"`
		Reason           string   `json:"reason"`
		Samples          int64    `json:"samples"`
		AfterTripSamples int64    `json:"after_trip_samples"`
		CutShort         string   `json:"cut_short"`
		Measured         *float64 `json:"error_second_moment"`
		Predicted        *float64 `json:"predicted_second_moment"`
		StartSeconds     *float64 `json:"start_seconds"`
		Frequency        *struct {
			FrequencyHz float64 `json:"frequency_hz"`
			Samples     int64   `json:"samples"`
			Verdict     string  `json:"verdict"`
			Reason      string  `json:"reason"`
		} `json:"frequency_response"`
		OtherFrequencySamples int64 `json:"other_frequency_samples"`
	} `json:"phases"`
	AfterTripSamples int64 `json:"after_trip_samples"`
	// Turnaround is the controller's turnaround the soak's relay paired
	// and compared with the loop's compute law.
	Turnaround *struct {
		Commands int  `json:"commands"`
		Binned   bool `json:"binned"`
	} `json:"controller_turnaround"`
	Trip *struct {
		Reason   string  `json:"reason"`
		Sequence *uint64 `json:"sequence"`
		Action   string  `json:"action"`
	} `json:"trip"`
}

// soakTwice plays a soak that must pass through playTwice: a first play
// that ends inconclusive (exit 5) with no phase failed is played once
// more, seeded afresh; a failed phase (exit 7) is not. It returns the
// kept play's exit status, output, summary and report directory.
func soakTwice(t *testing.T, loop, scenario, scale string, wall time.Duration) (code int, out string, s *soakResult, rep string) {
	t.Helper()
	playTwice(t, func(replay int) (bool, string) {
		rep = t.TempDir()
		code, out, s = runSoakLoop(t, loop, scenario, scale, wall, rep, replay)
		return code != 5, s.verdicts()
	})
	return code, out, s, rep
}

// verdicts lists the phases' verdicts and reasons, for a log line.
func (s *soakResult) verdicts() string {
	var b strings.Builder
	for _, p := range s.Phases {
		fmt.Fprintf(&b, "\n  phase %s: %s (%s)", p.Name, p.Verdict, p.Reason)
	}
	return b.String()
}

// runSoak plays scenario on the simulated rig (rig controller and rig node
// as their own processes, `monitor soak` relaying between them) at the
// given time scale and returns the exit status, the output and the summary.
func runSoak(t *testing.T, scenario string, scale string, wall time.Duration, reportDir string) (int, string, *soakResult) {
	t.Helper()
	return runSoakLoop(t, filepath.Join("..", "profiles", "examples", "checks", "soak-diverter.loop.yaml"), scenario, scale, wall, reportDir, 0)
}

// runSoakLoop is runSoak of another loop. Replay 0 is the first play; a
// replay n > 0 seeds the relay's decisions and the rig's noise afresh, so
// that it is independent of the first.
func runSoakLoop(t *testing.T, loop, scenario string, scale string, wall time.Duration, reportDir string, replay int) (int, string, *soakResult) {
	t.Helper()
	mon := buildCmd(t, "monitor")
	dir := t.TempDir()
	ctlAddr, relayAddr := freePort(t, "udp"), freePort(t, "udp")
	summary := filepath.Join(dir, "summary.json")
	ctl := start(t, mon, "rig", "controller", "--loop", loop, "--listen", ctlAddr)
	args := []string{"soak", "--loop", loop, "--scenario", scenario, "--time-scale", scale,
		"--listen", relayAddr, "--controller", ctlAddr, "--metrics", freePort(t, "tcp"),
		"--summary", summary, "--progress", "5s"}
	if reportDir != "" {
		args = append(args, "--report", reportDir)
	}
	soak := start(t, mon, append(args, relaySeed(replay)...)...)
	time.Sleep(300 * time.Millisecond)
	node := start(t, mon, "rig", "node", "--loop", loop, "--relay", relayAddr, "--seed", strconv.Itoa(11+replay))
	code := soak.wait(t, wall+90*time.Second) // predicting the ramp's steps comes first
	node.signal(t, 15)
	ctl.signal(t, 15)
	node.wait(t, 10*time.Second)
	ctl.wait(t, 10*time.Second)
	out := soak.out.String()
	// The node's closing line counts its overruns: samples the loaded
	// host sent a quarter period late or more.
	for _, l := range strings.Split(node.out.String(), "\n") {
		if strings.Contains(l, "rig node stopped") {
			out += "node: " + l + "\n"
		}
	}
	b, err := os.ReadFile(summary)
	if err != nil {
		t.Fatalf("no summary (exit %d): %v\n%s", code, err, out)
	}
	var s soakResult
	if err := json.Unmarshal(b, &s); err != nil {
		t.Fatalf("summary: %v\n%s", err, b)
	}
	return code, out, &s
}

// TestSoakPasses plays ten minutes of scenario time (three phases: nominal,
// a ramp of the command path's delay, recovery) at a fifth of the time on
// the simulated diverter: every phase's measured E[eᵀe] must agree with
// its own prediction (the steady moments of the jump system; quasi-static
// mean over the ramp) within the scenario's tolerance, with an interval
// narrow enough to confirm it, the soak exits 0, and the report is
// written.
//
// Whether three phases of 32–44 s all confirm agreement is itself
// statistics: simulated with the engine's rule (estimate/engine,
// TestSoakScenarioRates), a run ends inconclusive with nothing wrong
// about 3 % of the time, mostly in the ramp, where late commands and the
// sensor's bursts give the error a heavy tail; a loaded host that stalls
// the rig's node adds to that. So the test is sequential: when the first
// soak ends inconclusive (exit 5) with no phase failed, it plays the
// scenario once more with the relay and the rig seeded afresh, and that
// one must pass. A failed phase (exit 7)
// fails at once: only "the data cannot tell" earns more data.
func TestSoakPasses(t *testing.T) {
	if testing.Short() {
		t.Skip("a two-minute soak")
	}
	t.Parallel()
	dir := filepath.Join("..", "profiles", "examples", "checks")
	code, out, s, rep := soakTwice(t, filepath.Join(dir, "soak-diverter.loop.yaml"), filepath.Join(dir, "soak-diverter.scenario.yaml"), "0.2", 2*time.Minute)
	if code != 0 {
		t.Fatalf("monitor soak exited %d, want 0:\n%s", code, out)
	}
	want := []string{"nominal", "degrading", "recovery"}
	if len(s.Phases) != len(want) {
		t.Fatalf("phases %+v, want %v", s.Phases, want)
	}
	for i, p := range s.Phases {
		if p.Name != want[i] || p.Verdict != "pass" || p.Samples < 2000 {
			t.Errorf("phase %d: %s %s with %d samples (%s), want %s passed with ≥ 2000 samples", i, p.Name, p.Verdict, p.Samples, p.Reason, want[i])
		}
	}
	// The ramp raises the prediction (1.5 ms → 4 ms median command delay).
	if a, b := s.Phases[0].Predicted, s.Phases[1].Predicted; a == nil || b == nil || !(*b > *a*1.05) {
		t.Errorf("degrading predicted %v, nominal %v: want the ramp to raise it", b, a)
	}
	for _, w := range []string{"phase 2/3 degrading", "report:", "controller turnaround (relay → controller → relay)"} {
		if !strings.Contains(out, w) {
			t.Errorf("soak output lacks %q:\n%s", w, out)
		}
	}
	// The loop says where commands carry their sample's number: the summary
	// has the turnarounds of (nearly) every command, measured one by one.
	if tr := s.Turnaround; tr == nil || tr.Binned || tr.Commands < 5000 {
		t.Errorf("controller_turnaround %+v: want every command's turnaround (over 5000), not binned", tr)
	}
	for _, f := range []string{"report.html", "second-moment.png", "phases.png", "ratio.png"} {
		path := filepath.Join(rep, f)
		b, err := os.ReadFile(path)
		if err != nil {
			t.Errorf("report: %v", err)
			continue
		}
		if strings.HasSuffix(f, ".png") {
			if _, err := png.Decode(strings.NewReader(string(b))); err != nil {
				t.Errorf("%s: %v", f, err)
			}
		} else if !strings.Contains(string(b), "degrading") || !strings.Contains(string(b), "data:image/png;base64,") {
			t.Errorf("report.html lacks the phase names or its embedded plots")
		}
	}
}

// TestSoakWrongPredictionFails plays the same ten minutes but judges the
// recovery phase against a wrong belief about the command path (6 ms median
// delay instead of 1.5 ms, predicting about 7 times the second moment):
// the soak exits 7 and names recovery, and only recovery, as failed (the
// prediction above the measured interval: measured below).
func TestSoakWrongPredictionFails(t *testing.T) {
	if testing.Short() {
		t.Skip("a two-minute soak")
	}
	t.Parallel()
	code, out, s := runSoak(t, filepath.Join("..", "profiles", "examples", "checks", "soak-diverter-wrong.scenario.yaml"), "0.2", 2*time.Minute, "")
	if code != 7 {
		t.Fatalf("monitor soak exited %d, want 7 (a phase failed):\n%s", code, out)
	}
	if !strings.Contains(out, `failed phase "recovery"`) {
		t.Errorf("the soak does not name the failed phase:\n%s", out)
	}
	for _, p := range s.Phases {
		switch {
		case p.Name == "recovery" && p.Verdict != "fail":
			t.Errorf("phase recovery: verdict %s (%s), want fail", p.Verdict, p.Reason)
		case p.Name != "recovery" && p.Verdict == "inconclusive":
			// A phase judged against the right belief must not fail. When
			// the loaded host stalls the rig (its node counts overruns),
			// the transient widens the interval past what can confirm
			// agreement, and the honest verdict is inconclusive; the
			// soak's status stays 7 for the failed recovery.
			t.Logf("phase %s: inconclusive (%s)", p.Name, p.Reason)
		case p.Name != "recovery" && p.Verdict != "pass":
			t.Errorf("phase %s: verdict %s (%s), want pass", p.Name, p.Verdict, p.Reason)
		}
		if p.Name == "recovery" && !strings.Contains(p.Reason, "measured below") {
			t.Errorf("recovery: %s, want the measured value below the prediction", p.Reason)
		}
	}
}

// TestSoakSweep plays a sweep soak (profiles/examples/checks/
// soak-sweep.scenario.yaml): two phases, each one 40 s dwell of the loop's
// sweep (1 Hz, 3 Hz; 40 s so that the intervals' batches, each at least
// the network's 3 s quiet dwell, number ten or more), each judging the samples taken at its frequency
// against the prediction at it (estimate/model.md §15): gain, phase,
// spread and E[eᵀe] within their intervals widened by 15 %. Both phases
// must pass on their own frequency's samples, and the report must draw
// the frequency response. As TestSoakPasses, the test is sequential: a
// frequency's intervals of ten-odd batches end inconclusive now and then
// with nothing wrong (about 0.8 % of the runs per phase, simulated with
// the engine's rule in estimate/engine, see TestSweepScenarioRates), so
// a first soak that exits 5 with no phase failed is played once more,
// and that one must pass.
func TestSoakSweep(t *testing.T) {
	if testing.Short() {
		t.Skip("an 80-second soak")
	}
	t.Parallel()
	dir := filepath.Join("..", "profiles", "examples", "checks")
	code, out, s, rep := soakTwice(t, filepath.Join(dir, "soak-sweep.loop.yaml"), filepath.Join(dir, "soak-sweep.scenario.yaml"), "1", 80*time.Second)
	if code != 0 {
		t.Fatalf("monitor soak exited %d, want 0:\n%s", code, out)
	}
	want := []float64{1, 3}
	if len(s.Phases) != 2 {
		t.Fatalf("phases %+v", s.Phases)
	}
	for i, p := range s.Phases {
		fr := p.Frequency
		if fr == nil || fr.FrequencyHz != want[i] || p.Verdict != "pass" || fr.Verdict != "agree" || fr.Samples < 1500 {
			t.Errorf("phase %s: %s (%s); frequency %+v; want passed at %g Hz with ≥ 1500 samples", p.Name, p.Verdict, p.Reason, fr, want[i])
		}
		t.Logf("phase %s: %s; %d samples at other frequencies", p.Name, p.Reason, p.OtherFrequencySamples)
	}
	for _, f := range []string{"frequency-gain.png", "frequency-phase.png", "frequency-spread.png"} {
		if b, err := os.ReadFile(filepath.Join(rep, f)); err != nil {
			t.Errorf("report: %v", err)
		} else if _, err := png.Decode(strings.NewReader(string(b))); err != nil {
			t.Errorf("%s: %v", f, err)
		}
	}
}
