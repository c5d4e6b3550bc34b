package main

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"sync"
	"time"

	"gopkg.in/yaml.v3"

	"rigwire/cmd/internal/exitcode"
	"rigwire/cmd/internal/metricsrv"
	"rigwire/emulate/trip"
	"rigwire/estimate/engine"
	"rigwire/estimate/report"
	"rigwire/profiles"
	"rigwire/profiles/laws"
	"rigwire/profiles/markov"
)

// soakRun is what a soak hands its report and its summary beyond the
// monitor's summary: the scenario as written (before --time-scale) and as
// played, its steps, the time scale, the wall-clock start and end, and the
// relay's counters at each phase boundary and at the trip.
type soakRun struct {
	b         *bench
	loop      *profiles.Loop
	written   *profiles.Scenario // as the file says
	played    *profiles.Scenario // scaled by timeScale
	steps     []profiles.ScenarioStep
	timeScale float64
	started   time.Time // the scenario's start, wall clock
	ended     time.Time
	rec       *soakRecorder
}

// writeSoakReport turns the soak's summary, the monitor's history and the
// relay's counters into the report's data and writes it into dir.
func writeSoakReport(dir string, run *soakRun, s *engine.Summary, prov *report.Provenance, code int) ([]string, error) {
	b, sc := run.b, run.played
	verdict := "pass"
	switch {
	case s.Trip != nil:
		verdict = "tripped"
	case code == exitcode.PhaseFailed:
		verdict = "fail"
	case code != exitcode.OK:
		verdict = "inconclusive"
	}
	d := &report.Data{
		Title:    "Soak: " + sc.Name,
		Loop:     run.loop.File,
		Scenario: sc.File,
		Started:  run.started,
		Duration: run.ended.Sub(run.started).Round(time.Millisecond),
		Verdict:  verdict,
		ExitCode: code,
		Notes: []string{
			fmt.Sprintf("relay seed %d", b.relay.Seed()),
			fmt.Sprintf("time scale %g: wall time = scenario time × %g", run.timeScale, run.timeScale),
			fmt.Sprintf("%d samples estimated over the run, %d datagrams received, %d sample gaps", s.Samples, s.Datagrams, s.Gaps),
			"predictions per phase are steady-state values; during a ramp the phase's prediction is the mean of the predictions in force at each judged sample",
			"interval: " + engine.CIMethod,
			"verdict rule: " + engine.VerdictRule,
		},
		LossRuns:   b.relayHistogram("rigwire_relay_loss_run_length"),
		Provenance: prov,
		TimeScale:  run.timeScale,
	}
	if s.AfterTripSamples > 0 {
		d.Notes = append(d.Notes, fmt.Sprintf("%d samples arrived after the safety trip; they are in no estimate", s.AfterTripSamples))
	}
	d.Phases = reportPhases(s.Phases)
	run.fillPhases(d.Phases)
	for _, pt := range b.mon.History() {
		d.History = append(d.History, report.Point{Elapsed: pt.Elapsed, Measured: pt.Measured, CILow: pt.CILow,
			CIHigh: pt.CIHigh, Predicted: pt.Predicted, Phase: pt.Phase})
	}
	if t := s.Trip; t != nil {
		d.Trip = &report.Trip{Reason: t.Reason, Value: t.Value, Bound: t.Bound, Elapsed: t.Elapsed, Phase: t.Phase, Action: t.Action}
	}
	d.Delays, d.DelaysAfterTrip = run.rec.delays()
	d.TripWindow = run.rec.tripWindow(run.loop.Trip, s.Trip)
	return report.Write(dir, d)
}

// reportPhases converts the summary's phases for the report; a phase not
// run has no start or end (NaN).
func reportPhases(ps []engine.PhaseResult) []report.Phase {
	var out []report.Phase
	for _, p := range ps {
		rp := report.Phase{Index: p.Index, Name: p.Name, Start: math.NaN(), End: math.NaN(), Samples: p.Samples,
			Measured: p.ErrorSecondMoment, CILow: p.CILow, CIHigh: p.CIHigh, Predicted: p.PredictedSecondMoment,
			Verdict: p.Verdict, Reason: p.Reason, ScenarioStart: math.NaN(), ScenarioEnd: math.NaN()}
		if p.StartSeconds != nil {
			rp.Start = *p.StartSeconds
		}
		if p.EndSeconds != nil {
			rp.End = *p.EndSeconds
		}
		if n := phaseNote(p); n != "-" {
			rp.Note = n
		}
		out = append(out, rp)
	}
	return out
}

// fillPhases adds each phase's planned span in scenario time and its
// network: the profile in force, the one its prediction used, and what the
// relay counted in it.
func (run *soakRun) fillPhases(ps []report.Phase) {
	var at time.Duration
	starts := make([]float64, len(run.written.Phases))
	ends := make([]float64, len(run.written.Phases))
	for i, ph := range run.written.Phases {
		starts[i] = at.Seconds()
		at += ph.Duration
		ends[i] = at.Seconds()
	}
	src := readScenarioSources(run.written)
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
func (run *soakRun) phaseNetwork(k int, src scenarioSources, notRun bool) *report.PhaseNetwork {
	var first, last *profiles.ScenarioStep
	for i := range run.steps {
		if run.steps[i].Phase == k {
			if first == nil {
				first = &run.steps[i]
			}
			last = &run.steps[i]
		}
	}
	if first == nil {
		return nil
	}
	n := &report.PhaseNetwork{Source: src.describe(k, run.written)}
	n.Settings = profileTexts(first.Profile, last.Profile)
	predictWith := run.written.Phases[k].HasPredictWith
	if predictWith {
		n.PredictedWith = "another belief: the relayed profile with the phase's predict_with"
		if pw := src.phase(k).predictWith; pw != "" {
			n.PredictedWith += " " + pw
		}
		n.PredictSettings = profileTexts(first.Predict, last.Predict)
	} else {
		n.PredictedWith = "the profile the relay applied"
		if len(run.written.Phases[k].Ramps) > 0 {
			n.PredictedWith += " (one prediction per ramp step)"
		}
	}
	if !notRun {
		n.Measured = run.rec.phaseMeasure(k)
	}
	return n
}

// profileTexts describes a profile per direction; with a ramp, from its
// value at the phase start to its value at the last step.
func profileTexts(from, to *profiles.Profile) []report.DirectionText {
	dirs := []struct {
		name string
		ch   func(*profiles.Profile) *markov.Channel
	}{
		{profiles.SensorToController, func(p *profiles.Profile) *markov.Channel { return p.SensorToController }},
		{profiles.ControllerToActuator, func(p *profiles.Profile) *markov.Channel { return p.ControllerToActuator }},
	}
	var out []report.DirectionText
	for _, d := range dirs {
		a := channelText(d.ch(from))
		if to != nil && to != from {
			if b := channelText(d.ch(to)); b != a {
				a += " → " + b
			}
		}
		out = append(out, report.DirectionText{Direction: d.name, Text: a})
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
		parts[i] = fmt.Sprintf("%s (%s, mean dwell %.4g s)", s.Name, state(s), s.MeanDwell)
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

// soakInputs lists the files the soak read: the loop, the scenario, the
// scenario's base profile, each phase's own profile and the loop's
// profile; a file read in several roles is listed once with all of them.
func soakInputs(loop *profiles.Loop, sc *profiles.Scenario) []report.Input {
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
	var out []report.Input
	for _, e := range order {
		role := strings.Join(e.roles, " and ")
		if role == "loop's profile" {
			role += " (read, not relayed: the soak relays the scenario's profiles)"
		}
		out = append(out, report.ReadInput(role, e.path))
	}
	return out
}

// soakProvenance is the soak's provenance: the build, the command line,
// the time scale, the wall-clock span and the inputs.
func soakProvenance(run *soakRun) *report.Provenance {
	bi := metricsrv.ReadBuild()
	wd, _ := os.Getwd()
	return &report.Provenance{
		Version: bi.Version, Revision: bi.Revision, Modified: bi.Modified, Go: bi.Go,
		CommandLine: append([]string(nil), os.Args...), WorkDir: wd,
		TimeScale: run.timeScale, Started: run.started, Ended: run.ended,
		Seed:   run.b.relay.Seed(),
		Inputs: soakInputs(run.loop, run.written),
	}
}

// soakSummary is the soak's JSON summary: the monitor's, with the
// provenance beside it.
type soakSummary struct {
	*engine.Summary
	Provenance *report.Provenance `json:"provenance"`
}

// netSnap is the relay's counters at one moment: per direction, the
// datagrams by outcome and the delay histogram (cumulative counts by
// upper bound, sum and count).
type netSnap struct {
	seq      int
	outcomes map[string]map[string]float64
	delay    map[string]delaySnap
}

type delaySnap struct {
	upper []float64 // increasing; the last is +Inf
	cum   []float64 // cumulative counts
	sum   float64
	count float64
}

// soakRecorder keeps the relay's counters at each phase's start, at the
// trip and at the end, and samples the trip's window over the run.
type soakRecorder struct {
	b        *bench
	monStart time.Time

	mu     sync.Mutex
	seq    int
	starts map[int]*netSnap
	trip   *netSnap
	end    *netSnap

	twEvery  float64
	twPoints []twPoint
	twDone   bool
}

type twPoint struct{ elapsed, mean, predicted float64 }

// tripWindowEvery is how often the soak samples the trip's window.
const tripWindowEvery = 100 * time.Millisecond

// maxTripWindowPoints bounds the trip window's samples; beyond it pairs
// are merged, keeping the larger (the peaks are what a trip is about).
const maxTripWindowPoints = 8192

func newSoakRecorder(b *bench) *soakRecorder {
	return &soakRecorder{b: b, monStart: b.mon.Started(), starts: map[int]*netSnap{},
		twEvery: tripWindowEvery.Seconds()}
}

// snap reads the relay's counters now.
func (r *soakRecorder) snap() *netSnap {
	s := &netSnap{outcomes: r.b.relayCounts(), delay: map[string]delaySnap{}}
	fams, err := r.b.reg.Gather()
	if err != nil {
		return s
	}
	for _, f := range fams {
		if f.GetName() != "rigwire_relay_delay_seconds" {
			continue
		}
		for _, m := range f.GetMetric() {
			dir := ""
			for _, l := range m.GetLabel() {
				if l.GetName() == "direction" {
					dir = l.GetValue()
				}
			}
			h := m.GetHistogram()
			if h == nil {
				continue
			}
			bs := h.GetBucket()
			sort.Slice(bs, func(i, j int) bool { return bs[i].GetUpperBound() < bs[j].GetUpperBound() })
			var ds delaySnap
			for _, bk := range bs {
				ds.upper = append(ds.upper, bk.GetUpperBound())
				ds.cum = append(ds.cum, float64(bk.GetCumulativeCount()))
			}
			ds.upper = append(ds.upper, math.Inf(1))
			ds.cum = append(ds.cum, float64(h.GetSampleCount()))
			ds.sum, ds.count = h.GetSampleSum(), float64(h.GetSampleCount())
			s.delay[dir] = ds
		}
	}
	return s
}

func (r *soakRecorder) mark(s *netSnap) *netSnap {
	r.seq++
	s.seq = r.seq
	return s
}

// phaseStart records the counters as phase k starts.
func (r *soakRecorder) phaseStart(k int) {
	s := r.snap()
	r.mu.Lock()
	defer r.mu.Unlock()
	if r.trip == nil {
		r.starts[k] = r.mark(s)
	}
}

// tripped records the counters as the trip fires (the soak's loop sees it
// within a moment; what the relay handled in that moment is counted
// before the trip).
func (r *soakRecorder) tripped() {
	s := r.snap()
	r.mu.Lock()
	defer r.mu.Unlock()
	if r.trip == nil {
		r.trip = r.mark(s)
	}
}

// finish records the counters at the end of the run.
func (r *soakRecorder) finish() {
	s := r.snap()
	r.mu.Lock()
	defer r.mu.Unlock()
	r.end = r.mark(s)
}

// sampleTripWindow records the trip's windowed mean now; after the trip
// fired it records the frozen window once (the value that fired) and
// stops.
func (r *soakRecorder) sampleTripWindow() {
	w, ok := r.b.mon.TripWindow()
	if !ok {
		return
	}
	r.mu.Lock()
	defer r.mu.Unlock()
	if r.twDone {
		return
	}
	r.twDone = w.Fired
	r.twPoints = append(r.twPoints, twPoint{time.Since(r.monStart).Seconds(), w.Mean, w.Predicted})
	if len(r.twPoints) >= maxTripWindowPoints {
		merged := r.twPoints[:0]
		for i := 0; i+1 < len(r.twPoints); i += 2 {
			a, b := r.twPoints[i], r.twPoints[i+1]
			if math.IsNaN(a.mean) || b.mean > a.mean {
				a = b
			}
			merged = append(merged, a)
		}
		r.twPoints = merged
		r.twEvery *= 2
	}
}

// tripWindow is the trip's windowed quantity for the report: the ratio
// when the trip judges one (or fired on it), else the second moment.
func (r *soakRecorder) tripWindow(t trip.Rule, ev *trip.Event) *report.TripWindow {
	r.mu.Lock()
	defer r.mu.Unlock()
	if len(r.twPoints) == 0 {
		return nil
	}
	w := &report.TripWindow{Quantity: "second_moment", Bound: t.MaxSecondMoment, Every: r.twEvery,
		Seconds: t.Window}
	if w.Seconds == 0 {
		w.Seconds = trip.DefaultWindow
	}
	if (t.MaxRatio > 0 && (ev == nil || ev.Reason != trip.ReasonSecondMoment)) || t.MaxSecondMoment == 0 {
		w.Quantity, w.Bound = "ratio", t.MaxRatio
	}
	for _, p := range r.twPoints {
		v := p.mean
		if w.Quantity == "ratio" {
			v = p.mean / p.predicted
		}
		w.Points = append(w.Points, report.TripPoint{Elapsed: p.elapsed, Value: v})
	}
	return w
}

// upper is the first snapshot after from among the later phase starts,
// the trip and the end.
func (r *soakRecorder) upper(from *netSnap) *netSnap {
	var best *netSnap
	consider := func(s *netSnap) {
		if s != nil && s.seq > from.seq && (best == nil || s.seq < best.seq) {
			best = s
		}
	}
	for _, s := range r.starts {
		consider(s)
	}
	consider(r.trip)
	consider(r.end)
	return best
}

// phaseMeasure is what the relay counted per direction during phase k
// (up to the trip when the trip cut it).
func (r *soakRecorder) phaseMeasure(k int) []report.DirectionMeasure {
	r.mu.Lock()
	defer r.mu.Unlock()
	from := r.starts[k]
	if from == nil {
		return nil
	}
	to := r.upper(from)
	if to == nil {
		return nil
	}
	var out []report.DirectionMeasure
	for _, dir := range []string{profiles.SensorToController, profiles.ControllerToActuator} {
		m := report.DirectionMeasure{Direction: dir, DelayMedian: math.NaN()}
		for outcome, v := range to.outcomes[dir] {
			n := int64(math.Round(v - from.outcomes[dir][outcome]))
			m.Datagrams += n
			switch outcome {
			case "forwarded":
			case "dropped":
				m.Dropped += n
			default:
				m.Other += n
			}
		}
		a, b := from.delay[dir], to.delay[dir]
		m.Delays = int64(math.Round(b.count - a.count))
		m.DelaySum = b.sum - a.sum
		if h, ok := diffHistogram(a, b); ok {
			m.DelayMedian = histMedian(h)
		}
		out = append(out, m)
	}
	return out
}

// diffHistogram is the non-cumulative histogram of the delays between two
// snapshots.
func diffHistogram(a, b delaySnap) (report.Histogram, bool) {
	if len(b.upper) == 0 {
		return report.Histogram{}, false
	}
	var h report.Histogram
	prev := 0.0
	for i, u := range b.upper {
		c := b.cum[i]
		if i < len(a.cum) && len(a.upper) == len(b.upper) {
			c -= a.cum[i]
		}
		h.Upper = append(h.Upper, u)
		h.Counts = append(h.Counts, math.Max(c-prev, 0))
		prev = c
	}
	return h, true
}

// histMedian reads the median off a histogram, linear within its bucket
// (the first bucket from 0); NaN when empty or in the overflow bucket.
func histMedian(h report.Histogram) float64 {
	total := 0.0
	for _, c := range h.Counts {
		total += c
	}
	if total == 0 {
		return math.NaN()
	}
	half, cum, lo := total/2, 0.0, 0.0
	for i, c := range h.Counts {
		hi := h.Upper[i]
		if cum+c >= half && c > 0 {
			if math.IsInf(hi, 1) {
				return math.NaN()
			}
			return lo + (hi-lo)*(half-cum)/c
		}
		cum += c
		lo = hi
	}
	return math.NaN()
}

// delays are the drawn-delay histograms for the report: up to the trip
// (or the end), and after the trip apart.
func (r *soakRecorder) delays() (during, after map[string]report.Histogram) {
	r.mu.Lock()
	defer r.mu.Unlock()
	during, after = map[string]report.Histogram{}, map[string]report.Histogram{}
	cut := r.trip
	if cut == nil {
		cut = r.end
	}
	if cut == nil {
		return during, after
	}
	for dir, ds := range cut.delay {
		if h, ok := diffHistogram(delaySnap{}, ds); ok {
			during[dir] = h
		}
		if r.trip != nil && r.end != nil {
			if h, ok := diffHistogram(ds, r.end.delay[dir]); ok {
				after[dir] = h
			}
		}
	}
	return during, after
}

// relayHistogram reads a relay histogram by direction from the registry,
// as non-cumulative bucket counts.
func (b *bench) relayHistogram(name string) map[string]report.Histogram {
	out := map[string]report.Histogram{}
	fams, err := b.reg.Gather()
	if err != nil {
		return out
	}
	for _, f := range fams {
		if f.GetName() != name {
			continue
		}
		for _, m := range f.GetMetric() {
			dir := ""
			for _, l := range m.GetLabel() {
				if l.GetName() == "direction" {
					dir = l.GetValue()
				}
			}
			h := m.GetHistogram()
			if h == nil {
				continue
			}
			var rh report.Histogram
			prev := 0.0
			bs := h.GetBucket()
			sort.Slice(bs, func(i, j int) bool { return bs[i].GetUpperBound() < bs[j].GetUpperBound() })
			for _, bk := range bs {
				c := float64(bk.GetCumulativeCount())
				rh.Upper = append(rh.Upper, bk.GetUpperBound())
				rh.Counts = append(rh.Counts, c-prev)
				prev = c
			}
			rh.Upper = append(rh.Upper, math.Inf(1))
			rh.Counts = append(rh.Counts, float64(h.GetSampleCount())-prev)
			out[dir] = rh
		}
	}
	return out
}
