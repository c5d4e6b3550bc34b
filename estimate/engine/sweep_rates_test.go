package engine

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/stat"

	"rigwire/estimate"
	"rigwire/estimate/online"
	"rigwire/profiles"
)

// sweepRun is one simulated pass through a sweep: per frequency, the
// engine's result and whether the loss-free loop's phase lies outside the
// measured interval.
type sweepRun struct {
	results      []FrequencyResult
	nominalapart []bool
}

// sweepRates simulates runs of loop's sweep reference, once through its
// frequencies (estimate.Simulate, fresh seeds from seed on), fits each
// frequency as the monitor does (each dwell's settling left out, newFit's
// batches) and judges it against the prediction with tolerance tol
// (frequencyResult, judgeHarmonic).
func sweepRates(t *testing.T, loop *profiles.Loop, runs int, tol float64, seed uint64) (counts []map[string]int, out []sweepRun) {
	t.Helper()
	pred, err := estimate.Predict(loop, estimate.PredictOptions{SkipMargin: true})
	if err != nil {
		t.Fatal(err)
	}
	md, err := estimate.Build(loop, estimate.Options{})
	if err != nil {
		t.Fatal(err)
	}
	freqs := loop.Reference.Frequencies
	hs, err := md.FrequencyResponse(loop.Reference, freqs)
	if err != nil {
		t.Fatal(err)
	}
	counts = make([]map[string]int, len(freqs))
	for i := range counts {
		counts[i] = map[string]int{}
	}
	r := make([]float64, len(loop.Setpoint))
	for run := range runs {
		fits := make([]*online.HarmonicFit, len(freqs))
		for seg := range fits {
			fits[seg] = newFit(loop, seg, 0.95)
		}
		_, err := estimate.Simulate(loop, estimate.SimOptions{Periods: int(loop.Reference.DwellSamples) * len(freqs), Runs: 1,
			Seed: seed + uint64(run),
			OnSample: func(_, k int, _, y []float64) {
				seg, theta, _ := loop.ReferenceAt(uint64(k), r)
				fits[seg].Add(y, theta)
			}})
		if err != nil {
			t.Fatal(err)
		}
		var sr sweepRun
		for seg, f := range fits {
			fr := frequencyResult(loop, seg, f.Result(), harmonicAt(pred, seg), tol)
			counts[seg][fr.Verdict]++
			_, nominal := estimate.Gain(hs[seg].Nominal.Output[0], hs[seg].Reference[0])
			o := fr.Outputs[0]
			sr.results = append(sr.results, fr)
			sr.nominalapart = append(sr.nominalapart, o.PhaseCILow != nil && (nominal < *o.PhaseCILow || nominal > *o.PhaseCIHigh))
		}
		out = append(out, sr)
	}
	return counts, out
}

// inside says whether v lies in [lo, hi], all of them there.
func inside(v, lo, hi *float64) bool {
	return v != nil && lo != nil && hi != nil && *v >= *lo && *v <= *hi
}

// TestSweepScenarioRates is the statistics behind the end-to-end check
// of the frequency response (tests/frequency_e2e_test.go): the conveyor's
// sweep (profiles/examples/checks/rig-sweep.yaml: 0.5, 1.5 and 4 Hz, 36 s
// judged at each, over a network whose quiet state dwells 3 s on average)
// simulated 300 times and judged with the monitor's default tolerance,
// 0.1. Per frequency it checks:
//
//   - the 95 % intervals of gain, phase and spread cover the prediction
//     in at least 88 % of the runs (12 batches, each one quiet dwell long:
//     the spread's batches stay a little correlated and its interval
//     under-covers somewhat);
//   - the measured spread over the predicted is 1 within 3 % on average
//     (the fitted offset and sinusoid absorb a little of the slow noise,
//     so the residual spread runs about 1.5 % low at 0.5 Hz; a finite-run
//     effect: 600 runs with the dwell four times as long gave 0.996
//     against 0.984, shrinking as the run's length grows);
//   - a verdict other than agree (differ or inconclusive, with nothing
//     wrong) comes in at most 3 % of the runs;
//   - at 4 Hz the loss-free loop's phase lies outside the measured
//     interval in at least 99 % of the runs.
//
// Measured here, 2026-12-05, seeds 1–300: not agree 3, 3 and 7 times
// (0.5, 1.5, 4 Hz); spread coverage 92–96 %, gain and phase 94–96 %; over
// 1000 further runs (seeds from 5000) not agree 15, 7 and 11 times and
// the spread ratios 0.989, 0.993 and 0.999. So a pass through the three
// frequencies shows something other than agree about 3 % of the time
// with nothing wrong, and the end-to-end test plays the sweep once more
// when its first run does.
//
// The sweep soak's loop (soak-sweep.loop.yaml: 1 and 3 Hz, tolerance 0.15,
// tests/soak_e2e_test.go, TestSoakSweep) is judged the same way, 300
// runs: not agree at most 3 % per frequency. Measured, seeds 9000–9999:
// 7 and 9 inconclusive in 1000 (batch correlation), no differ.
func TestSweepScenarioRates(t *testing.T) {
	if testing.Short() {
		t.Skip("simulates 300 sweeps")
	}
	loop := exampleLoop(t, "checks/rig-sweep.yaml")
	const runs = 300
	counts, res := sweepRates(t, loop, runs, 0.1, 1)
	for seg, f := range loop.Reference.Frequencies {
		var cover [3]int
		apart := 0
		ratio := make([]float64, runs)
		for j, sr := range res {
			fr := sr.results[seg]
			o := fr.Outputs[0]
			for i, in := range []bool{inside(fr.PredictedSpread, fr.SpreadCILow, fr.SpreadCIHigh),
				inside(o.PredictedGain, o.GainCILow, o.GainCIHigh), inside(o.PredictedPhaseDeg, o.PhaseCILow, o.PhaseCIHigh)} {
				if in {
					cover[i]++
				}
			}
			if sr.nominalapart[seg] {
				apart++
			}
			ratio[j] = *fr.Spread / *fr.PredictedSpread
			if fr.Verdict != FrequencyAgree {
				t.Logf("run %d, %g Hz: %s: %s", j, f, fr.Verdict, fr.Reason)
			}
		}
		mean, sd := stat.MeanStdDev(ratio, nil)
		t.Logf("%g Hz: %v; coverage of spread, gain, phase %v of %d; spread measured/predicted %.3f ± %.3f; loss-free phase apart %d",
			f, counts[seg], cover, runs, mean, sd/math.Sqrt(runs), apart)
		for i, name := range []string{"spread", "gain", "phase"} {
			if cover[i] < runs*88/100 {
				t.Errorf("%g Hz: the %s interval covers the prediction in %d of %d runs, want ≥ 88 %%", f, name, cover[i], runs)
			}
		}
		if math.Abs(mean-1) > 0.03 {
			t.Errorf("%g Hz: spread measured/predicted %.3f on average, want within 3 %% of 1", f, mean)
		}
		if n := runs - counts[seg][FrequencyAgree]; n > runs*3/100 {
			t.Errorf("%g Hz: not agree in %d of %d runs, want ≤ 3 %%", f, n, runs)
		}
		if f == 4 && apart < runs*99/100 {
			t.Errorf("4 Hz: the loss-free loop's phase is outside the measured interval in %d of %d runs, want ≥ 99 %%", apart, runs)
		}
	}
	soak := exampleLoop(t, "checks/soak-sweep.loop.yaml")
	counts, _ = sweepRates(t, soak, runs, 0.15, 9000)
	for seg, f := range soak.Reference.Frequencies {
		t.Logf("sweep soak, %g Hz: %v", f, counts[seg])
		if n := runs - counts[seg][FrequencyAgree]; n > runs*3/100 {
			t.Errorf("sweep soak, %g Hz: not agree in %d of %d runs, want ≤ 3 %%", f, n, runs)
		}
	}
}
