package tests

import (
	"encoding/json"
	"fmt"
	"os"
	"strconv"
	"strings"
	"testing"
	"time"

	"rigwire/estimate"
	"rigwire/estimate/engine"
	"rigwire/profiles"
)

// TestFrequencyResponseEndToEnd runs the simulated rig through the relay
// (rig controller, impair run, rig node and monitor run, each its own
// process, on loopback UDP) with a sweep of three sinusoidal references
// (profiles/examples/checks/rig-sweep.yaml: 0.5, 1.5 and 4 Hz, 40 s each)
// and checks the monitor's frequency response against the prediction
// (estimate/model.md §15): at each frequency the predicted gain, phase
// and spread must lie in the measured intervals widened by the monitor's
// default tolerance (verdict agree, not inconclusive), and the loss-free
// loop's phase at 4 Hz must lie outside the measured interval — the
// measurement sees the network.
//
// Three frequencies all confirming agreement is itself statistics:
// simulated with the engine's rule (estimate/engine,
// TestSweepScenarioRates), a pass through the sweep shows a verdict
// other than agree at one of them about 3 % of the time with nothing
// wrong (an interval of 12 batches now and then misses, or its batches
// look correlated). So the test is sequential: when the first run's
// verdicts are not all agree, it logs them and runs the sweep once more
// with the relay's decisions and the rig's noise seeded afresh, and that
// run must pass. A wrong prediction differs in both.
func TestFrequencyResponseEndToEnd(t *testing.T) {
	if testing.Short() {
		t.Skip("end to end: a 2-minute rig run")
	}
	t.Parallel()
	var (
		r *rigRun
		s engine.Summary
	)
	playTwice(t, func(replay int) (bool, string) {
		r, s = runSweep(t, replay)
		return allAgree(s), "\n  " + strings.Join(s.FrequencyLines(), "\n  ")
	})
	for _, l := range s.FrequencyLines() {
		t.Log(l)
	}
	for _, fr := range s.FrequencyResponse {
		if fr.Verdict != engine.FrequencyAgree {
			t.Errorf("%g Hz: %s: %s", fr.FrequencyHz, fr.Verdict, fr.Reason)
		}
	}
	// The loss-free loop at 4 Hz lags about 10° less than the loop over
	// the network: the measured interval must tell them apart.
	md, err := estimate.Build(r.loop, estimate.Options{})
	if err != nil {
		t.Fatal(err)
	}
	hs, err := md.FrequencyResponse(r.loop.Reference, []float64{4})
	if err != nil {
		t.Fatal(err)
	}
	_, nominal := estimate.Gain(hs[0].Nominal.Output[0], hs[0].Reference[0])
	o := s.FrequencyResponse[2].Outputs[0]
	if o.PhaseCILow == nil || (nominal >= *o.PhaseCILow && nominal <= *o.PhaseCIHigh) {
		t.Errorf("the loss-free loop's phase %.1f° at 4 Hz is not outside the measured interval: %+v", nominal, o)
	}
}

// runSweep runs the simulated rig over rig-sweep.yaml and returns the run
// and the monitor's summary of its three frequencies. Replay 0 is the
// first run; a replay n > 0 seeds the relay's decisions and the rig's
// noise afresh.
func runSweep(t *testing.T, replay int) (*rigRun, engine.Summary) {
	t.Helper()
	o := rigOpts{monitor: true, relayArgs: relaySeed(replay)}
	r := startRigOpts(t, "../profiles/examples/checks/rig-sweep.yaml", 122*time.Second, strconv.Itoa(7+replay), o)
	b, err := os.ReadFile(r.summary)
	if err != nil {
		t.Fatal(err)
	}
	var s engine.Summary
	if err := json.Unmarshal(b, &s); err != nil {
		t.Fatalf("summary: %v\n%s", err, b)
	}
	if len(s.FrequencyResponse) != 3 {
		t.Fatalf("%d frequencies in the summary, want 3:\n%s", len(s.FrequencyResponse), b)
	}
	return r, s
}

// allAgree says whether every frequency of s agrees with its prediction.
func allAgree(s engine.Summary) bool {
	for _, fr := range s.FrequencyResponse {
		if fr.Verdict != engine.FrequencyAgree {
			return false
		}
	}
	return true
}

// TestMonitorFrequencyMetricsPromtool: `monitor run` of a loop with a
// sweep reference, fed a sampled sinusoid of its own (10 000 samples
// through all three frequencies), serves the per-frequency series, and
// its endpoint passes promtool check metrics (Debian's prometheus
// package).
func TestMonitorFrequencyMetricsPromtool(t *testing.T) {
	promtool := needTool(t, "promtool", "prometheus")
	m := startMonitorRun(t, "--loop", "../profiles/examples/checks/rig-sweep.yaml", "--warmup", "0s")
	loop, err := profiles.LoadLoop("../profiles/examples/checks/rig-sweep.yaml")
	if err != nil {
		t.Fatal(err)
	}
	r := make([]float64, 1)
	var dgs [][]byte
	for k := range 10000 {
		loop.ReferenceAt(uint64(k), r)
		dgs = append(dgs, []byte(fmt.Sprintf("%d,0,%g", k, 0.9*r[0]+0.12)))
	}
	m.send(t, dgs)
	m.waitCounter(t, "rigwire_monitor_datagrams_total", 10000)
	body := promtoolCheck(t, promtool, m.metrics)
	for _, want := range []string{
		`rigwire_monitor_reference_gain{frequency_hz="0.5",output="0"} 0.9`,
		`rigwire_monitor_reference_gain{frequency_hz="4",output="0"} 0.9`,
		`rigwire_monitor_predicted_reference_gain{frequency_hz="1.5",output="0"}`,
		`rigwire_monitor_reference_samples_total{frequency_hz="1.5"}`,
	} {
		if !strings.Contains(string(body), want) {
			t.Errorf("the scrape lacks %s", want)
		}
	}
}
