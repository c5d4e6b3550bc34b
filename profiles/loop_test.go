package profiles

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"rigwire/profiles/laws"
	"rigwire/profiles/yamlpos"
	"strings"
	"testing"
)

// Each bad loop file and the one message it must produce (the pattern of
// Prometheus's config_test.go expectedErrors). The messages follow the
// project's rule: file:line: key: what was expected, got what.
var loopErrors = map[string]string{
	"actuator-policy.bad.yaml":        `:4: actuator.on_loss: want hold or zero, got "brake"`,
	"asymmetric-noise.bad.yaml":       `:6: plant.process_noise: want a symmetric matrix, got [0][1] = 0.5 but [1][0] = 0.2`,
	"compute-delay.bad.yaml":          `:4: compute_delay: want a duration below the period (10ms), got "10ms"`,
	"command-decode-no-seq.bad.yaml":  `:4: command_decode.sequence: missing (required)`,
	"compute-timing-bad.bad.yaml":     `:4: compute_delay: testdata/loops/bad.timing.yaml:1: compute_delay: missing scale for kind gamma`,
	"compute-timing-missing.bad.yaml": `:4: compute_delay: reading rig timing file: open testdata/loops/no-such.timing.yaml: no such file or directory`,
	"compute-law-late.bad.yaml":       `:4: compute_delay: want a law whose lowest value is below the period (10ms), got uniform 12ms…14ms, lowest 12ms`,
	"compute-law-shape.bad.yaml":      `:6: compute_delay.shape: want a number in [0.1, 10000], got "-2"`,
	"controller-b.bad.yaml":           `:5: controller.b: want 2×1, got 1×1`,
	"controller-partial.bad.yaml":     `:3: controller: want a, b and c together (a dynamic controller), got no b`,
	"decode-format.bad.yaml":          `:5: decode.format: want text, binary or json, got "xml"`,
	"decode-json-pointer.bad.yaml":    `:5: decode.outputs[0].pointer: JSON pointer "/y~2": ~ must be followed by 0 or 1 (~0 is ~, ~1 is /)`,
	"decode-outputs.bad.yaml":         `:7: decode.outputs: want 1 fields (one per output of plant.c), got 2`,
	"decode-sequence-float.bad.yaml":  `:8: decode.sequence.type: want an integer type for the sequence counter, got "float32"`,
	"decode-type.bad.yaml":            `:7: decode.outputs[0].type: want one of float32, float64, int16, int32, int64, uint16, uint32, got "float16"`,
	"indefinite-noise.bad.yaml":       `:6: plant.process_noise: want a covariance (positive semidefinite), got an eigenvalue -1`,
	"missing-profile.bad.yaml":        `:1: profile: missing (required)`,
	"negative-noise.bad.yaml":         `:6: plant.process_noise: want a covariance (positive semidefinite), got a negative variance [1][1] = -0.04`,
	"non-numeric.bad.yaml":            `:3: plant.a[0][1]: want a number, got "one"`,
	"period-negative.bad.yaml":        `:1: period: want a duration > 0, got "-0.01"`,
	"period-zero.bad.yaml":            `:1: period: want a duration > 0, got "0ms"`,
	"profile-file-missing.bad.yaml":   `:4: profile: reading profile: open testdata/loops/no-such-profile.yaml: no such file or directory`,
	"profile-inline-bad.bad.yaml":     `:5: profile.sensor_to_controller.loss: want a number in [0, 1], got "2"`,
	"setpoint-length.bad.yaml":        `:4: setpoint: want 1 numbers (one per output of plant.c), got 2`,
	"shape-b.bad.yaml":                `:4: plant.b: want 2 rows (plant.a is 2×2), got 3×1`,
	"shape-c.bad.yaml":                `:5: plant.c: want 2 columns (plant.a is 2×2), got 1×3`,
	"shape-d.bad.yaml":                `:10: controller.d: want 1×1, got 1×2`,
	"square-a.bad.yaml":               `:2: plant.a: want a square matrix, got 1×2`,
	"unknown-key.bad.yaml":            `:3: unknown key "controler" (want one of: period, plant, controller, setpoint, compute_delay, profile, actuator, timing, decode, command_decode, trip, reference)`,
	"unknown-plant-key.bad.yaml":      `:6: plant: unknown key "noise" (want one of: a, b, c, process_noise, sensor_noise, transfer_function, input_noise, discrete)`,
	"timing-fraction.bad.yaml":        `:5: timing.command_horizon: want a whole number of periods from 1 to 16, got "2.5"`,
	"timing-zero.bad.yaml":            `:5: timing.command_horizon: want a whole number of periods from 1 to 16, got "0"`,
	"timing-too-long.bad.yaml":        `:5: timing.command_horizon: want a whole number of periods from 1 to 16, got "17"`,
	"timing-order.bad.yaml":           `:7: timing.command_horizon: want a command horizon of at least the sample horizon (3 periods): a command is never younger than the sample it answers, got 2`,
	"timing-text.bad.yaml":            `:5: timing.sample_horizon: want a whole number of periods from 1 to 16, got "two"`,
	"timing-unknown.bad.yaml":         `:5: timing: unknown key "command_horizons" (want one of: sample_horizon, command_horizon)`,
	"timing-zero-actuator.bad.yaml":   `:6: timing.command_horizon: want 1 with actuator.on_loss: zero (that actuator drops every command at the end of its own period), got 3`,
	"timing-sample-only.bad.yaml":     `:5: timing: want a command horizon of at least the sample horizon (3 periods): a command is never younger than the sample it answers, got 1`,
}

func TestLoadLoopBad(t *testing.T) {
	files, err := filepath.Glob("testdata/loops/*.bad.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if len(files) != len(loopErrors) {
		t.Errorf("%d bad loop files, %d expected messages: keep them paired", len(files), len(loopErrors))
	}
	for _, f := range files {
		name := filepath.Base(f)
		t.Run(name, func(t *testing.T) {
			want, ok := loopErrors[name]
			if !ok {
				t.Fatalf("no expected message for %s", name)
			}
			_, err := LoadLoop(f)
			if err == nil {
				t.Fatalf("loaded, want error %q", want)
			}
			if got := err.Error(); got != f+want {
				t.Errorf("got  %s\nwant %s", got, f+want)
			}
			var pe *yamlpos.Error
			if !errors.As(err, &pe) {
				t.Errorf("error is not a positioned *Error: %T", err)
			}
		})
	}
}

func TestLoadLoopGood(t *testing.T) {
	const tol = 1e-15 // values are read exactly
	l, err := LoadLoop("testdata/loops/good.yaml")
	if err != nil {
		t.Fatal(err)
	}
	n, m, p, nc := l.Dims()
	if n != 2 || m != 1 || p != 1 || nc != 1 {
		t.Errorf("dims n, m, p, nc = %d, %d, %d, %d; want 2, 1, 1, 1", n, m, p, nc)
	}
	checks := []struct {
		name      string
		got, want float64
	}{
		{"period", l.Period, 0.01},
		{"compute_delay", l.ComputeFloor(), 0.0005},
		{"plant.a[1][1]", l.Plant.A.At(1, 1), -2},
		{"plant.process_noise[1][1]", l.Plant.W.At(1, 1), 0.04},
		{"plant.sensor_noise", l.Plant.V.At(0, 0), 1e-6},
		{"controller.d", l.Controller.D.At(0, 0), 12},
		{"setpoint", l.Setpoint[0], 0.5},
		{"profile loss", l.Profile.SensorToController.States[0].Loss, 0.01},
		{"profile delay", l.Profile.SensorToController.States[0].Delay.Mean(), 0.001},
	}
	for _, c := range checks {
		if math.Abs(c.got-c.want) > tol {
			t.Errorf("%s = %g, want %g", c.name, c.got, c.want)
		}
	}
	if l.Actuator.OnLoss != ZeroUnlessFresh {
		t.Errorf("actuator policy %v, want zero", l.Actuator.OnLoss)
	}
	if l.Decode.Format != "text" || l.Decode.Separator != ";" || l.Decode.Outputs[0].Field != 2 || l.Decode.Sequence.Field != 0 {
		t.Errorf("decode %+v", l.Decode)
	}

	l, err = LoadLoop("testdata/loops/profile-file.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if l.ProfileFile != filepath.Join("testdata", "loops", "clean-profile.yaml") || l.Profile.Name != "clean" {
		t.Errorf("profile file %q name %q", l.ProfileFile, l.Profile.Name)
	}
	if l.Controller.A != nil || l.Plant.W.At(0, 0) != 0 || l.Setpoint[0] != 0 || l.Actuator.OnLoss != HoldLast {
		t.Errorf("defaults not applied: %+v", l)
	}
	out := l.Decode.Outputs[0]
	if l.Decode.Format != "binary" || out.Offset != 8 || out.Type != "float64" || out.Order != "big" || out.Size() != 8 ||
		l.Decode.Sequence.Order != "little" || l.Decode.Sequence.Size() != 4 {
		t.Errorf("decode %+v", l.Decode)
	}
}

// FuzzParseLoop checks that no input makes the loader panic and that a
// loop it accepts has consistent shapes.
func FuzzParseLoop(f *testing.F) {
	files, _ := filepath.Glob("testdata/loops/*.yaml")
	for _, name := range files {
		data, err := os.ReadFile(name)
		if err == nil {
			f.Add(data)
		}
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		l, err := ParseLoop(data, "fuzz.yaml", "testdata/loops")
		if err != nil {
			if !strings.HasPrefix(err.Error(), "fuzz.yaml") && !strings.Contains(err.Error(), "profile") {
				t.Errorf("error without the file name: %v", err)
			}
			return
		}
		n, m, p, nc := l.Dims()
		if r, c := l.Controller.D.Dims(); r != m || c != p {
			t.Errorf("controller.d %d×%d for m=%d p=%d", r, c, m, p)
		}
		if r, c := l.Plant.W.Dims(); r != n || c != n {
			t.Errorf("W %d×%d for n=%d", r, c, n)
		}
		if nc > 0 {
			if r, c := l.Controller.B.Dims(); r != nc || c != p {
				t.Errorf("controller.b %d×%d", r, c)
			}
		}
		if !(l.Period > 0) || l.ComputeFloor() < 0 || l.ComputeFloor() >= l.Period || l.Profile == nil {
			t.Errorf("period %g compute delay %g", l.Period, l.ComputeFloor())
		}
	})
}

// TestLoopTiming: the timing section's horizons, and the defaults of a
// loop file without it (estimate/model.md §13).
func TestLoopTiming(t *testing.T) {
	const base = "period: 10ms\nplant: {a: [[-1]], b: [[1]], c: [[1]]}\ncontroller: {d: [[1]]}\nprofile: {name: x}\n"
	cases := []struct {
		name, extra string
		ns, na      int
	}{
		{"absent", "", 1, 1},
		{"command only", "timing: {command_horizon: 4}\n", 1, 4},
		{"both", "timing: {sample_horizon: 2, command_horizon: 5}\n", 2, 5},
		{"empty mapping", "timing: {}\n", 1, 1},
		{"the largest", "timing: {sample_horizon: 16, command_horizon: 16}\n", 16, 16},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			l, err := ParseLoop([]byte(base+tc.extra), "loop.yaml", "")
			if err != nil {
				t.Fatal(err)
			}
			if ns, na := l.Horizons(); ns != tc.ns || na != tc.na {
				t.Errorf("horizons %d, %d; want %d, %d", ns, na, tc.ns, tc.na)
			}
		})
	}
}

// TestLoadLoopComputeLaw: compute_delay takes any delay law of the
// profile format; the loop keeps the law, its floor (lowest value) and
// mean, and a duration stays a constant.
func TestLoadLoopComputeLaw(t *testing.T) {
	l, err := LoadLoop("testdata/loops/compute-law.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if l.ComputeConstant() {
		t.Errorf("a gamma compute law taken as a constant")
	}
	if got := l.ComputeFloor(); got != 0.0003 {
		t.Errorf("floor %g, want the shift 0.3ms", got)
	}
	if got, want := l.ComputeMean(), 0.0003+4*0.0005; math.Abs(got-want) > 1e-15 {
		t.Errorf("mean %g, want %g", got, want)
	}
	// The same law from a rig timing file the loop names.
	f, err := LoadLoop("testdata/loops/compute-timing-file.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if f.ComputeFloor() != l.ComputeFloor() || f.ComputeMean() != l.ComputeMean() || laws.Describe(f.Compute) != laws.Describe(l.Compute) {
		t.Errorf("from the timing file: %s, want %s", laws.Describe(f.Compute), laws.Describe(l.Compute))
	}
	g, err := LoadLoop("testdata/loops/good.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if !g.ComputeConstant() || g.ComputeFloor() != 0.0005 || g.ComputeMean() != 0.0005 {
		t.Errorf("good.yaml: compute %v: want the constant 0.5ms", g.Compute)
	}
}
