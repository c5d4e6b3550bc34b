package engine

import (
	"io"
	"math"
	"sort"
	"testing"

	"gonum.org/v1/gonum/stat"

	"rigwire/estimate/online"
	"rigwire/profiles"
)

// soakRates simulates runs of sc's phases as a soak plays them and judges
// each phase the way the engine does, returning each phase's verdict
// counts and the measured E[eᵀe] over the phase's prediction, run by run.
// Every ramp step is estimate.Simulate of the loop over the step's
// profile for the step's length, after a 100-period warm-up of its own
// (the soak's rig carries its state from step to step; the loop forgets
// its past within a few periods and the channel within about 30, so a
// fresh start is the same law). The first Settle of each phase is left
// out; the rest feeds an online estimator with the step's prediction as
// its reference, and the phase is judged against the mean prediction per
// judged sample with the phase's tolerance and min_samples
// (judgeInterval), as Monitor.StartPhase and closePhase do.
func soakRates(t *testing.T, loop *profiles.Loop, sc *profiles.Scenario, runs int) ([]map[string]int, [][]float64) {
	t.Helper()
	steps, err := sc.Steps()
	if err != nil {
		t.Fatal(err)
	}
	preds, err := PredictSteps(loop, steps, io.Discard)
	if err != nil {
		t.Fatal(err)
	}
	h := loop.Period
	counts := make([]map[string]int, len(sc.Phases))
	ratios := make([][]float64, len(sc.Phases))
	for i, ph := range sc.Phases {
		counts[i] = map[string]int{}
		settle := int(math.Round(ph.Settle.Seconds() / h))
		for run := range runs {
			on, err := online.New(online.Options{Setpoint: loop.Setpoint})
			if err != nil {
				t.Fatal(err)
			}
			n, predSum := 0, 0.0
			for si, st := range steps {
				if st.Phase != i {
					continue
				}
				end := sc.Total()
				if si+1 < len(steps) {
					end = steps[si+1].At
				}
				l := *loop
				l.Profile, l.ProfileFile = st.Profile, ""
				pr := preds[st.Predict].Error.SecondMoment
				simulateErrors(t, &l, int(math.Round((end-st.At).Seconds()/h)), uint64(run)<<16|uint64(si), func(e []float64) {
					if n++; n <= settle {
						return
					}
					on.AddErrorRef(e, pr)
					predSum += pr
				})
			}
			stats := on.Run(nil)
			pr := predSum / float64(stats.Samples)
			v, _ := judgeInterval(stats, pr, *ph.Check.Tolerance, "", ph.Check.MinSamples)
			counts[i][v]++
			ratios[i] = append(ratios[i], stats.SecondMoment/pr)
		}
	}
	return counts, ratios
}

// TestSoakScenarioRates is the statistics behind the end-to-end soak test
// (tests/soak_e2e_test.go, TestSoakPasses): the diverter's ten-minute
// scenario played at a fifth of the time, three phases judged with a
// tolerance of 0.2, simulated 300 times. It checks two things:
//
//   - the quasi-static prediction of a ramped phase (the mean of the
//     steps' steady predictions per judged sample) is the phase's
//     expected E[eᵀe]: the mean measured/predicted ratio over the runs
//     is within 3 standard errors of 1 in every phase (the ratio spreads
//     about 10 % from run to run);
//   - the verdict rates the end-to-end test must live with: a phase
//     judged against the right prediction fails (above or below) in at
//     most 1 % of the runs, and is inconclusive in at most 6 %.
//
// Measured here, 2026-12-05, with these fixed seeds: nominal 1
// inconclusive and 1 below in 300, degrading 4 inconclusive, recovery 3;
// the ratios' means 0.996, 0.988 and 0.994 (± 0.005–0.008). Another 500
// runs with other seeds gave 2, 14 and 1 inconclusive and no fail: the
// ramp's late commands and the sensor's bursts give the error a heavy
// tail, and now and then the batch means spread so that the interval
// cannot tell a factor 2. A soak of the three phases thus ends
// inconclusive (or, rarely, failed) about 3 % of the time with nothing
// wrong, which is why TestSoakPasses plays the scenario a second time
// when (and only when) the first ends inconclusive with no phase failed.
func TestSoakScenarioRates(t *testing.T) {
	if testing.Short() {
		t.Skip("simulates 300 soaks")
	}
	loop := exampleLoop(t, "checks/soak-diverter.loop.yaml")
	sc, err := profiles.LoadScenario("../../profiles/examples/checks/soak-diverter.scenario.yaml")
	if err != nil {
		t.Fatal(err)
	}
	const runs = 300
	counts, ratios := soakRates(t, loop, sc.Scale(0.2), runs)
	for i, ph := range sc.Phases {
		r := ratios[i]
		mean, sd := stat.MeanStdDev(r, nil)
		se := sd / math.Sqrt(runs)
		sort.Float64s(r)
		fail := float64(counts[i][VerdictAbove]+counts[i][VerdictBelow]) / runs
		inc := float64(counts[i][VerdictInconclusive]) / runs
		t.Logf("phase %s: %v; measured/predicted mean %.3f ± %.3f, 5 %%–95 %% [%.3f, %.3f]", ph.Name, counts[i], mean, se, r[runs/20], r[runs-runs/20])
		if math.Abs(mean-1) > 3*se {
			t.Errorf("phase %s: mean measured/predicted %.3f, want within 3 standard errors (%.3f) of 1", ph.Name, mean, 3*se)
		}
		if fail > 0.01 || inc > 0.06 {
			t.Errorf("phase %s: fails in %.1f %% and inconclusive in %.1f %% of the runs, want at most 1 %% and 6 %%", ph.Name, 100*fail, 100*inc)
		}
	}
}
