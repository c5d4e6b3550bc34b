package report

import (
	"bytes"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"rigwire/estimate"
	"rigwire/estimate/engine"
	"rigwire/profiles"
)

// TestSoakFrequencyFigures: a loop with a sweep reference gets the three
// frequency figures, the measured points of its frequency phases drawn
// over the predicted curves; a loop without one gets none.
func TestSoakFrequencyFigures(t *testing.T) {
	loop, err := profiles.LoadLoop("../../profiles/examples/checks/rig-sweep.yaml")
	if err != nil {
		t.Fatal(err)
	}
	f := func(v float64) *float64 { return &v }
	s := &engine.Summary{Phases: []engine.PhaseResult{
		{Name: "a", Verdict: "pass", Frequency: &engine.FrequencyResult{FrequencyHz: 0.5, Outputs: []engine.FrequencyOutput{{Gain: f(0.96), GainCILow: f(0.94), GainCIHigh: f(0.98), PhaseDeg: f(-38), PhaseCILow: f(-40), PhaseCIHigh: f(-36)}}, Spread: f(0.001), SpreadCILow: f(0.0009), SpreadCIHigh: f(0.0011)}},
		{Name: "b", Verdict: "fail", Frequency: &engine.FrequencyResult{FrequencyHz: 4, Outputs: []engine.FrequencyOutput{{Gain: f(0.2), GainCILow: f(0.19), GainCIHigh: f(0.21), PhaseDeg: f(-90), PhaseCILow: f(-93), PhaseCIHigh: f(-87)}}, Spread: f(0.002), SpreadCILow: f(0.0018), SpreadCIHigh: f(0.0022)}},
	}}
	hs, meas, err := SoakFrequency(loop, s)
	if err != nil {
		t.Fatal(err)
	}
	if len(hs) != 43 || len(meas) != 2 || meas[1].Verdict != "fail" {
		t.Fatalf("%d predicted points, measured %+v", len(hs), meas)
	}
	for i := 1; i < len(hs); i++ {
		if !(hs[i].Frequency >= hs[i-1].Frequency) || math.IsNaN(hs[i].Spread) {
			t.Fatalf("predicted points out of order or NaN at %d", i)
		}
	}
	figs := frequencyFigures(&Data{Frequency: hs, FrequencyMeasured: meas})
	for _, fg := range figs {
		if fg.png == nil {
			t.Fatalf("%s: %s", fg.File, fg.NoData)
		}
		if _, err := png.Decode(bytes.NewReader(fg.png)); err != nil {
			t.Errorf("%s: %v", fg.File, err)
		}
		if dir := os.Getenv("RIGWIRE_KEEP_PLOTS"); dir != "" {
			os.WriteFile(filepath.Join(dir, fg.File), fg.png, 0o644)
		}
	}
	plain, err := profiles.LoadLoop("../../profiles/examples/loops/conveyor.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if hs, meas, err := SoakFrequency(plain, s); hs != nil || meas != nil || err != nil {
		t.Errorf("constant reference: %v %v %v", hs, meas, err)
	}
	if !strings.HasSuffix(FreqGainName, ".png") {
		t.Error(FreqGainName)
	}
}

// TestFrequencyCSVEmptyWhereNone: an output whose reference does not move
// has empty gain and phase fields (null in the JSON), never NaN; an
// unstable loss-free loop leaves its columns empty too.
func TestFrequencyCSVEmptyWhereNone(t *testing.T) {
	h := estimate.Harmonic{Frequency: 2, Reference: []complex128{complex(0, -1), 0},
		Output: []complex128{complex(0.1, -0.5), complex(0.01, 0)}, Error: []complex128{complex(-0.1, -0.5), complex(-0.01, 0)},
		OutputOffset: []float64{1, 0}, ErrorOffset: []float64{0, 0}, Variance: []float64{0.01, 0.02},
		VarianceFirst: make([]complex128, 2), VarianceSecond: make([]complex128, 2), Spread: 0.03, SpreadPeak: 0.03, SecondMoment: 0.16}
	var b strings.Builder
	WriteFrequencyCSV(&b, []estimate.Harmonic{h})
	lines := strings.Split(strings.TrimSpace(b.String()), "\n")
	if len(lines) != 2 || strings.Contains(lines[1], "NaN") {
		t.Fatalf("CSV:\n%s", b.String())
	}
	cols, row := strings.Split(lines[0], ","), strings.Split(lines[1], ",")
	for i, c := range cols {
		empty := row[i] == ""
		wantEmpty := strings.HasPrefix(c, "nominal") || (strings.HasSuffix(c, "_1") && c != "variance_1")
		if empty != wantEmpty {
			t.Errorf("column %s = %q", c, row[i])
		}
	}
	b.Reset()
	if err := WriteFrequencyJSON(&b, 0.01, []estimate.Harmonic{h}); err != nil {
		t.Fatal(err)
	}
	if strings.Contains(b.String(), "NaN") || !strings.Contains(b.String(), `"gain": null`) {
		t.Errorf("JSON:\n%s", b.String())
	}
}
