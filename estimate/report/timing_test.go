package report

import (
	"bytes"
	"encoding/json"
	"math"
	"strings"
	"testing"

	"rigwire/estimate"
	"rigwire/profiles"
)

// TestPredictionTiming: monitor predict's text and JSON carry the timing
// policy (estimate/model.md §13) — the horizons, the command ages, and for
// a Monte Carlo prediction the mark, its standard error and a null ρ.
func TestPredictionTiming(t *testing.T) {
	loop, err := profiles.ParseLoop([]byte("period: 20ms\nplant: {a: [[-2]], b: [[3]], c: [[1]]}\ncontroller: {d: [[0.5]]}\nprofile: {name: wan}\ntiming: {sample_horizon: 2, command_horizon: 3}\n"), "shuttle.yaml", "")
	if err != nil {
		t.Fatal(err)
	}
	exact := &estimate.Prediction{MeanSquareStable: true, Stability: estimate.StabilityStable, SpectralRadius: 0.9, RadiusError: 1e-10,
		LossMargin: math.NaN(), Error: &estimate.ErrorStats{Mean: []float64{0}, SecondMoment: 0.001, Std: 0.03},
		Timing: &estimate.TimingReport{SampleHorizon: 1, CommandHorizon: 3, Method: estimate.MethodExact, CommandAge: []float64{0.1, 0.6, 0.25}, Stale: 0.05}}
	mc := &estimate.Prediction{MeanSquareStable: true, Stability: estimate.StabilityStable, SpectralRadius: math.NaN(), RadiusError: math.NaN(),
		LossMargin: math.NaN(), Error: &estimate.ErrorStats{Mean: []float64{0}, SecondMoment: 0.001, Std: 0.03},
		Timing: &estimate.TimingReport{SampleHorizon: 2, CommandHorizon: 3, Method: estimate.MethodMonteCarlo, Reason: "a sample horizon of 2 periods",
			CommandAge: []float64{0.1, 0.6, 0.25}, Stale: 0.05, SecondMomentStdErr: 2e-5}}
	cases := []struct {
		name     string
		pr       *estimate.Prediction
		text     []string
		jsonKeys map[string]any
	}{
		{"exact", exact, []string{
			"timing    the controller uses samples younger than 1 period(s), the actuator applies commands younger than 3 period(s), newest first",
			"command   the actuator ends a period on a command 0 periods 10.0 %, 1 period 60.0 %, 2 periods 25.0 % old; holds a stale one 5.0 %",
			"mean-square stable (spectral radius 0.9 ± 1e-10, below 1)",
		}, map[string]any{"method": "exact", "command_horizon_periods": 3.0, "command_stale_share": 0.05}},
		{"monte carlo", mc, []string{
			"method    MONTE CARLO from the same rules, not the exact jump linear system: a sample horizon of 2 periods",
			"a Monte Carlo estimate: E[eᵀe] ± 2e-05 (standard error), not the exact moments",
			"mean-square stable by simulation (not certified: a sample horizon of 2 periods)",
		}, map[string]any{"method": "monte_carlo", "sample_horizon_periods": 2.0, "error_second_moment_standard_error": 2e-5}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			var b bytes.Buffer
			WritePrediction(&b, "shuttle.yaml", loop, tc.pr)
			for _, want := range tc.text {
				if !strings.Contains(b.String(), want) {
					t.Errorf("text lacks %q:\n%s", want, b.String())
				}
			}
			var j bytes.Buffer
			if err := WritePredictionJSON(&j, loop, tc.pr); err != nil {
				t.Fatal(err)
			}
			var out map[string]any
			if err := json.Unmarshal(j.Bytes(), &out); err != nil {
				t.Fatalf("%v\n%s", err, j.String())
			}
			timing, _ := out["timing"].(map[string]any)
			for k, v := range tc.jsonKeys {
				if timing[k] != v {
					t.Errorf("timing.%s = %v, want %v", k, timing[k], v)
				}
			}
			if ages, _ := timing["command_age_shares"].([]any); len(ages) != 3 {
				t.Errorf("command_age_shares %v", timing["command_age_shares"])
			}
			if tc.pr.Timing.Method == estimate.MethodMonteCarlo && out["spectral_radius"] != nil {
				t.Errorf("spectral_radius %v, want null for a Monte Carlo prediction", out["spectral_radius"])
			}
		})
	}
}
