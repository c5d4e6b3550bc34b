package profiles_test

import (
	"errors"
	"flag"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"gopkg.in/yaml.v3"

	"rigwire/profiles"
	"rigwire/profiles/laws"
	"rigwire/profiles/markov"
	"rigwire/profiles/yamlpos"
)

// expectedErrors pairs each testdata/*.bad.yaml with the one message it
// must produce (the pattern of Prometheus config_test.go).
var expectedErrors = []struct {
	file, want string
}{
	{"both-loss-and-states.bad.yaml", "testdata/both-loss-and-states.bad.yaml:2: sensor_to_controller: want either states or loss/delay, got both (loss and states)"},
	{"chain-split.bad.yaml", "testdata/chain-split.bad.yaml:3: sensor_to_controller.states: state \"c\" cannot be reached from state \"a\"; want every state reachable from every other"},
	{"constant-shift.bad.yaml", "testdata/constant-shift.bad.yaml:2: sensor_to_controller.delay: kind constant takes no shift"},
	{"direction-list.bad.yaml", "testdata/direction-list.bad.yaml:1: sensor_to_controller: want a mapping, got a sequence"},
	{"duplicate-state.bad.yaml", "testdata/duplicate-state.bad.yaml:4: sensor_to_controller.states[1].name: state name \"a\" used twice"},
	{"duration-with-space.bad.yaml", "testdata/duration-with-space.bad.yaml:2: controller_to_actuator.delay.value: want a duration in [0s, 1h0m0s], got \"3 ms\""},
	{"empirical-both.bad.yaml", "testdata/empirical-both.bad.yaml:2: sensor_to_controller.delay.file: want samples or file, got both"},
	{"empirical-empty.bad.yaml", "testdata/empirical-empty.bad.yaml:2: sensor_to_controller.delay.samples: want at least one delay, got none"},
	{"empirical-file-bad-line.bad.yaml", "testdata/empirical-file-bad-line.bad.yaml:2: sensor_to_controller.delay.file: trace-bad.txt:3: want a delay (seconds, or a duration such as \"3ms\"), got \"fast\""},
	{"empirical-file-missing.bad.yaml", "testdata/empirical-file-missing.bad.yaml:2: sensor_to_controller.delay.file: cannot open \"no-such-trace.txt\": no such file or directory"},
	{"empirical-negative-sample.bad.yaml", "testdata/empirical-negative-sample.bad.yaml:2: sensor_to_controller.delay.samples[2]: want a duration in [0s, 1h0m0s], got \"-3ms\""},
	{"empirical-neither.bad.yaml", "testdata/empirical-neither.bad.yaml:2: sensor_to_controller.delay: missing samples or file for kind empirical"},
	{"empty.bad.yaml", "testdata/empty.bad.yaml: empty document"},
	{"gamma-shape-zero.bad.yaml", "testdata/gamma-shape-zero.bad.yaml:2: controller_to_actuator.delay.shape: want a number in [0.1, 10000], got \"0\""},
	{"key-of-other-kind.bad.yaml", "testdata/key-of-other-kind.bad.yaml:2: sensor_to_controller.delay: unknown key \"sigma\" for kind normal (want one of: kind, mean, std, shift)"},
	{"lognormal-missing-sigma.bad.yaml", "testdata/lognormal-missing-sigma.bad.yaml:2: controller_to_actuator.delay: missing sigma for kind lognormal"},
	{"loss-above-one.bad.yaml", "testdata/loss-above-one.bad.yaml:2: sensor_to_controller.loss: want a number in [0, 1], got \"1.5\""},
	{"loss-not-number.bad.yaml", "testdata/loss-not-number.bad.yaml:2: sensor_to_controller.loss: want a number in [0, 1], got \"high\""},
	{"mean-dwell-missing.bad.yaml", "testdata/mean-dwell-missing.bad.yaml:4: sensor_to_controller.states[1]: missing mean_dwell (a duration > 0)"},
	{"mean-dwell-zero.bad.yaml", "testdata/mean-dwell-zero.bad.yaml:3: sensor_to_controller.states[0].mean_dwell: want a duration in [1µs, 240h0m0s], got \"0s\""},
	{"missing-kind.bad.yaml", "testdata/missing-kind.bad.yaml:2: sensor_to_controller.delay: missing kind (one of constant, empirical, exponential, gamma, lognormal, mixture, normal, pareto, uniform, weibull)"},
	{"mixture-part-bad.bad.yaml", "testdata/mixture-part-bad.bad.yaml:6: sensor_to_controller.delay.parts[1].scale: want a duration > 0 and ≤ 1h0m0s, got \"-2ms\""},
	{"mixture-part-no-weight.bad.yaml", "testdata/mixture-part-no-weight.bad.yaml:6: sensor_to_controller.delay.parts[1]: missing weight (a number ≥ 0)"},
	{"mixture-weights-zero.bad.yaml", "testdata/mixture-weights-zero.bad.yaml:5: sensor_to_controller.delay.parts: want weights ≥ 0, not all 0"},
	{"name-mapping.bad.yaml", "testdata/name-mapping.bad.yaml:1: name: want a string, got a mapping"},
	{"negative-shift.bad.yaml", "testdata/negative-shift.bad.yaml:2: controller_to_actuator.delay.shift: want a duration in [0s, 1h0m0s], got \"-1ms\""},
	{"next-self.bad.yaml", "testdata/next-self.bad.yaml:3: sensor_to_controller.states[0].next.a: a state cannot jump to itself"},
	{"next-unknown-state.bad.yaml", "testdata/next-unknown-state.bad.yaml:3: sensor_to_controller.states[0].next: unknown key \"fog\" (want one of: clear, shadow, blocked)"},
	{"next-weight-negative.bad.yaml", "testdata/next-weight-negative.bad.yaml:3: sensor_to_controller.states[0].next.c: want a number ≥ 0, got \"-2\""},
	{"next-weights-zero.bad.yaml", "testdata/next-weights-zero.bad.yaml:3: sensor_to_controller.states[0].next: want weights ≥ 0, not all 0"},
	{"normal-std-zero.bad.yaml", "testdata/normal-std-zero.bad.yaml:2: controller_to_actuator.delay.std: want a duration > 0 and ≤ 1h0m0s, got \"0\""},
	{"pareto-shift.bad.yaml", "testdata/pareto-shift.bad.yaml:2: sensor_to_controller.delay: kind pareto takes no shift"},
	{"seed-negative.bad.yaml", "testdata/seed-negative.bad.yaml:1: seed: want a whole number ≥ 0, got \"-4\""},
	{"sigma-negative.bad.yaml", "testdata/sigma-negative.bad.yaml:10: controller_to_actuator.states[1].delay.sigma: want a number > 0, got \"-1\""},
	{"single-state-next.bad.yaml", "testdata/single-state-next.bad.yaml:3: sensor_to_controller.states[0].next: a single state has no next"},
	{"states-empty.bad.yaml", "testdata/states-empty.bad.yaml:2: sensor_to_controller.states: want at least one state, got none"},
	{"syntax.bad.yaml", "testdata/syntax.bad.yaml:2: found a tab character that violates indentation"},
	{"three-states-no-next.bad.yaml", "testdata/three-states-no-next.bad.yaml:5: sensor_to_controller.states[2]: missing next (with more than two states each needs next: {state: weight, …})"},
	{"uniform-min-above-max.bad.yaml", "testdata/uniform-min-above-max.bad.yaml:2: controller_to_actuator.delay.max: want a duration ≥ min (8ms), got \"2ms\""},
	{"unknown-key.bad.yaml", "testdata/unknown-key.bad.yaml:4: sensor_to_controller: unknown key \"lossy\" (want one of: loss, delay, states, trace)"},
	{"unknown-kind.bad.yaml", "testdata/unknown-kind.bad.yaml:2: sensor_to_controller.delay.kind: unknown kind \"cauchy\" (want one of constant, empirical, exponential, gamma, lognormal, mixture, normal, pareto, uniform, weibull)"},
	{"unknown-top-key.bad.yaml", "testdata/unknown-top-key.bad.yaml:2: unknown key \"sensor_to_contoller\" (want one of: name, seed, sensor_to_controller, controller_to_actuator)"},
}

func TestBadProfiles(t *testing.T) {
	files, err := filepath.Glob("testdata/*.bad.yaml")
	if err != nil {
		t.Fatal(err)
	}
	listed := map[string]bool{}
	for _, tt := range expectedErrors {
		listed[tt.file] = true
		t.Run(tt.file, func(t *testing.T) {
			p, err := profiles.Load(filepath.Join("testdata", tt.file))
			if err == nil {
				t.Fatalf("loaded %+v, want error %q", p, tt.want)
			}
			if err.Error() != tt.want {
				t.Errorf("got  %q\nwant %q", err, tt.want)
			}
			if strings.Count(err.Error(), "testdata/") != 1 {
				t.Errorf("want one positioned error, got %q", err)
			}
			var pe *yamlpos.Error
			if !errors.As(err, &pe) {
				t.Errorf("error %T is not a *yamlpos.Error", err)
			}
		})
	}
	for _, f := range files {
		if !listed[filepath.Base(f)] {
			t.Errorf("%s has no expected error", f)
		}
	}
}

// longDelayProfiles are the shipped profiles of loops controlled from far
// away, with the period of the loop that uses each.
var longDelayProfiles = map[string]float64{"wide-area.yaml": 0.02}

// TestShippedProfiles loads every profile shipped in this directory and
// checks what their header comments promise: a header, a name, valid
// laws, and delays that mostly fit a 10 ms control period.
func TestShippedProfiles(t *testing.T) {
	const period = 0.01
	files, err := filepath.Glob("examples/profiles/*.yaml")
	if err != nil || len(files) < 4 {
		t.Fatalf("shipped profiles: %v, %v", files, err)
	}
	for _, f := range files {
		t.Run(f, func(t *testing.T) {
			data, err := os.ReadFile(f)
			if err != nil {
				t.Fatal(err)
			}
			if !strings.HasPrefix(string(data), "# ") {
				t.Errorf("no header comment saying what the profile represents")
			}
			p, err := profiles.Load(f)
			if err != nil {
				t.Fatal(err)
			}
			if p.Name == "" || p.File != f {
				t.Errorf("name %q, file %q", p.Name, p.File)
			}
			for dir, c := range map[string]*markov.Channel{profiles.SensorToController: p.SensorToController, profiles.ControllerToActuator: p.ControllerToActuator} {
				checkChannel(t, c)
				if h, ok := longDelayProfiles[filepath.Base(f)]; ok {
					// A wide-area profile: delays of several periods, most
					// within the four-period command horizon of the loop
					// that uses it (estimate/model.md §13).
					for _, s := range c.States {
						if q := s.Delay.CDF(4 * h); q < 0.9 {
							t.Errorf("%s %s: P(delay ≤ %gs) = %.3f, want most commands within four periods", dir, s.Name, 4*h, q)
						}
					}
					continue
				}
				// Realism for a 10 ms loop (common practice, not a
				// source): in the long run most delays sit well below
				// the period, and even a bad state is mostly on time.
				pi := c.Stationary()
				early := 0.0
				for i, s := range c.States {
					early += pi[i] * s.Delay.CDF(period/2)
					if q := s.Delay.CDF(period); q < 0.8 {
						t.Errorf("%s %s: P(delay ≤ 10ms) = %.3f, want most datagrams on time", dir, s.Name, q)
					}
				}
				if early < 0.9 {
					t.Errorf("%s: long-run P(delay ≤ 5ms) = %.3f, want most delays well below the period", dir, early)
				}
			}
		})
	}
	// The shapes the examples were written to show.
	shapes := []struct {
		file   string
		states int // on sensor_to_controller
	}{
		{"warehouse-wifi.yaml", 2},
		{"shared-uplink.yaml", 1},
		{"switched-cell.yaml", 1},
		{"agv-corridor.yaml", 3},
	}
	for _, s := range shapes {
		p, err := profiles.Load(filepath.Join("examples", "profiles", s.file))
		if err != nil {
			t.Errorf("%s: %v", s.file, err)
			continue
		}
		if n := len(p.SensorToController.States); n != s.states {
			t.Errorf("%s: %d states, want %d", s.file, n, s.states)
		}
	}
}

// checkChannel checks the invariants a loaded channel promises: losses in
// [0, 1], jump rows summing to 1 without self-jumps, a stationary law,
// and delay laws with a monotone CDF in [0, 1] and draws ≥ 0.
func checkChannel(t testing.TB, c *markov.Channel) {
	t.Helper()
	const tol = 1e-9
	if len(c.States) == 0 {
		t.Fatal("no states")
	}
	pi := c.Stationary()
	sum := 0.0
	for i, s := range c.States {
		sum += pi[i]
		if !(s.Loss >= 0 && s.Loss <= 1) {
			t.Errorf("state %s: loss %v", s.Name, s.Loss)
		}
		if len(c.States) > 1 {
			if !(s.MeanDwell > 0) || math.IsInf(s.MeanDwell, 1) {
				t.Errorf("state %s: mean dwell %v", s.Name, s.MeanDwell)
			}
			js := 0.0
			for _, p := range s.Jump {
				js += p
			}
			if math.Abs(js-1) > tol || s.Jump[i] != 0 {
				t.Errorf("state %s: jumps %v", s.Name, s.Jump)
			}
		}
		checkDelay(t, s.Delay)
	}
	if math.Abs(sum-1) > tol {
		t.Errorf("stationary law %v sums to %v", pi, sum)
	}
}

func checkDelay(t testing.TB, d laws.Delay) {
	t.Helper()
	if d == nil {
		t.Fatal("nil delay")
	}
	lo, hi := d.Support()
	if !(lo >= 0) || hi < lo {
		t.Errorf("%s: support [%v, %v]", d.Kind(), lo, hi)
	}
	if c := d.CDF(-1e-9); c != 0 {
		t.Errorf("%s: CDF(-1ns) = %v", d.Kind(), c)
	}
	prev := 0.0
	for x := 0.0; x < 20; x = x*1.5 + 1e-6 {
		c := d.CDF(x)
		if !(c >= prev-1e-12 && c <= 1) {
			t.Errorf("%s: CDF(%g) = %v after %v", d.Kind(), x, c, prev)
			break
		}
		prev = math.Max(prev, c)
	}
	r := rand.New(rand.NewPCG(3, 5))
	for range 100 {
		if x := d.Sample(r); !(x >= 0) {
			t.Errorf("%s: drew %v", d.Kind(), x)
			break
		}
	}
}

// TestParseDetails checks the smaller rules of the format: defaults,
// durations as numbers, normalised weights, implicit two-state jumps, a
// lone state, the delay shorthand, an empirical file relative to the
// profile.
func TestParseDetails(t *testing.T) {
	const tol = 1e-15
	p, err := profiles.Parse([]byte(`
name: 42
sensor_to_controller:
  delay: 0.002
controller_to_actuator:
  states:
    - {name: a, mean_dwell: 2, loss: 0.5}
    - {mean_dwell: 500ms, delay: {kind: empirical, file: trace-good.txt}}
`), "inline.yaml", "testdata")
	if err != nil {
		t.Fatal(err)
	}
	if p.Name != "42" || p.HasSeed {
		t.Errorf("name %q, seed %v", p.Name, p.HasSeed)
	}
	if d := p.SensorToController.States[0].Delay; d != (laws.Constant{Value: 0.002}) {
		t.Errorf("shorthand delay = %v", d)
	}
	ca := p.ControllerToActuator
	if ca.States[1].Name != "state1" || ca.States[0].MeanDwell != 2 || ca.States[1].MeanDwell != 0.5 {
		t.Errorf("states %+v", ca.States)
	}
	if ca.States[0].Jump[1] != 1 || ca.States[1].Jump[0] != 1 {
		t.Errorf("implicit jumps %v %v", ca.States[0].Jump, ca.States[1].Jump)
	}
	// testdata/trace-good.txt: 1.2ms 1.3ms 1.2ms 2ms 850us → mean 1.31ms.
	emp := ca.States[1].Delay
	if m := emp.Mean(); math.Abs(m-1.31e-3) > tol {
		t.Errorf("empirical mean %v, want 1.31ms", m)
	}
	if a := emp.Atoms(); len(a) != 4 || a[1].At != 1.2e-3 || a[1].Mass != 0.4 {
		t.Errorf("empirical atoms %v", a)
	}

	p, err = profiles.Parse([]byte(`
sensor_to_controller:
  states: [{name: only, loss: 0.1, mean_dwell: 3s}]
controller_to_actuator:
  states:
    - {name: a, mean_dwell: 1s, next: {b: 3, c: 1}}
    - {name: b, mean_dwell: 1s, next: {a: 1}}
    - {name: c, mean_dwell: 1s, next: {a: 2, b: 2}}
`), "x.yaml", "")
	if err != nil {
		t.Fatal(err)
	}
	if s := p.SensorToController.States; len(s) != 1 || !math.IsInf(s[0].MeanDwell, 1) || s[0].Jump != nil {
		t.Errorf("lone state %+v", s)
	}
	if j := p.ControllerToActuator.States[0].Jump; j[1] != 0.75 || j[2] != 0.25 {
		t.Errorf("next weights not normalised: %v", j)
	}
	if j := p.ControllerToActuator.States[2].Jump; j[0] != 0.5 || j[1] != 0.5 {
		t.Errorf("next weights not normalised: %v", j)
	}

	p, err = profiles.Parse([]byte("name: empty\n"), "x.yaml", "")
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []*markov.Channel{p.SensorToController, p.ControllerToActuator} {
		if len(c.States) != 1 || c.States[0].Loss != 0 || c.States[0].Delay != (laws.Constant{}) {
			t.Errorf("missing direction = %+v, want no loss and no delay", c.States)
		}
	}
}

// TestParseNodeInline checks a profile given inline in another file (a
// loop description): errors keep that file's lines and, with ParseField,
// its key path.
func TestParseNodeInline(t *testing.T) {
	const loop = `period: 10ms
profile:
  name: inline
  sensor_to_controller: {loss: 0.01}
  controller_to_actuator:
    loss: 2
`
	var doc yaml.Node
	if err := yaml.Unmarshal([]byte(loop), &doc); err != nil {
		t.Fatal(err)
	}
	node := doc.Content[0].Content[3] // the value of profile
	_, err := profiles.ParseNode(node, "loop.yaml", ".")
	want := `loop.yaml:6: controller_to_actuator.loss: want a number in [0, 1], got "2"`
	if err == nil || err.Error() != want {
		t.Errorf("ParseNode: got %v, want %q", err, want)
	}
	root, err := yamlpos.Document("loop.yaml", []byte(loop))
	if err != nil {
		t.Fatal(err)
	}
	keys, err := root.Mapping("period", "profile")
	if err != nil {
		t.Fatal(err)
	}
	_, err = profiles.ParseField(keys["profile"], ".")
	want = `loop.yaml:6: profile.controller_to_actuator.loss: want a number in [0, 1], got "2"`
	if err == nil || err.Error() != want {
		t.Errorf("ParseField: got %v, want %q", err, want)
	}
}

var updateCorpus = flag.Bool("update-corpus", false, "rewrite testdata/fuzz/FuzzParse from the shipped and bad profiles")

// TestFuzzCorpus keeps the committed seed corpus of FuzzParse in step with
// the shipped and bad profiles: one entry per file, written with
// -update-corpus.
func TestFuzzCorpus(t *testing.T) {
	shipped, _ := filepath.Glob("examples/profiles/*.yaml")
	bad, _ := filepath.Glob("testdata/*.bad.yaml")
	dir := filepath.Join("testdata", "fuzz", "FuzzParse")
	for _, f := range append(shipped, bad...) {
		data, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		entry := fmt.Sprintf("go test fuzz v1\n[]byte(%s)\n", strconv.Quote(string(data)))
		name := filepath.Join(dir, strings.TrimSuffix(filepath.Base(f), ".yaml"))
		if *updateCorpus {
			if err := os.MkdirAll(dir, 0o755); err != nil {
				t.Fatal(err)
			}
			if err := os.WriteFile(name, []byte(entry), 0o644); err != nil {
				t.Fatal(err)
			}
			continue
		}
		got, err := os.ReadFile(name)
		if err != nil || string(got) != entry {
			t.Errorf("%s: corpus entry missing or stale (run go test -run TestFuzzCorpus -update-corpus)", name)
		}
	}
}

// FuzzParse checks that the loader never panics and that whatever it
// accepts has valid laws.
func FuzzParse(f *testing.F) {
	f.Fuzz(func(t *testing.T, data []byte) {
		p, err := profiles.Parse(data, "fuzz.yaml", t.TempDir())
		if err != nil {
			var pe *yamlpos.Error
			if !errors.As(err, &pe) {
				t.Fatalf("error %T is not positioned: %v", err, err)
			}
			return
		}
		checkChannel(t, p.SensorToController)
		checkChannel(t, p.ControllerToActuator)
	})
}
