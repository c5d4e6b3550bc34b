package report

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"time"

	"gopkg.in/yaml.v3"

	"rigwire/estimate/engine"
	"rigwire/profiles"
	"rigwire/profiles/laws"
	"rigwire/profiles/markov"
)

// Soak is what a soak hands its report and its summary beyond the
// monitor's summary: the scenario as written (before --time-scale) and as
// played, its steps, the time scale, the wall-clock start and end, the
// relay's seed, the monitor that judged the phases and the recorder of
// the relay's counters at each phase boundary and at the trip.
type Soak struct {
	Loop      *profiles.Loop
	Written   *profiles.Scenario // as the file says
	Played    *profiles.Scenario // scaled by TimeScale
	Steps     []profiles.ScenarioStep
	TimeScale float64
	Started   time.Time // the scenario's start, wall clock
	Ended     time.Time
	Seed      uint64 // the relay's
	Monitor   *engine.Monitor
	Recorder  *Recorder
}

// Data turns the soak's summary, the monitor's history and the relay's
// counters into the report's data; verdict is "pass", "fail",
// "inconclusive" or "tripped" and code the soak's exit status.
func (run *Soak) Data(s *engine.Summary, prov *Provenance, verdict string, code int) *Data {
	sc := run.Played
	d := &Data{
		Title:    "Soak: " + sc.Name,
		Loop:     run.Loop.File,
		Scenario: sc.File,
		Started:  run.Started,
		Duration: run.Ended.Sub(run.Started).Round(time.Millisecond),
		Verdict:  verdict,
		ExitCode: code,
		Notes: []string{
			fmt.Sprintf("relay seed %d", run.Seed),
			fmt.Sprintf("time scale %g: wall time = scenario time × %g", run.TimeScale, run.TimeScale),
			fmt.Sprintf("%d samples estimated over the run, %d datagrams received, %d sample gaps", s.Samples, s.Datagrams, s.Gaps),
			"predictions per phase are steady-state values; during a ramp the phase's prediction is the mean of the predictions in force at each judged sample",
			"interval: " + engine.CIMethod,
			"verdict rule: " + engine.VerdictRule,
		},
		LossRuns:   run.Recorder.LossRuns(),
		Provenance: prov,
		TimeScale:  run.TimeScale,
	}
	if s.AfterTripSamples > 0 {
		d.Notes = append(d.Notes, fmt.Sprintf("%d samples arrived after the safety trip; they are in no estimate", s.AfterTripSamples))
	}
	d.Phases = Phases(s.Phases)
	run.fillPhases(d.Phases)
	for _, pt := range run.Monitor.History() {
		d.History = append(d.History, Point{Elapsed: pt.Elapsed, Measured: pt.Measured, CILow: pt.CILow,
			CIHigh: pt.CIHigh, Predicted: pt.Predicted, Phase: pt.Phase})
	}
	if t := s.Trip; t != nil {
		d.Trip = &Trip{Reason: t.Reason, Value: t.Value, Bound: t.Bound, Elapsed: t.Elapsed, Phase: t.Phase, Action: t.Action}
	}
	d.Delays, d.DelaysAfterTrip = run.Recorder.delays()
	d.TripWindow = run.Recorder.tripWindow(run.Loop.Trip, s.Trip)
	hs, meas, err := SoakFrequency(run.Loop, s)
	if err != nil {
		d.Notes = append(d.Notes, "frequency response: "+err.Error())
	}
	d.Frequency, d.FrequencyMeasured = hs, meas
	return d
}

// Phases converts the summary's phases for the report; a phase not run
// has no start or end (NaN).
func Phases(ps []engine.PhaseResult) []Phase {
	var out []Phase
	for _, p := range ps {
		rp := Phase{Index: p.Index, Name: p.Name, Start: math.NaN(), End: math.NaN(), Samples: p.Samples,
			Measured: p.ErrorSecondMoment, CILow: p.CILow, CIHigh: p.CIHigh, Predicted: p.PredictedSecondMoment,
			Verdict: p.Verdict, Reason: p.Reason, ScenarioStart: math.NaN(), ScenarioEnd: math.NaN()}
		if p.StartSeconds != nil {
			rp.Start = *p.StartSeconds
		}
		if p.EndSeconds != nil {
			rp.End = *p.EndSeconds
		}
		if n := PhaseNote(p); n != "-" {
			rp.Note = n
		}
		out = append(out, rp)
	}
	return out
}

// fillPhases adds each phase's planned span in scenario time and its
// network: the profile in force, the one its prediction used, and what the
// relay counted in it.
func (run *Soak) fillPhases(ps []Phase) {
	var at time.Duration
	starts := make([]float64, len(run.Written.Phases))
	ends := make([]float64, len(run.Written.Phases))
	for i, ph := range run.Written.Phases {
		starts[i] = at.Seconds()
		at += ph.Duration
		ends[i] = at.Seconds()
	}
	src := readScenarioSources(run.Written)
	for i := range ps {
		k := ps[i].Index
		if k < 0 || k >= len(starts) {
			continue
		}
		ps[i].ScenarioStart, ps[i].ScenarioEnd = starts[k], ends[k]
		ps[i].Network = run.phaseNetwork(k, src, ps[i].Verdict == engine.PhaseNotRun)
	}
}

// phaseNetwork describes phase k's network.
func (run *Soak) phaseNetwork(k int, src scenarioSources, notRun bool) *PhaseNetwork {
	var first, last *profiles.ScenarioStep
	for i := range run.Steps {
		if run.Steps[i].Phase == k {
			if first == nil {
				first = &run.Steps[i]
			}
			last = &run.Steps[i]
		}
	}
	if first == nil {
		return nil
	}
	n := &PhaseNetwork{Source: src.describe(k, run.Written)}
	n.Settings = profileTexts(first.Profile, last.Profile)
	predictWith := run.Written.Phases[k].HasPredictWith
	if predictWith {
		n.PredictedWith = "another belief: the relayed profile with the phase's predict_with"
		if pw := src.phase(k).predictWith; pw != "" {
			n.PredictedWith += " " + pw
		}
		n.PredictSettings = profileTexts(first.Predict, last.Predict)
	} else {
		n.PredictedWith = "the profile the relay applied"
		if len(run.Written.Phases[k].Ramps) > 0 {
			n.PredictedWith += " (one prediction per ramp step)"
		}
	}
	if !notRun {
		n.Measured = run.Recorder.phaseMeasure(k)
	}
	return n
}

// profileTexts describes a profile per direction; with a ramp, from its
// value at the phase start to its value at the last step.
func profileTexts(from, to *profiles.Profile) []DirectionText {
	dirs := []struct {
		name string
		ch   func(*profiles.Profile) *markov.Channel
	}{
		{profiles.SensorToController, func(p *profiles.Profile) *markov.Channel { return p.SensorToController }},
		{profiles.ControllerToActuator, func(p *profiles.Profile) *markov.Channel { return p.ControllerToActuator }},
	}
	var out []DirectionText
	for _, d := range dirs {
		a := channelText(d.ch(from))
		if to != nil && to != from {
			if b := channelText(d.ch(to)); b != a {
				a += " → " + b
			}
		}
		out = append(out, DirectionText{Direction: d.name, Text: a})
	}
	return out
}

// channelText is a channel's parameters in a line: "loss 0.02, delay
// lognormal median 8ms …" for one state; each state with its mean dwell
// for several.
func channelText(ch *markov.Channel) string {
	if ch == nil || len(ch.States) == 0 {
		return "no loss, no delay"
	}
	state := func(s markov.State) string {
		return fmt.Sprintf("loss %.4g, delay %s", s.Loss, laws.Describe(s.Delay))
	}
	if len(ch.States) == 1 {
		return state(ch.States[0])
	}
	parts := make([]string, len(ch.States))
	for i, s := range ch.States {
		parts[i] = fmt.Sprintf("%s (%s, mean dwell %s)", s.Name, state(s), windowSec.Format(s.MeanDwell))
	}
	return fmt.Sprintf("%d states: %s", len(ch.States), strings.Join(parts, "; "))
}

// scenarioSources is what the scenario file says of each phase's profile:
// its own file or the base, and its overrides, read again from the file
// (the loaded scenario keeps them unexported).
type scenarioSources struct {
	base   string
	phases []phaseSource
}

type phaseSource struct {
	profile                string // the phase's own profile file; "" none, "(inline)"
	set, ramp, predictWith string // the overrides as "{key: value, …}"
}

func (s scenarioSources) phase(k int) phaseSource {
	if k < len(s.phases) {
		return s.phases[k]
	}
	return phaseSource{}
}

// describe says where phase k's relayed profile came from.
func (s scenarioSources) describe(k int, sc *profiles.Scenario) string {
	ps := s.phase(k)
	from := s.base
	if ps.profile != "" {
		from = ps.profile
	}
	if from == "" {
		from = "the scenario's base profile"
	}
	var mods []string
	if ps.set != "" {
		mods = append(mods, "set "+ps.set)
	}
	if ps.ramp != "" {
		mods = append(mods, "ramp "+ps.ramp)
	} else if k < len(sc.Phases) && len(sc.Phases[k].Ramps) > 0 {
		mods = append(mods, "a ramp")
	}
	if len(mods) == 0 {
		return from
	}
	return from + " with " + strings.Join(mods, ", ")
}

// readScenarioSources reads the scenario file again for the report; a
// file that cannot be read back gives empty sources (the report then
// names the base profile only).
func readScenarioSources(sc *profiles.Scenario) scenarioSources {
	var out scenarioSources
	if sc.Base != nil {
		out.base = sc.Base.File
	}
	if out.base == "" {
		out.base = "the scenario's inline profile"
	}
	b, err := os.ReadFile(sc.File)
	if err != nil {
		return out
	}
	var doc struct {
		Phases []struct {
			Profile     yaml.Node `yaml:"profile"`
			Set         yaml.Node `yaml:"set"`
			Ramp        yaml.Node `yaml:"ramp"`
			PredictWith yaml.Node `yaml:"predict_with"`
		} `yaml:"phases"`
	}
	if yaml.Unmarshal(b, &doc) != nil {
		return out
	}
	flow := func(n yaml.Node) string {
		if n.Kind == 0 {
			return ""
		}
		n.Style = yaml.FlowStyle
		for _, c := range n.Content {
			c.Style |= yaml.FlowStyle
			for _, cc := range c.Content {
				cc.Style |= yaml.FlowStyle
			}
		}
		out, err := yaml.Marshal(&n)
		if err != nil {
			return "(as in the scenario)"
		}
		return strings.TrimSpace(string(out))
	}
	for _, ph := range doc.Phases {
		var ps phaseSource
		switch ph.Profile.Kind {
		case yaml.ScalarNode:
			ps.profile = ph.Profile.Value
			if !filepath.IsAbs(ps.profile) {
				ps.profile = filepath.Join(filepath.Dir(sc.File), ps.profile)
			}
		case yaml.MappingNode:
			ps.profile = "the phase's inline profile"
		}
		ps.set, ps.ramp, ps.predictWith = flow(ph.Set), flow(ph.Ramp), flow(ph.PredictWith)
		out.phases = append(out.phases, ps)
	}
	return out
}

// SoakInputs lists the files the soak read: the loop, the scenario, the
// scenario's base profile, each phase's own profile and the loop's
// profile; a file read in several roles is listed once with all of them.
func SoakInputs(loop *profiles.Loop, sc *profiles.Scenario) []Input {
	type entry struct {
		path  string
		roles []string
	}
	var order []*entry
	byKey := map[string]*entry{}
	add := func(role, path string) {
		if path == "" {
			return
		}
		key := path
		if abs, err := filepath.Abs(path); err == nil {
			key = abs
		}
		if e, ok := byKey[key]; ok {
			e.roles = append(e.roles, role)
			return
		}
		e := &entry{path: path, roles: []string{role}}
		byKey[key] = e
		order = append(order, e)
	}
	add("loop", loop.File)
	add("scenario", sc.File)
	if sc.Base != nil {
		add("scenario's base profile", sc.Base.File)
	}
	src := readScenarioSources(sc)
	for k, ps := range src.phases {
		if ps.profile != "" && !strings.HasPrefix(ps.profile, "the phase's") && k < len(sc.Phases) {
			add("profile of phase "+sc.Phases[k].Name, ps.profile)
		}
	}
	add("loop's profile", loop.ProfileFile)
	var out []Input
	for _, e := range order {
		role := strings.Join(e.roles, " and ")
		if role == "loop's profile" {
			role += " (read, not relayed: the soak relays the scenario's profiles)"
		}
		out = append(out, ReadInput(role, e.path))
	}
	return out
}

// Provenance is the soak's provenance but for the build (the caller's):
// the command line args, the working directory wd, the time scale, the
// wall-clock span, the relay's seed and the inputs.
func (run *Soak) Provenance(args []string, wd string) *Provenance {
	return &Provenance{
		CommandLine: args, WorkDir: wd,
		TimeScale: run.TimeScale, Started: run.Started, Ended: run.Ended,
		Seed:   run.Seed,
		Inputs: SoakInputs(run.Loop, run.Written),
	}
}

// SoakSummary is the soak's JSON summary: the monitor's, with the
// provenance beside it.
type SoakSummary struct {
	*engine.Summary
	Provenance *Provenance `json:"provenance"`
}
