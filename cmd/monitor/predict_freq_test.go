package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"rigwire/estimate/report"
)

// TestPredictFrequency: --frequency prints one CSV row per frequency with
// the documented columns, --json the same as an object, --plot writes
// the plot; bad frequencies and combinations are usage errors (status 2).
func TestPredictFrequency(t *testing.T) {
	loop := "../../profiles/examples/loops/conveyor.yaml"
	code, out, errOut := runMonitor("predict", loop, "--frequency", "0.1:10:5")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	for _, l := range csvRows(t, out, strings.Join(report.FrequencyColumns(1), ","), 5) {
		f := strings.Split(l, ",")
		if len(f) != len(report.FrequencyColumns(1)) {
			t.Fatalf("row %q: %d fields", l, len(f))
		}
		for i, v := range f {
			if _, err := strconv.ParseFloat(v, 64); err != nil {
				t.Errorf("row %q: column %s: %q is not a number", l, report.FrequencyColumns(1)[i], v)
			}
		}
	}
	code, out, errOut = runMonitor("predict", loop, "--frequency", "0.5,2", "--amplitude", "0.2", "--json")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	var js struct {
		Points []struct {
			FrequencyHz float64 `json:"frequency_hz"`
			Outputs     []struct {
				ReferenceAmplitude float64 `json:"reference_amplitude"`
				Gain               float64 `json:"gain"`
			} `json:"outputs"`
			Spread float64 `json:"spread"`
		} `json:"points"`
	}
	if err := json.Unmarshal([]byte(out), &js); err != nil {
		t.Fatal(err)
	}
	if len(js.Points) != 2 || js.Points[1].FrequencyHz != 2 || js.Points[0].Outputs[0].ReferenceAmplitude != 0.2 || !(js.Points[0].Spread > 0) {
		t.Errorf("JSON: %+v", js)
	}
	plot := filepath.Join(t.TempDir(), "f.svg")
	if code, _, errOut := runMonitor("predict", loop, "--frequency", "0.1:10:20", "--plot", plot); code != 0 {
		t.Fatalf("plot: exit %d: %s", code, errOut)
	}
	if b, err := os.ReadFile(plot); err != nil || !strings.Contains(string(b), "<svg") {
		t.Errorf("plot not written: %v", err)
	}
	if code, _, errOut := runMonitor("predict", "testdata/unstable.yaml", "--frequency", "1"); code != 6 || !strings.Contains(errOut, "no periodic steady state") {
		t.Errorf("unstable loop: exit %d, %q; want 6 and why", code, errOut)
	}
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"--frequency", "25"}, "25 Hz is outside (0, 25)"},
		{[]string{"--frequency", "0"}, "0 Hz is outside"},
		{[]string{"--frequency", "1:0.5:4"}, "TO must be above FROM"},
		{[]string{"--frequency", "0.1:1:1"}, "N must be a whole number in [2, 1000]"},
		{[]string{"--frequency", "x"}, `want a number, got "x"`},
		{[]string{"--frequency", "reference"}, "has no sinusoidal reference"},
		{[]string{"--frequency", "1", "--amplitude", "1,2"}, "--amplitude: want 1 comma-separated numbers"},
		{[]string{"--amplitude", "1"}, "--amplitude: want --frequency with it"},
		{[]string{"--frequency", "1", "--step", "5"}, "want one of them, got 2"},
	} {
		code, _, errOut := runMonitor(append([]string{"predict", loop}, c.args...)...)
		if code != 2 || !strings.Contains(errOut, c.want) {
			t.Errorf("%v: exit %d, %q; want 2 and %q", c.args, code, errOut, c.want)
		}
	}
}

// TestSimulateFrequency: monitor simulate of a loop with a sweep fits
// each frequency's simulated samples as the monitor fits a rig's and
// prints them beside the prediction; the JSON carries them too.
func TestSimulateFrequency(t *testing.T) {
	loop := "../../profiles/examples/checks/rig-sweep.yaml"
	code, out, errOut := runMonitor("simulate", loop, "--periods", "12000", "--runs", "2")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	for _, f := range []string{"at 0.5 Hz", "at 1.5 Hz", "at 4 Hz"} {
		if !strings.Contains(out, f) {
			t.Errorf("no line %q:\n%s", f, out)
		}
	}
	code, out, errOut = runMonitor("simulate", loop, "--periods", "12000", "--runs", "2", "--json")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	var js struct {
		Frequencies []struct {
			FrequencyHz float64 `json:"frequency_hz"`
			Samples     int64   `json:"samples"`
		} `json:"frequency_response"`
	}
	if err := json.Unmarshal([]byte(out), &js); err != nil || len(js.Frequencies) != 3 || js.Frequencies[2].Samples == 0 {
		t.Errorf("JSON: %v %+v", err, js)
	}
}

// TestPredictAlmostSure: a loop that is almost surely but not mean-square
// stable is said to be so, with what it means for a measurement; its JSON
// has the exponent, its interval and the margin.
func TestPredictAlmostSure(t *testing.T) {
	code, out, errOut := runMonitor("predict", "testdata/almost-sure.yaml")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	for _, w := range []string{"NOT mean-square stable", "almost surely stable: top Lyapunov exponent", "does not converge"} {
		if !strings.Contains(out, w) {
			t.Errorf("no %q in:\n%s", w, out)
		}
	}
	_, out, _ = runMonitor("predict", "testdata/almost-sure.yaml", "--json")
	var js struct {
		MeanSquareStable bool `json:"mean_square_stable"`
		AlmostSure       struct {
			Stability  string   `json:"stability"`
			Exponent   *float64 `json:"lyapunov_exponent"`
			High       *float64 `json:"lyapunov_ci_high"`
			LossMargin *float64 `json:"loss_margin"`
		} `json:"almost_sure"`
	}
	if err := json.Unmarshal([]byte(out), &js); err != nil {
		t.Fatal(err)
	}
	a := js.AlmostSure
	if js.MeanSquareStable || a.Stability != "stable" || a.Exponent == nil || !(*a.High < 0) || a.LossMargin == nil {
		t.Errorf("JSON: %+v", js)
	}
}

// TestPredictGain: --gain prints one CSV row per grid point with the
// documented columns, the best point and the stable intervals on stderr,
// and a plot; two --gain give a 2-D map; bad specs are usage errors.
func TestPredictGain(t *testing.T) {
	loop := "../../profiles/examples/loops/conveyor.yaml"
	code, out, errOut := runMonitor("predict", loop, "--gain", "scale=0.5:30:12")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	csvRows(t, out, "scale,mean_square_stable,stability,spectral_radius,spectral_radius_error,second_moment,loss_free_stable", 12)
	for _, w := range []string{"best point on the grid: scale = ", "mean-square stable for scale from", "loss-free, delay-free loop is stable for scale"} {
		if !strings.Contains(errOut, w) {
			t.Errorf("no %q in:\n%s", w, errOut)
		}
	}
	plot := filepath.Join(t.TempDir(), "g.png")
	code, out, errOut = runMonitor("predict", loop, "--gain", "d[0][0]=0.2:2:4", "--gain", "c[0][0]=1:5:3", "--plot", plot)
	if code != 0 {
		t.Fatalf("2-D: exit %d: %s", code, errOut)
	}
	csvRows(t, out, "d[0][0],c[0][0],mean_square_stable,stability,spectral_radius,spectral_radius_error,second_moment,loss_free_stable", 12)
	if _, err := os.Stat(plot); err != nil {
		t.Errorf("plot: %v", err)
	}
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"--gain", "x=0:1:3"}, `want scale, a controller entry`},
		{[]string{"--gain", "a[1][0]=0:1:3"}, "the controller's a is 1×1"},
		{[]string{"--gain", "scale=1:0:3"}, "want STOP above START"},
		{[]string{"--gain", "scale=0:1:3", "--gain", "scale=0:2:3"}, "scale given twice"},
		{[]string{"--gain", "scale=0:1:3", "--gain", "d[0][0]=0:1:3", "--gain", "c[0][0]=0:1:3"}, "want one or two, got 3"},
		{[]string{"--gain", "scale=0:1:3", "--step", "4"}, "want one of them, got 2"},
	} {
		code, _, errOut := runMonitor(append([]string{"predict", loop}, c.args...)...)
		if code != 2 || !strings.Contains(errOut, c.want) {
			t.Errorf("%v: exit %d, %q; want 2 and %q", c.args, code, errOut, c.want)
		}
	}
}

// csvRows checks a command's CSV output for the header and n rows, and
// returns the rows.
func csvRows(t *testing.T, out, header string, n int) []string {
	t.Helper()
	lines := strings.Split(strings.TrimSpace(out), "\n")
	if len(lines) != n+1 || lines[0] != header {
		t.Fatalf("CSV: %d lines, header %q; want %d rows under %q", len(lines), lines[0], n, header)
	}
	return lines[1:]
}
