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
	"time"
)

func TestShippedScenarios(t *testing.T) {
	files, err := filepath.Glob("examples/scenarios/*.yaml")
	if err != nil || len(files) == 0 {
		t.Fatalf("no shipped scenarios (%v)", err)
	}
	for _, f := range files {
		t.Run(filepath.Base(f), func(t *testing.T) {
			s, err := LoadScenario(f)
			if err != nil {
				t.Fatal(err)
			}
			steps, err := s.Steps()
			if err != nil {
				t.Fatal(err)
			}
			if len(steps) == 0 || steps[0].At != 0 {
				t.Fatalf("steps %d, first at %v", len(steps), steps[0].At)
			}
			for i, st := range steps {
				if st.At >= s.Total() || (i > 0 && st.At <= steps[i-1].At) {
					t.Errorf("step %d at %v (previous %v, total %v)", i, st.At, steps[i-1].At, s.Total())
				}
				if st.Profile.Seed != s.Base.Seed || st.Profile.HasSeed != s.Base.HasSeed {
					t.Errorf("step %d: seed %d/%v, base %d/%v", i, st.Profile.Seed, st.Profile.HasSeed, s.Base.Seed, s.Base.HasSeed)
				}
			}
		})
	}
	s, err := LoadScenario("examples/scenarios/conveyor-qualification.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if s.Name != "conveyor-qualification" || s.Base.Name != "warehouse-wifi" || len(s.Phases) != 4 ||
		s.Total() != 8*time.Minute+30*time.Second {
		t.Errorf("name %q base %q phases %d total %v", s.Name, s.Base.Name, len(s.Phases), s.Total())
	}
}

// lossOf is state i's loss of the sensor → controller direction.
func lossOf(p *Profile, i int) float64 { return p.SensorToController.States[i].Loss }

func TestScenarioGood(t *testing.T) {
	s, err := LoadScenario("testdata/scenarios/good.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if s.Name != "good" || s.Base.Name != "base" || s.Settle != 2*time.Second || s.RampStep != time.Second || len(s.Phases) != 4 {
		t.Fatalf("scenario %+v", s)
	}
	if s.Total() != 10500*time.Millisecond {
		t.Errorf("total %v, want 10.5s", s.Total())
	}
	ph := s.Phases
	if ph[0].Name != "nominal" || ph[0].Index != 0 || ph[0].Line != 6 || ph[0].Duration != 3*time.Second || ph[0].Settle != 2*time.Second ||
		ph[0].Check.Tolerance != nil || ph[0].Check.MaxSecondMoment != nil || ph[0].Check.MinSamples != DefaultMinSamples {
		t.Errorf("phase 0 %+v", ph[0])
	}
	wantRamps := []Ramp{
		{Key: "sensor_to_controller.states.clear.loss", From: 0, To: 0.5, Line: 12},
		{Key: "controller_to_actuator.delay.parts.1.median", From: 0.002, To: 0.004, Line: 13},
	}
	if len(ph[1].Ramps) != 2 || ph[1].Ramps[0] != wantRamps[0] || ph[1].Ramps[1] != wantRamps[1] {
		t.Errorf("ramps %+v, want %+v", ph[1].Ramps, wantRamps)
	}
	if c := ph[1].Check; c.Tolerance == nil || *c.Tolerance != 0.25 || c.MaxSecondMoment != nil || c.MinSamples != 100 {
		t.Errorf("phase 1 check %+v", c)
	}
	if ph[2].Settle != 0 || ph[2].Duration != 2500*time.Millisecond || *ph[2].Check.MaxSecondMoment != 0.5 || ph[2].HasPredictWith {
		t.Errorf("phase 2 %+v", ph[2])
	}
	if c := ph[3].Check; !ph[3].HasPredictWith || *c.Tolerance != 0 || *c.MaxSecondMoment != 1 {
		t.Errorf("phase 3 %+v", ph[3])
	}

	steps, err := s.Steps()
	if err != nil {
		t.Fatal(err)
	}
	type want struct {
		at    time.Duration
		phase int
		frac  float64
	}
	wants := []want{
		{0, 0, 0},
		{3 * time.Second, 1, 0}, {4 * time.Second, 1, 0.25}, {5 * time.Second, 1, 0.5}, {6 * time.Second, 1, 0.75},
		{7 * time.Second, 2, 0},
		{9500 * time.Millisecond, 3, 0},
	}
	if len(steps) != len(wants) {
		t.Fatalf("%d steps, want %d", len(steps), len(wants))
	}
	for i, w := range wants {
		st := steps[i]
		if st.At != w.at || st.Phase != w.phase || st.Frac != w.frac {
			t.Errorf("step %d: at %v phase %d frac %g, want %v %d %g", i, st.At, st.Phase, st.Frac, w.at, w.phase, w.frac)
		}
		if st.Profile.Seed != 7 || !st.Profile.HasSeed {
			t.Errorf("step %d: seed %d, want the base's 7", i, st.Profile.Seed)
		}
		if (st.Predict != st.Profile) != (w.phase == 3) {
			t.Errorf("step %d: predict profile is a separate one: %v", i, st.Predict != st.Profile)
		}
	}
	// Base, untouched: the file's values, and the file's path.
	if p := steps[0].Profile; lossOf(p, 0) != 0.01 || p.ControllerToActuator.States[0].Loss != 0 ||
		p.File != filepath.Join("testdata", "scenarios", "base.yaml") {
		t.Errorf("phase 0 profile: loss %g, c→a loss %g, file %q", lossOf(p, 0), p.ControllerToActuator.States[0].Loss, p.File)
	}
	// Ramps interpolate linearly: from + (to − from)·frac, exactly as
	// computed here (the loss ends are dyadic, so 0.125 etc. are exact).
	for i, frac := range []float64{0, 0.25, 0.5, 0.75} {
		p := steps[1+i].Profile
		if got, w := lossOf(p, 0), 0.5*frac; got != w {
			t.Errorf("frac %g: clear loss %g, want %g", frac, got, w)
		}
		med := 0.002 + (0.004-0.002)*frac
		mix := p.ControllerToActuator.States[0].Delay.(*laws.Mixture)
		if got := mix.Parts[1].(laws.Lognormal).Mu; got != math.Log(med) {
			t.Errorf("frac %g: part 1 median %g, want %g", frac, math.Exp(got), med)
		}
		// set applies on every step of the phase: a new key and a state's
		// delay bound found by the state's name.
		if l := p.ControllerToActuator.States[0].Loss; l != 0.05 {
			t.Errorf("frac %g: c→a loss %g, want 0.05 (set)", frac, l)
		}
		if u := p.SensorToController.States[1].Delay.(laws.Uniform); u.Max != 0.006 || u.Min != 0.001 {
			t.Errorf("frac %g: fading delay %+v, want [1ms, 6ms]", frac, u)
		}
		if lossOf(p, 1) != 0.2 {
			t.Errorf("frac %g: fading loss %g changed", frac, lossOf(p, 1))
		}
		if p.File != "" {
			t.Errorf("a patched profile has file %q", p.File)
		}
	}
	// A phase's own profile file, with set on top; the base's seed stays.
	if p := steps[5].Profile; p.Name != "other" || lossOf(p, 0) != 0.25 || p.Seed != 7 {
		t.Errorf("outage profile %q loss %g seed %d", p.Name, lossOf(p, 0), p.Seed)
	}
	// predict_with changes the prediction only.
	if st := steps[6]; lossOf(st.Profile, 0) != 0.1 || lossOf(st.Predict, 0) != 0 || st.Predict.Seed != 7 {
		t.Errorf("believed: relay loss %g, predict loss %g", lossOf(st.Profile, 0), lossOf(st.Predict, 0))
	}
}

func TestScenarioScale(t *testing.T) {
	s, err := LoadScenario("testdata/scenarios/good.yaml")
	if err != nil {
		t.Fatal(err)
	}
	h := s.Scale(0.5)
	if h.Total() != 5250*time.Millisecond || h.Settle != time.Second || h.RampStep != 500*time.Millisecond ||
		h.Phases[1].Duration != 2*time.Second || h.Phases[1].Settle != time.Second || h.Phases[2].Settle != 0 {
		t.Errorf("scaled: total %v settle %v ramp step %v phase 1 %v/%v", h.Total(), h.Settle, h.RampStep, h.Phases[1].Duration, h.Phases[1].Settle)
	}
	if s.Total() != 10500*time.Millisecond || s.RampStep != time.Second || s.Phases[1].Duration != 4*time.Second {
		t.Errorf("Scale changed the original: total %v", s.Total())
	}
	steps, err := h.Steps()
	if err != nil {
		t.Fatal(err)
	}
	// The same steps at half the times, with the same fractions.
	orig, _ := s.Steps()
	if len(steps) != len(orig) {
		t.Fatalf("%d steps scaled, %d original", len(steps), len(orig))
	}
	for i := range steps {
		if steps[i].At != orig[i].At/2 || steps[i].Frac != orig[i].Frac || lossOf(steps[i].Profile, 0) != lossOf(orig[i].Profile, 0) {
			t.Errorf("step %d: at %v frac %g, original %v %g", i, steps[i].At, steps[i].Frac, orig[i].At, orig[i].Frac)
		}
	}
	// Twice as long: twice the ramp steps' spacing, not more steps.
	if d := s.Scale(2); d.Total() != 21*time.Second || d.RampStep != 2*time.Second {
		t.Errorf("scaled ×2: total %v ramp step %v", d.Total(), d.RampStep)
	}
	defer func() {
		if recover() == nil {
			t.Error("Scale(0) did not panic")
		}
	}()
	s.Scale(0)
}

// TestScenarioSteps: the count and timing of ramp steps for phase
// lengths that are and are not multiples of ramp_step.
func TestScenarioSteps(t *testing.T) {
	cases := []struct {
		duration, step string
		at             []time.Duration
	}{
		{"3s", "1s", []time.Duration{0, time.Second, 2 * time.Second}},
		{"2500ms", "1s", []time.Duration{0, time.Second, 2 * time.Second}},
		{"1s", "1s", []time.Duration{0}},
		{"1s", "2s", []time.Duration{0}},
		{"1s", "300ms", []time.Duration{0, 300 * time.Millisecond, 600 * time.Millisecond, 900 * time.Millisecond}},
	}
	for _, c := range cases {
		data := "profile: {sensor_to_controller: {loss: 0}}\nramp_step: " + c.step + "\nphases:\n" +
			"  - {name: a, duration: " + c.duration + ", ramp: {sensor_to_controller.loss: {from: 0, to: 1}}}\n" +
			"  - {name: b, duration: 1s}\n"
		s, err := ParseScenario([]byte(data), "s.yaml", "")
		if err != nil {
			t.Fatal(err)
		}
		steps, err := s.Steps()
		if err != nil {
			t.Fatal(err)
		}
		if len(steps) != len(c.at)+1 {
			t.Errorf("%s every %s: %d steps, want %d", c.duration, c.step, len(steps), len(c.at)+1)
			continue
		}
		d := s.Phases[0].Duration
		for i, at := range c.at {
			frac := float64(at) / float64(d)
			if steps[i].At != at || steps[i].Frac != frac || lossOf(steps[i].Profile, 0) != frac {
				t.Errorf("%s every %s: step %d at %v frac %g loss %g, want %v %g", c.duration, c.step, i, steps[i].At, steps[i].Frac, lossOf(steps[i].Profile, 0), at, frac)
			}
		}
		if last := steps[len(steps)-1]; last.Phase != 1 || last.At != d || last.Frac != 0 || lossOf(last.Profile, 0) != 0 {
			t.Errorf("%s every %s: phase b step %+v", c.duration, c.step, last)
		}
	}
}

// TestScenarioPaths: dotted keys reach mapping keys, states by name or
// index and mixture parts by index, and may add a last key.
func TestScenarioPaths(t *testing.T) {
	cases := []struct {
		set   string
		check func(p *Profile) bool
	}{
		{"sensor_to_controller.states.fading.loss: 0.3", func(p *Profile) bool { return lossOf(p, 1) == 0.3 && lossOf(p, 0) == 0.01 }},
		{"sensor_to_controller.states.0.loss: 0.3", func(p *Profile) bool { return lossOf(p, 0) == 0.3 }},
		{"sensor_to_controller.states.clear.mean_dwell: 4s", func(p *Profile) bool { return p.SensorToController.States[0].MeanDwell == 4 }},
		{"controller_to_actuator.delay.parts.0.value: 3ms", func(p *Profile) bool {
			return p.ControllerToActuator.States[0].Delay.(*laws.Mixture).Parts[0].(laws.Constant).Value == 0.003
		}},
		{"controller_to_actuator.delay.parts.1: {weight: 1, kind: constant, value: 2ms}", func(p *Profile) bool {
			_, ok := p.ControllerToActuator.States[0].Delay.(*laws.Mixture).Parts[1].(laws.Constant)
			return ok
		}},
		{"controller_to_actuator.loss: 0.5", func(p *Profile) bool { return p.ControllerToActuator.States[0].Loss == 0.5 }},
		{"controller_to_actuator: {loss: 0.5}", func(p *Profile) bool {
			return p.ControllerToActuator.States[0].Loss == 0.5 && p.ControllerToActuator.States[0].Delay.Mean() == 0
		}},
		{"name: renamed", func(p *Profile) bool { return p.Name == "renamed" }},
	}
	for _, c := range cases {
		data := "profile: base.yaml\nphases:\n  - name: a\n    duration: 1s\n    set: {" + c.set + "}\n"
		s, err := ParseScenario([]byte(data), "s.yaml", "testdata/scenarios")
		if err != nil {
			t.Errorf("%s: %v", c.set, err)
			continue
		}
		steps, err := s.Steps()
		if err != nil {
			t.Fatal(err)
		}
		if !c.check(steps[0].Profile) {
			t.Errorf("%s: not applied: %+v", c.set, steps[0].Profile)
		}
	}
}

// Each bad scenario and the message it must produce.
var scenarioErrors = map[string]string{
	"duplicate-phase.bad.yaml":       `:8: phases[2].name: phase name "a" used twice`,
	"missing-profile.bad.yaml":       `:1: profile: missing (required)`,
	"no-phases.bad.yaml":             `:2: phases: want at least one phase, got none`,
	"phase-name.bad.yaml":            `:3: phases[0].name: want a name of a-z, 0-9, _ and -, got "Nominal"`,
	"phase-duration.bad.yaml":        `:4: phases[0].duration: want a duration > 0 and ≤ 168h0m0s, got "0s"`,
	"phase-no-duration.bad.yaml":     `:3: phases[0].duration: missing (required)`,
	"unknown-key.bad.yaml":           `:3: unknown key "phase" (want one of: name, profile, settle, ramp_step, phases)`,
	"unknown-phase-key.bad.yaml":     `:5: phases[0]: unknown key "sett" (want one of: name, duration, settle, profile, set, ramp, predict_with, check, frequency)`,
	"unknown-check-key.bad.yaml":     `:5: phases[0].check: unknown key "tol" (want one of: tolerance, max_second_moment, min_samples)`,
	"check-min-samples.bad.yaml":     `:5: phases[0].check.min_samples: want a whole number ≥ 2, got "1"`,
	"check-tolerance.bad.yaml":       `:5: phases[0].check.tolerance: want a number ≥ 0, got "-0.1"`,
	"ramp-above-one.bad.yaml":        `:7: phases[0].ramp.sensor_to_controller.states.clear.loss: at the phase end (to: 1.5): sensor_to_controller.states[0].loss: want a number in [0, 1], got "1.5"`,
	"ramp-start-bad.bad.yaml":        `:7: phases[0].ramp.controller_to_actuator.delay.parts.1.median: at the phase start (from: -1ms): controller_to_actuator.delay.parts[1].median: want a duration > 0 and ≤ 1h0m0s, got "-1ms"`,
	"ramp-kinds.bad.yaml":            `:7: phases[0].ramp.sensor_to_controller.states.clear.mean_dwell: want from and to of the same kind (two numbers or two durations), got "1" and "2s"`,
	"ramp-no-to.bad.yaml":            `:7: phases[0].ramp.sensor_to_controller.loss.to: missing (required)`,
	"ramp-step-cap.bad.yaml":         `:2: ramp_step: want at most 10000 steps in the scenario, got 10001 with ramp_step 1ms; want a longer ramp_step`,
	"set-bad-value.bad.yaml":         `:6: phases[0].set.sensor_to_controller.states.fading.loss: sensor_to_controller.states[1].loss: want a number in [0, 1], got "lots"`,
	"set-missing-state.bad.yaml":     `:6: phases[0].set.sensor_to_controller.states.dim.loss: no item named "dim" in the list at sensor_to_controller.states`,
	"set-missing-key.bad.yaml":       `:6: phases[0].set.sensor_to_controler.loss: no key "sensor_to_controler" in the profile at sensor_to_controler`,
	"set-part-index.bad.yaml":        `:6: phases[0].set.controller_to_actuator.delay.parts.2.weight: no item 2 in the list at controller_to_actuator.delay.parts (it has 2)`,
	"set-seed.bad.yaml":              `:6: phases[0].set.seed: the base profile's seed holds for the whole scenario; want no seed here`,
	"set-unknown-key.bad.yaml":       `:6: phases[0].set.sensor_to_controller.lossy: sensor_to_controller: unknown key "lossy" (want one of: loss, delay, states, trace)`,
	"predict-bad.bad.yaml":           `:6: phases[0].predict_with.sensor_to_controller.loss: sensor_to_controller.loss: want a number in [0, 1], got "-0.1"`,
	"phase-profile-missing.bad.yaml": `:5: phases[0].profile: reading profile: open testdata/bad-scenarios/nowhere.yaml: no such file or directory`,
	"base-profile-bad.bad.yaml":      `:1: profile: testdata/bad-scenarios/bad-profile.yaml:2: sensor_to_controller.loss: want a number in [0, 1], got "2"`,
	"inline-profile-bad.bad.yaml":    `:1: profile.sensor_to_controller.loss: want a number in [0, 1], got "3"`,
}

func TestScenarioBad(t *testing.T) {
	files, err := filepath.Glob("testdata/bad-scenarios/*.bad.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if len(files) != len(scenarioErrors) {
		t.Errorf("%d bad scenario files, %d expected messages: keep them paired", len(files), len(scenarioErrors))
	}
	for _, f := range files {
		name := filepath.Base(f)
		t.Run(name, func(t *testing.T) {
			want, ok := scenarioErrors[name]
			if !ok {
				t.Fatalf("no expected message for %s", name)
			}
			_, err := LoadScenario(f)
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

// FuzzParseScenario checks that no input makes the loader panic and that
// a scenario it accepts yields its steps.
func FuzzParseScenario(f *testing.F) {
	files, _ := filepath.Glob("testdata/scenarios/*.yaml")
	for _, name := range files {
		if data, err := os.ReadFile(name); err == nil {
			f.Add(data)
		}
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		s, err := ParseScenario(data, "fuzz.yaml", "testdata/scenarios")
		if err != nil {
			if !strings.HasPrefix(err.Error(), "fuzz.yaml") {
				t.Errorf("error without the file name: %v", err)
			}
			return
		}
		steps, err := s.Steps()
		if err != nil {
			t.Fatalf("accepted scenario has no steps: %v", err)
		}
		if len(steps) == 0 || len(steps) > MaxScenarioSteps || steps[0].At != 0 {
			t.Errorf("%d steps", len(steps))
		}
	})
}
