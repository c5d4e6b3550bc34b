package main

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func runMonitor(args ...string) (code int, stdout, stderr string) {
	var o, e bytes.Buffer
	code = dispatch(args, &o, &e)
	return code, o.String(), e.String()
}

// TestPredictJSONKeys checks the keys of predict --json that scripts
// rely on, and nulls when the loop is not stable; exit 0 either way
// (without --strict).
func TestPredictJSONKeys(t *testing.T) {
	cases := []struct {
		name   string
		file   string
		stable bool
	}{
		{"conveyor example", "../../profiles/examples/loops/conveyor.yaml", true},
		{"pump example", "../../profiles/examples/loops/pump.yaml", true},
		{"pick arm example", "../../profiles/examples/loops/pick-arm.yaml", true},
		{"unstable loop", "testdata/unstable.yaml", false},
	}
	keys := []string{"mean_square_stable", "stability", "spectral_radius", "spectral_radius_error", "error_mean", "error_second_moment", "error_std", "loss_margin"}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			code, out, errOut := runMonitor("predict", tc.file, "--json")
			if code != 0 {
				t.Fatalf("exit %d: %s", code, errOut)
			}
			var m map[string]any
			if err := json.Unmarshal([]byte(out), &m); err != nil {
				t.Fatalf("not JSON: %v\n%s", err, out)
			}
			for _, k := range keys {
				if _, ok := m[k]; !ok {
					t.Errorf("key %q missing", k)
				}
			}
			if m["mean_square_stable"] != tc.stable {
				t.Errorf("mean_square_stable = %v, want %v", m["mean_square_stable"], tc.stable)
			}
			if want := map[bool]string{true: "stable", false: "unstable"}[tc.stable]; m["stability"] != want {
				t.Errorf("stability = %v, want %q", m["stability"], want)
			}
			if !tc.stable {
				for _, k := range []string{"error_mean", "error_second_moment", "error_std"} {
					if m[k] != nil {
						t.Errorf("%s = %v, want null for an unstable loop", k, m[k])
					}
				}
				if m["loss_margin"] != 0.0 {
					t.Errorf("loss_margin = %v, want 0", m["loss_margin"])
				}
			}
		})
	}
}

func TestPredictBadInput(t *testing.T) {
	cases := []struct {
		name string
		args []string
		code int
		want string // substring of stderr
	}{
		{"bad loop file", []string{"predict", "../../profiles/testdata/loops/shape-d.bad.yaml"}, 2,
			"shape-d.bad.yaml:10: controller.d: want 1×1, got 1×2"},
		{"missing file", []string{"predict", "testdata/none.yaml"}, 2, "reading loop file: open testdata/none.yaml"},
		{"strict with vary", []string{"predict", "../../profiles/examples/loops/conveyor.yaml", "--strict", "--vary", "loss=0:0.1:0.1"}, 2, "--strict: only with the single prediction"},
		{"no file", []string{"predict", "--json"}, 2, "want one loop file, got 0 arguments"},
		{"bad vary", []string{"predict", "../../profiles/examples/loops/conveyor.yaml", "--vary", "jitter=0:1:0.1"}, 2, `unknown parameter "jitter"`},
		{"vary step", []string{"predict", "../../profiles/examples/loops/conveyor.yaml", "--vary", "loss=0:1:0"}, 2, "step must be > 0"},
		{"vary loss range", []string{"predict", "../../profiles/examples/loops/conveyor.yaml", "--vary", "loss=0:1.5:0.1"}, 2, "loss must lie in [0, 1]"},
		{"vary misread as start:step:stop", []string{"predict", "../../profiles/examples/loops/conveyor.yaml", "--vary", "loss=0:0.01:0.3"}, 2, "step 0.3 is larger than the range 0 to 0.01; the order is START:STOP:STEP"},
		{"plot ext", []string{"predict", "../../profiles/examples/loops/conveyor.yaml", "--vary", "loss=0:0.1:0.1", "--plot", "x.gif"}, 2, "want a file ending in .svg, .png or .pdf"},
		{"plot alone", []string{"predict", "../../profiles/examples/loops/conveyor.yaml", "--plot", "x.svg"}, 2, "--plot: want --vary, --step, --frequency or --gain"},
		{"step-to", []string{"predict", "../../profiles/examples/loops/conveyor.yaml", "--step", "3", "--step-to", "1,2"}, 2, "--step-to: want 1 comma-separated numbers"},
		{"unknown flag", []string{"predict", "../../profiles/examples/loops/conveyor.yaml", "--jsn"}, 2, "flag provided but not defined: -jsn"},
		{"simulate warmup", []string{"simulate", "../../profiles/examples/loops/conveyor.yaml", "--periods", "10", "--warmup", "10"}, 2, "--warmup: want fewer than --periods"},
		{"unknown command", []string{"forecast"}, 2, `unknown command "forecast"`},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			code, _, errOut := runMonitor(tc.args...)
			if code != tc.code || !strings.Contains(errOut, tc.want) {
				t.Errorf("exit %d, stderr %q; want exit %d and %q", code, errOut, tc.code, tc.want)
			}
		})
	}
}

func TestPredictVaryAndStep(t *testing.T) {
	dir := t.TempDir()
	plot := filepath.Join(dir, "vary.svg")
	code, out, errOut := runMonitor("predict", "testdata/../../../profiles/examples/loops/conveyor.yaml", "--vary", "loss=0:0.9:0.1", "--plot", plot)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	lines := strings.Split(strings.TrimSpace(out), "\n")
	if lines[0] != "loss,error_second_moment,spectral_radius,mean_square_stable,stability" || len(lines) != 11 {
		t.Errorf("CSV header %q, %d lines", lines[0], len(lines))
	}
	for _, row := range lines[1:] {
		f := strings.Split(row, ",")
		if len(f) != 5 || (f[3] == "true") != (f[4] == "stable") {
			t.Errorf("row %q: the stability column disagrees with mean_square_stable", row)
		}
	}
	if !strings.Contains(errOut, "stability is lost at loss =") {
		t.Errorf("no boundary reported: %q", errOut)
	}
	if st, err := os.Stat(plot); err != nil || st.Size() == 0 {
		t.Errorf("plot not written: %v", err)
	}
	code, out, errOut = runMonitor("predict", "../../profiles/examples/loops/pump.yaml", "--step", "20", "--plot", filepath.Join(dir, "step.png"))
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	lines = strings.Split(strings.TrimSpace(out), "\n")
	if lines[0] != "k,time_seconds,error_mean_0,error_std_0,error_second_moment" || len(lines) != 22 {
		t.Errorf("step CSV header %q, %d lines", lines[0], len(lines))
	}
	// From rest the first error is the setpoint itself (2 bar) with the
	// sensor noise's std (0.02).
	if !strings.HasPrefix(lines[1], "0,0,2,0.02,") {
		t.Errorf("first step row %q, want 0,0,2,0.02,…", lines[1])
	}
}

func TestSimulateCommand(t *testing.T) {
	paths := filepath.Join(t.TempDir(), "paths.csv")
	code, out, errOut := runMonitor("simulate", "../../profiles/examples/loops/conveyor.yaml", "--periods", "2000", "--runs", "4", "--seed", "3", "--paths", paths)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	if !strings.Contains(out, "E[eᵀe]") || !strings.Contains(out, "predicted") {
		t.Errorf("summary: %s", out)
	}
	data, err := os.ReadFile(paths)
	if err != nil {
		t.Fatal(err)
	}
	if n := strings.Count(string(data), "\n"); n != 2001 {
		t.Errorf("paths CSV has %d lines, want 2001", n)
	}
}
