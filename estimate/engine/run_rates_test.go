package engine

import (
	"testing"
	"time"

	"rigwire/estimate"
	"rigwire/estimate/online"
	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// exampleLoop loads profiles/examples/<path> (a loop file the rates
// tests simulate).
func exampleLoop(t *testing.T, path string) *profiles.Loop {
	t.Helper()
	l, err := profiles.LoadLoop("../../profiles/examples/" + path)
	if err != nil {
		t.Fatal(err)
	}
	return l
}

// simulateErrors simulates one run of loop, periods long after a
// 100-period warm-up of its own (estimate.Simulate with seed), and hands
// fn each counted sample's error e = r − y (the slice is reused).
func simulateErrors(t *testing.T, loop *profiles.Loop, periods int, seed uint64, fn func(e []float64)) {
	t.Helper()
	e := make([]float64, len(loop.Setpoint))
	_, err := estimate.Simulate(loop, estimate.SimOptions{Periods: periods + 100, Warmup: 100, Runs: 1, Seed: seed,
		OnSample: func(_, _ int, r, y []float64) {
			for j := range e {
				e[j] = r[j] - y[j]
			}
			fn(e)
		}})
	if err != nil {
		t.Fatal(err)
	}
}

// runRates simulates runs of loop for dur (simulateErrors) and judges
// each as monitor run does with tolerance tol and the default
// min_samples (judgeInterval against the steady prediction), returning
// the verdict counts.
func runRates(t *testing.T, loop *profiles.Loop, dur time.Duration, tol float64, runs int, seed uint64) map[string]int {
	t.Helper()
	pr, err := estimate.Predict(loop, estimate.PredictOptions{SkipMargin: true})
	if err != nil || pr.Error == nil {
		t.Fatalf("prediction: %v", err)
	}
	counts := map[string]int{}
	for run := range runs {
		on, err := online.New(online.Options{Setpoint: loop.Setpoint})
		if err != nil {
			t.Fatal(err)
		}
		simulateErrors(t, loop, int(dur.Seconds()/loop.Period+0.5), seed+uint64(run), on.AddError)
		v, _ := judgeInterval(on.Run(nil), pr.Error.SecondMoment, tol, "", DefaultMinSamples)
		counts[v]++
	}
	return counts
}

// TestRunScenarioRates is the statistics behind the end-to-end tests
// that ask monitor run or monitor serve for agree after one run, each
// simulated on the ideal rig (the calibration exact: the controller's
// gamma law as the loop's compute delay) and judged with its tolerance:
//
//   - TestRigWideArea (tests/widearea_e2e_test.go): the shuttle's
//     wide-area loop, three minutes, tolerance 0.15;
//   - TestCalibrationEndToEnd (tests/calibrate_e2e_test.go): the jittery
//     rig, three minutes, tolerance 0.1;
//   - TestRigServe (tests/rig_e2e_test.go): rig-pi.yaml, 15 s, 0.1;
//   - TestLabDemoAcrossNamespaces (tests/lab_demo_test.go): rig-pi.yaml,
//     20 s, 0.15.
//
// With nothing wrong, a verdict other than agree comes in at most 2 % of
// the three-minute runs and 3 % of the short ones. Measured here,
// 2026-12-05: the three-minute runs agreed in all 200 (seeds 1–200), so
// those two tests are single runs — a verdict other than agree there
// points at the rig or the host (latency the calibration did not see),
// not at chance; over 1000 runs (seeds 1–1000) the 15-second run ended
// other than agree 15 times (3 above, 8 below, 4 inconclusive), the
// 20-second one 8 times, so those two tests play a run that does once
// more, seeded afresh.
func TestRunScenarioRates(t *testing.T) {
	if testing.Short() {
		t.Skip("simulates 400 three-minute runs and 600 short ones")
	}
	shuttle, jitter, pi := exampleLoop(t, "loops/shuttle-remote.yaml"), exampleLoop(t, "checks/rig-jitter.yaml"), exampleLoop(t, "checks/rig-pi.yaml")
	// tests/calibrate_e2e_test.go's jitteryController.
	var err error
	if jitter.Compute, err = laws.NewGamma(2, 0.002, 0.001); err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name      string
		loop      *profiles.Loop
		dur       time.Duration
		tol       float64
		runs, max int
	}{
		{"wide-area shuttle", shuttle, 3 * time.Minute, 0.15, 200, 4},
		{"jittery rig, calibrated", jitter, 3 * time.Minute, 0.1, 200, 4},
		{"rig-pi through serve", pi, 15 * time.Second, 0.1, 300, 9},
		{"rig-pi across the lab", pi, 20 * time.Second, 0.15, 300, 9},
	} {
		counts := runRates(t, c.loop, c.dur, c.tol, c.runs, 1)
		t.Logf("%s: %v", c.name, counts)
		if n := c.runs - counts[VerdictAgree]; n > c.max {
			t.Errorf("%s: not agree in %d of %d ideal runs, want at most %d", c.name, n, c.runs, c.max)
		}
	}
}
