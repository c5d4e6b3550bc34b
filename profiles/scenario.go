package profiles

// Loading scenario files (types in scenario_types.go). A scenario keeps
// the YAML tree of each phase's profile; every step's profile is built by
// copying that tree, patching the overridden keys (set, ramp and, for the
// prediction, predict_with) and parsing the result with the profile
// parser, so a patched profile passes every check a profile file does.

import (
	"errors"
	"fmt"
	"math"
	"path/filepath"
	"regexp"
	"rigwire/profiles/laws"
	"rigwire/profiles/markov"
	"rigwire/profiles/trace"
	"rigwire/profiles/yamlpos"
	"strconv"
	"strings"
	"time"

	"gopkg.in/yaml.v3"
)

// Limits of the scenario format.
const (
	// MaxScenarioSteps bounds the steps of a whole scenario (Steps).
	MaxScenarioSteps = 10000
	// MaxScenarioValues bounds what the steps of a whole scenario hold
	// together: every step builds its own profile, so a phase counts its
	// steps times the values of its profile (the YAML values of its tree
	// with the phase's overrides, plus the delays its laws hold, inline
	// or read from sample and trace files), twice with predict_with. A
	// scenario over it is refused at load, before any step is built.
	// Two million values hold about 50 MB once built; a profile of a
	// hundred values may ramp over the most steps a scenario may have
	// with room to spare.
	MaxScenarioValues = 2_000_000
	// MaxPhaseDuration bounds one phase's duration, seconds (7 days).
	MaxPhaseDuration = 7 * 86400.0
	// DefaultMinSamples is a check's min_samples when not given: 20
	// batches of 20 samples, the least the monitor's batch-means interval
	// can be judged on (20 batches is the fewest its estimator keeps;
	// batch means of 20 samples are nearly independent for an error
	// whose correlation time is up to about ten periods). A phase with
	// fewer judged samples is inconclusive, not passed.
	DefaultMinSamples = 400
)

// DefaultRampStep is a scenario's ramp_step when not given.
const DefaultRampStep = time.Second

var phaseName = regexp.MustCompile(`^[a-z0-9_-]+$`)

// profileSource is where a phase's profile comes from: its YAML mapping
// and the directory its relative paths are resolved against.
type profileSource struct {
	weight int64 // values the profile holds: its tree's and its laws' delays
	node   *yaml.Node
	file   string // the profile's file for messages (the scenario's when inline)
	path   string // the profile file's path, "" when inline
	dir    string
}

// override is one dotted key of set, ramp or predict_with.
type override struct {
	name  string        // the dotted key as written
	comps []string      // its components
	key   yamlpos.Field // position of the key: Path "phases[1].set.a.b", Line of the key
	value *yaml.Node
	// A ramp's ends: the nodes as written and their values (seconds for
	// durations).
	ramp     bool
	from, to *yaml.Node
	fromV    float64
	toV      float64
}

// phaseSource is what a phase needs to build its profiles.
type phaseSource struct {
	prof    profileSource
	weight  int64 // values one step's profile holds (see MaxScenarioValues)
	sets    []override
	ramps   []override
	predict []override
}

// LoadScenario reads and validates the scenario file at path. Profile
// paths in it are resolved against the file's directory. Errors name the
// file, the line and the key path:
//
//	conveyor.yaml:14: phases[1].ramp.sensor_to_controller.loss: at the phase end (to: 1.5): sensor_to_controller.loss: want a number in [0, 1], got "1.5"
func LoadScenario(path string) (*Scenario, error) {
	data, err := yamlpos.ReadInputFile(path, "scenario", yamlpos.MaxYAMLBytes)
	if err != nil {
		return nil, err
	}
	s, err := ParseScenario(data, path, filepath.Dir(path))
	if err != nil {
		return nil, err
	}
	s.File = path
	return s, nil
}

// ParseScenario validates a scenario held in memory. file names it in
// messages; dir is the directory profile paths are resolved against.
// Every phase's profile is built at the phase's start and end (and with
// its predict_with overrides) so that a scenario that loads plays without
// errors: ramps are linear, and the profile's bounds on a ramped number
// are intervals, so values in between are valid too.
func ParseScenario(data []byte, file, dir string) (*Scenario, error) {
	root, err := yamlpos.Document(file, data)
	if err != nil {
		return nil, err
	}
	return parseScenario(root, dir)
}

func parseScenario(root yamlpos.Field, dir string) (*Scenario, error) {
	keys, err := root.Mapping("name", "profile", "settle", "ramp_step", "phases")
	if err != nil {
		return nil, err
	}
	for _, k := range []string{"profile", "phases"} {
		if keys[k].IsZero() {
			return nil, missing(root, k)
		}
	}
	s := &Scenario{File: root.File, RampStep: DefaultRampStep}
	if f, ok := keys["name"]; ok {
		if s.Name, err = f.Text(); err != nil {
			return nil, err
		}
	}
	base, baseProf, err := profileFrom(keys["profile"], dir)
	if err != nil {
		return nil, err
	}
	s.Base = baseProf
	if f := keys["settle"]; !f.IsNull() {
		v, err := f.DurationIn(0, MaxPhaseDuration)
		if err != nil {
			return nil, err
		}
		s.Settle = seconds(v)
	}
	if f := keys["ramp_step"]; !f.IsNull() {
		v, err := f.PositiveDurationMax(MaxPhaseDuration)
		if err != nil {
			return nil, err
		}
		s.RampStep = seconds(v)
		if s.RampStep <= 0 {
			return nil, f.Errorf("want a duration ≥ 1ns, got %s", f.Got())
		}
	}
	pf := keys["phases"]
	items, err := pf.Seq()
	if err != nil {
		return nil, err
	}
	if len(items) == 0 {
		return nil, pf.Errorf("want at least one phase, got none")
	}
	names := map[string]bool{}
	for i, it := range items {
		ph, src, err := parsePhase(it, i, s, base, dir)
		if err != nil {
			return nil, err
		}
		if names[ph.Name] {
			return nil, &yamlpos.Error{File: it.File, Line: ph.Line, Key: it.Key("name"), Msg: fmt.Sprintf("phase name %q used twice", ph.Name)}
		}
		names[ph.Name] = true
		s.Phases = append(s.Phases, ph)
		s.src = append(s.src, src)
	}
	if n, err := s.stepCount(); err != nil {
		return nil, &yamlpos.Error{File: root.File, Line: keys["ramp_step"].Line(), Key: "ramp_step", Msg: err.Error()}
	} else if n > MaxScenarioSteps {
		return nil, &yamlpos.Error{File: root.File, Line: keys["ramp_step"].Line(), Key: "ramp_step",
			Msg: fmt.Sprintf("want at most %d steps in the scenario, got %d with ramp_step %s; want a longer ramp_step", MaxScenarioSteps, n, s.RampStep)}
	}
	if err := s.checkValues(); err != nil {
		return nil, err
	}
	// Validate every phase at its ends.
	for i := range s.Phases {
		ends := []float64{0}
		if len(s.Phases[i].Ramps) > 0 {
			ends = append(ends, 1)
		}
		for _, frac := range ends {
			p, err := s.build(i, frac, nil)
			if err != nil {
				return nil, err
			}
			if s.Phases[i].HasPredictWith {
				if _, err := s.build(i, frac, p); err != nil {
					return nil, err
				}
			}
		}
	}
	return s, nil
}

func seconds(v float64) time.Duration { return time.Duration(math.Round(v * 1e9)) }

// profileFrom reads a scenario's profile key: a path relative to dir or
// an inline mapping.
func profileFrom(f yamlpos.Field, dir string) (profileSource, *Profile, error) {
	switch {
	case f.IsNull():
		return profileSource{}, nil, f.Errorf("want a profile file (a path) or an inline profile (a mapping), got %s", f.Got())
	case f.Node.Kind == yaml.ScalarNode:
		rel, err := f.Text()
		if err != nil {
			return profileSource{}, nil, err
		}
		path := rel
		if !filepath.IsAbs(path) && dir != "" {
			path = filepath.Join(dir, path)
		}
		data, err := yamlpos.ReadInputFile(path, "profile", yamlpos.MaxYAMLBytes)
		if err != nil {
			return profileSource{}, nil, f.Errorf("%v", err)
		}
		root, err := yamlpos.Document(path, data)
		if err != nil {
			return profileSource{}, nil, f.Errorf("%v", err)
		}
		p, err := parseProfile(root, filepath.Dir(path))
		if err != nil {
			return profileSource{}, nil, f.Errorf("%v", err)
		}
		p.File = path
		return profileSource{weight: treeSize(root.Node) + p.heldDelays(), node: root.Node, file: path, path: path, dir: filepath.Dir(path)}, p, nil
	default:
		p, err := ParseField(f, dir)
		if err != nil {
			return profileSource{}, nil, err
		}
		return profileSource{weight: treeSize(f.Node) + p.heldDelays(), node: f.Node, file: f.File, dir: dir}, p, nil
	}
}

// pair is one key of a mapping with the key's own line.
type pair struct {
	name string
	line int
	val  yamlpos.Field
}

// pairs returns a mapping's keys in file order; duplicates are errors.
func pairs(f yamlpos.Field) ([]pair, error) {
	if f.IsNull() {
		return nil, nil
	}
	if f.Node.Kind != yaml.MappingNode {
		return nil, f.Errorf("want a mapping, got %s", f.Got())
	}
	var out []pair
	seen := map[string]bool{}
	for i := 0; i+1 < len(f.Node.Content); i += 2 {
		k := yamlpos.Resolve(f.Node.Content[i])
		if k == nil || k.Kind != yaml.ScalarNode {
			return nil, &yamlpos.Error{File: f.File, Line: f.Node.Content[i].Line, Key: f.Path, Msg: "want a plain key, got a mapping or sequence as key"}
		}
		if seen[k.Value] {
			return nil, &yamlpos.Error{File: f.File, Line: k.Line, Key: f.Path, Msg: fmt.Sprintf("key %s given twice", yamlpos.Token(k.Value))}
		}
		seen[k.Value] = true
		v := yamlpos.NodeField(f.File, f.Key(k.Value), f.Node.Content[i+1])
		if v.Node == nil {
			v.Node = &yaml.Node{Kind: yaml.ScalarNode, Tag: "!!null", Line: k.Line}
		}
		out = append(out, pair{name: k.Value, line: k.Line, val: v})
	}
	return out, nil
}

func parsePhase(f yamlpos.Field, i int, s *Scenario, base profileSource, dir string) (Phase, phaseSource, error) {
	ph := Phase{Index: i, Line: f.Line(), Settle: s.Settle, Check: Check{MinSamples: DefaultMinSamples}}
	src := phaseSource{prof: base}
	keys, err := f.Mapping("name", "duration", "settle", "profile", "set", "ramp", "predict_with", "check", "frequency")
	if err != nil {
		return ph, src, err
	}
	for _, k := range []string{"name", "duration"} {
		if keys[k].IsZero() {
			return ph, src, missing(f, k)
		}
	}
	nf := keys["name"]
	if ph.Name, err = nf.Text(); err != nil {
		return ph, src, err
	}
	if !phaseName.MatchString(ph.Name) {
		return ph, src, nf.Errorf("want a name of a-z, 0-9, _ and -, got %s", nf.Got())
	}
	ph.Line = nf.Line()
	d, err := keys["duration"].PositiveDurationMax(MaxPhaseDuration)
	if err != nil {
		return ph, src, err
	}
	if ph.Duration = seconds(d); ph.Duration <= 0 {
		return ph, src, keys["duration"].Errorf("want a duration ≥ 1ns, got %s", keys["duration"].Got())
	}
	if g := keys["settle"]; !g.IsNull() {
		v, err := g.DurationIn(0, MaxPhaseDuration)
		if err != nil {
			return ph, src, err
		}
		ph.Settle = seconds(v)
	}
	if g, ok := keys["profile"]; ok {
		if src.prof, _, err = profileFrom(g, dir); err != nil {
			return ph, src, err
		}
	}
	if src.sets, err = parseOverrides(keys["set"], false); err != nil {
		return ph, src, err
	}
	if src.ramps, err = parseOverrides(keys["ramp"], true); err != nil {
		return ph, src, err
	}
	for _, r := range src.ramps {
		ph.Ramps = append(ph.Ramps, Ramp{Key: r.name, From: r.fromV, To: r.toV, Line: r.key.Line()})
	}
	src.weight = src.prof.weight
	for _, o := range append(append([]override(nil), src.sets...), src.ramps...) {
		src.weight += treeSize(o.value)
	}
	if g, ok := keys["predict_with"]; ok {
		if src.predict, err = parseOverrides(g, false); err != nil {
			return ph, src, err
		}
		ph.HasPredictWith = true
		for _, o := range src.predict {
			src.weight += treeSize(o.value)
		}
	}
	if g, ok := keys["check"]; ok {
		if ph.Check, err = parseCheck(g); err != nil {
			return ph, src, err
		}
	}
	if g := keys["frequency"]; !g.IsNull() {
		v, err := g.Positive()
		if err != nil {
			return ph, src, g.Errorf("want a frequency in Hz > 0 (one of the loop's sweep reference), got %s", g.Got())
		}
		ph.Check.Frequency, ph.FrequencyLine = v, g.Line()
	}
	return ph, src, nil
}

func parseCheck(f yamlpos.Field) (Check, error) {
	c := Check{MinSamples: DefaultMinSamples}
	keys, err := f.Mapping("tolerance", "max_second_moment", "min_samples")
	if err != nil {
		return c, err
	}
	if g := keys["tolerance"]; !g.IsNull() {
		v, err := g.FloatIn(0, math.Inf(1))
		if err != nil {
			return c, err
		}
		c.Tolerance = &v
	}
	if g := keys["max_second_moment"]; !g.IsNull() {
		v, err := g.Positive()
		if err != nil {
			return c, err
		}
		c.MaxSecondMoment = &v
	}
	if g := keys["min_samples"]; !g.IsNull() {
		n, err := g.Int()
		if err != nil || n < 2 {
			return c, g.Errorf("want a whole number ≥ 2, got %s", g.Got())
		}
		c.MinSamples = n
	}
	return c, nil
}

// parseOverrides reads set, predict_with (ramp false) or ramp: a mapping
// from dotted keys to values, or to {from, to}.
func parseOverrides(f yamlpos.Field, ramp bool) ([]override, error) {
	ps, err := pairs(f)
	if err != nil {
		return nil, err
	}
	var out []override
	for _, p := range ps {
		key := yamlpos.Field{File: f.File, Path: f.Key(p.name), Node: &yaml.Node{Kind: yaml.ScalarNode, Line: p.line, Value: p.name}}
		comps := strings.Split(p.name, ".")
		for _, c := range comps {
			if c == "" {
				return nil, key.Errorf("want a dotted key of the profile (sensor_to_controller.loss), got %s", yamlpos.Token(p.name))
			}
		}
		if comps[0] == "seed" {
			return nil, key.Errorf("the base profile's seed holds for the whole scenario; want no seed here")
		}
		o := override{name: p.name, comps: comps, key: key, value: p.val.Node}
		if ramp {
			if err := parseRampEnds(p.val, &o); err != nil {
				return nil, err
			}
		}
		out = append(out, o)
	}
	return out, nil
}

func parseRampEnds(f yamlpos.Field, o *override) error {
	keys, err := f.Mapping("from", "to")
	if err != nil {
		return err
	}
	for _, k := range []string{"from", "to"} {
		if keys[k].IsZero() {
			return missing(f, k)
		}
	}
	fr, to := keys["from"], keys["to"]
	a, errA := fr.Float()
	b, errB := to.Float()
	if errA == nil && errB == nil {
		o.ramp, o.from, o.to, o.fromV, o.toV = true, fr.Node, to.Node, a, b
		return nil
	}
	// Durations: both written as durations ("1ms"), not plain numbers.
	a, errA = fr.Duration()
	b, errB = to.Duration()
	if errA != nil {
		return fr.Errorf("want a number or a duration, got %s", fr.Got())
	}
	if errB != nil {
		return to.Errorf("want a number or a duration, got %s", to.Got())
	}
	_, numA := fr.AsFloat()
	_, numB := to.AsFloat()
	if numA || numB {
		return f.Errorf("want from and to of the same kind (two numbers or two durations), got %s and %s", fr.Got(), to.Got())
	}
	o.ramp, o.from, o.to, o.fromV, o.toV = true, fr.Node, to.Node, a, b
	return nil
}

// copyNode deep-copies a tree, expanding aliases.
func copyNode(n *yaml.Node) *yaml.Node {
	n = yamlpos.Resolve(n)
	if n == nil {
		return &yaml.Node{Kind: yaml.ScalarNode, Tag: "!!null"}
	}
	c := *n
	c.Anchor = ""
	c.Content = make([]*yaml.Node, len(n.Content))
	for i, k := range n.Content {
		c.Content[i] = copyNode(k)
	}
	return &c
}

// patch sets the dotted key o.comps in the tree root to val and returns
// the key path of the patched node in the profile parser's spelling
// ("sensor_to_controller.states[1].loss"). A sequence component is an
// item's name (states) or a 0-based index (parts); the last component may
// be a key new to its mapping.
func patch(root *yaml.Node, o override, val *yaml.Node) (string, error) {
	n, path := root, ""
	for i, c := range o.comps {
		last := i == len(o.comps)-1
		if n.Kind == yaml.ScalarNode && n.Tag == "!!null" && !last {
			*n = yaml.Node{Kind: yaml.MappingNode, Tag: "!!map", Line: n.Line}
		}
		switch n.Kind {
		case yaml.MappingNode:
			path = joinKey(path, c)
			found := -1
			for j := 0; j+1 < len(n.Content); j += 2 {
				if n.Content[j].Value == c {
					found = j + 1
					break
				}
			}
			switch {
			case found >= 0 && last:
				n.Content[found] = val
			case found >= 0:
				n = n.Content[found]
			case last:
				n.Content = append(n.Content, &yaml.Node{Kind: yaml.ScalarNode, Tag: "!!str", Value: c, Line: o.key.Line()}, val)
			default:
				return "", o.key.Errorf("no key %s in the profile at %s", yamlpos.Token(c), where(path))
			}
		case yaml.SequenceNode:
			idx := -1
			if k, err := strconv.Atoi(c); err == nil && k >= 0 && strconv.Itoa(k) == c {
				if k >= len(n.Content) {
					return "", o.key.Errorf("no item %d in the list at %s (it has %d)", k, where(path), len(n.Content))
				}
				idx = k
			} else {
				for j, it := range n.Content {
					if it.Kind != yaml.MappingNode {
						continue
					}
					for m := 0; m+1 < len(it.Content); m += 2 {
						if it.Content[m].Value == "name" && it.Content[m+1].Value == c {
							idx = j
						}
					}
				}
				if idx < 0 {
					return "", o.key.Errorf("no item named %s in the list at %s", yamlpos.Token(c), where(path))
				}
			}
			path = fmt.Sprintf("%s[%d]", path, idx)
			if last {
				n.Content[idx] = val
			} else {
				n = n.Content[idx]
			}
		default:
			return "", o.key.Errorf("cannot go into %s: the profile's %s is a single value", yamlpos.Token(c), where(path))
		}
	}
	return path, nil
}

func joinKey(path, k string) string {
	if path == "" {
		return k
	}
	return path + "." + k
}

func where(path string) string {
	if path == "" {
		return "its top"
	}
	return path
}

// rampNode is a ramp's value at frac: the nodes as written at the ends,
// else a number (seconds for durations).
func rampNode(o override, frac float64) *yaml.Node {
	switch frac {
	case 0:
		return copyNode(o.from)
	case 1:
		return copyNode(o.to)
	}
	v := o.fromV + (o.toV-o.fromV)*frac
	return &yaml.Node{Kind: yaml.ScalarNode, Tag: "!!float", Value: strconv.FormatFloat(v, 'g', -1, 64), Line: o.key.Line()}
}

// applied is an override patched into a tree, with the patched node's
// key path.
type applied struct {
	o    override
	path string
	desc string // what the message says before the profile's complaint
}

// build returns phase i's profile at frac of the phase: the relay's
// profile when relay is nil, else the prediction's profile (relay with
// the phase's predict_with on top; relay must be the relay's profile at
// the same frac).
func (s *Scenario) build(i int, frac float64, relay *Profile) (*Profile, error) {
	src := s.src[i]
	root := copyNode(src.prof.node)
	var done []applied
	put := func(list []override, desc func(override) string, val func(override) *yaml.Node) error {
		for _, o := range list {
			path, err := patch(root, o, val(o))
			if err != nil {
				return err
			}
			done = append(done, applied{o: o, path: path, desc: desc(o)})
		}
		return nil
	}
	setDesc := func(o override) string {
		switch {
		case len(src.ramps) == 0:
			return ""
		case frac == 0:
			return "at the phase start: "
		case frac == 1:
			return "at the phase end: "
		}
		return fmt.Sprintf("at %s of the phase: ", strconv.FormatFloat(frac, 'g', 4, 64))
	}
	set := func(o override) *yaml.Node { return copyNode(o.value) }
	blameFrom := 0
	if err := put(src.sets, setDesc, set); err != nil {
		return nil, err
	}
	rampDesc := func(o override) string {
		switch frac {
		case 0:
			return fmt.Sprintf("at the phase start (from: %s): ", o.from.Value)
		case 1:
			return fmt.Sprintf("at the phase end (to: %s): ", o.to.Value)
		}
		return fmt.Sprintf("at %s of the phase (%s): ", strconv.FormatFloat(frac, 'g', 4, 64), rampNode(o, frac).Value)
	}
	if err := put(src.ramps, rampDesc, func(o override) *yaml.Node { return rampNode(o, frac) }); err != nil {
		return nil, err
	}
	if relay != nil {
		blameFrom = len(done)
		if err := put(src.predict, func(override) string { return "" }, set); err != nil {
			return nil, err
		}
	}
	p, err := parseProfile(yamlpos.NodeField(src.prof.file, "", root), src.prof.dir)
	if err != nil {
		a, ok := blame(err, done[blameFrom:])
		if !ok {
			return nil, &yamlpos.Error{File: s.File, Line: s.Phases[i].Line, Key: fmt.Sprintf("phases[%d]", i), Msg: "profile: " + inner(err), Err: err}
		}
		return nil, &yamlpos.Error{File: a.o.key.File, Line: a.o.key.Line(), Key: a.o.key.Path, Msg: a.desc + inner(err), Err: err}
	}
	if len(done) == 0 {
		p.File = src.prof.path
	}
	if s.Base != nil {
		p.Seed, p.HasSeed = s.Base.Seed, s.Base.HasSeed
	}
	return p, nil
}

// inner is a profile error without its position (the scenario's key gives
// it): "sensor_to_controller.loss: want a number in [0, 1], got "1.5"".
func inner(err error) string {
	var e *yamlpos.Error
	if errors.As(err, &e) {
		if e.Key != "" {
			return e.Key + ": " + e.Msg
		}
		return e.Msg
	}
	return err.Error()
}

// blame picks the override a profile error is about: the one whose
// patched node holds the offending key (the deepest such), else the last
// one patched inside the offending key's subtree.
func blame(err error, done []applied) (applied, bool) {
	var e *yamlpos.Error
	key := ""
	if errors.As(err, &e) {
		key = e.Key
	}
	under := func(a, b string) bool { // a is b or inside b
		return b == "" || a == b || strings.HasPrefix(a, b+".") || strings.HasPrefix(a, b+"[")
	}
	best, bestLen := -1, -1
	for j, a := range done {
		if under(key, a.path) && len(a.path) > bestLen {
			best, bestLen = j, len(a.path)
		}
	}
	if best < 0 {
		for j, a := range done {
			if under(a.path, key) {
				best = j
			}
		}
	}
	if best < 0 {
		if len(done) == 0 {
			return applied{}, false
		}
		best = len(done) - 1
	}
	return done[best], true
}

// Total is the scenario's length: the sum of its phases' durations.
func (s *Scenario) Total() time.Duration {
	var t time.Duration
	for _, ph := range s.Phases {
		t += ph.Duration
	}
	return t
}

// phaseSteps is the number of steps of a phase: one, or with ramps one
// every RampStep from its start while before its end.
func (s *Scenario) phaseSteps(ph Phase) int64 {
	if len(ph.Ramps) == 0 {
		return 1
	}
	step := s.RampStep
	if step <= 0 {
		step = 1
	}
	return int64((ph.Duration + step - 1) / step)
}

func (s *Scenario) stepCount() (int64, error) {
	var n int64
	for _, ph := range s.Phases {
		n += s.phaseSteps(ph)
		if n > MaxScenarioSteps {
			return n, nil
		}
	}
	return n, nil
}

// Steps returns the scenario's steps in time order (see ScenarioStep).
// A phase without ramps has one step at its start; a phase with ramps has
// one at its start and one every RampStep after while before its end, each
// with the ramped values at that fraction of the phase. Every profile
// keeps the base profile's seed. Predict is Profile unless the phase has
// predict_with.
func (s *Scenario) Steps() ([]ScenarioStep, error) {
	n, _ := s.stepCount()
	if n > MaxScenarioSteps {
		return nil, &yamlpos.Error{File: s.File, Key: "ramp_step", Msg: fmt.Sprintf("want at most %d steps in the scenario, got more with ramp_step %s", MaxScenarioSteps, s.RampStep)}
	}
	if err := s.checkValues(); err != nil {
		return nil, err
	}
	out := make([]ScenarioStep, 0, n)
	var start time.Duration
	for i, ph := range s.Phases {
		count := s.phaseSteps(ph)
		for k := int64(0); k < count; k++ {
			el := time.Duration(k) * s.RampStep
			frac := 0.0
			if k > 0 {
				frac = float64(el) / float64(ph.Duration)
			}
			p, err := s.build(i, frac, nil)
			if err != nil {
				return nil, err
			}
			pred := p
			if ph.HasPredictWith {
				if pred, err = s.build(i, frac, p); err != nil {
					return nil, err
				}
			}
			out = append(out, ScenarioStep{At: start + el, Phase: i, Frac: frac, Profile: p, Predict: pred})
		}
		start += ph.Duration
	}
	return out, nil
}

// Scale returns a copy of the scenario with every phase's duration and
// settling time, the scenario's settling time and its ramp step
// multiplied by f (a short rehearsal of a long scenario, say). f must be
// > 0; Scale panics otherwise. Durations round to the nanosecond, and
// never below 1ns where a zero would be meaningless.
func (s *Scenario) Scale(f float64) *Scenario {
	if !(f > 0) || math.IsInf(f, 0) {
		panic(fmt.Sprintf("profiles: Scenario.Scale(%g): want a factor > 0", f))
	}
	mul := func(d time.Duration, min time.Duration) time.Duration {
		v := time.Duration(math.Round(float64(d) * f))
		if v < min {
			v = min
		}
		return v
	}
	c := *s
	c.Settle = mul(s.Settle, 0)
	c.RampStep = mul(s.RampStep, 1)
	c.Phases = make([]Phase, len(s.Phases))
	for i, ph := range s.Phases {
		ph.Duration = mul(ph.Duration, 1)
		ph.Settle = mul(ph.Settle, 0)
		ph.Ramps = append([]Ramp(nil), ph.Ramps...)
		c.Phases[i] = ph
	}
	c.src = append([]phaseSource(nil), s.src...)
	return &c
}

// checkValues refuses a scenario whose steps together would hold more
// than MaxScenarioValues values, naming the phase that holds the most.
func (s *Scenario) checkValues() error {
	var total, most int64
	worst := 0
	for i, ph := range s.Phases {
		n := s.phaseSteps(ph)
		if ph.HasPredictWith {
			n *= 2
		}
		v := n * s.src[i].weight
		if n > 0 && v/n != s.src[i].weight || v < 0 {
			v = math.MaxInt64 // cannot happen within MaxScenarioSteps; kept safe
		}
		if v > most {
			most, worst = v, i
		}
		if total += v; total < 0 {
			total = math.MaxInt64
		}
	}
	if total <= MaxScenarioValues {
		return nil
	}
	ph := s.Phases[worst]
	line, key := ph.Line, fmt.Sprintf("phases[%d]", worst)
	if len(ph.Ramps) > 0 {
		line, key = ph.Ramps[0].Line, fmt.Sprintf("phases[%d].ramp", worst)
	}
	twice := ""
	if ph.HasPredictWith {
		twice = " (twice, with predict_with)"
	}
	return &yamlpos.Error{File: s.File, Line: line, Key: key, Msg: fmt.Sprintf(
		"the scenario's steps would hold %d profile values, want at most %d: phase %s has %d steps of %d values each%s; want a longer ramp_step, fewer steps or a smaller profile (a delay list read from a file counts its delays)",
		total, MaxScenarioValues, yamlpos.Token(ph.Name), s.phaseSteps(ph), s.src[worst].weight, twice)}
}

// treeSize counts the values of a YAML tree with its aliases expanded
// (yamlpos.TreeSize; yamlpos.Document has already bounded the tree).
func treeSize(n *yaml.Node) int64 {
	c, _ := yamlpos.TreeSize(n, math.MaxInt)
	return int64(c)
}

// heldDelays counts the delays the profile's laws hold (empirical
// samples, a replayed trace's fates).
func (p *Profile) heldDelays() int64 {
	var n int64
	for _, c := range []*markov.Channel{p.SensorToController, p.ControllerToActuator} {
		if c == nil {
			continue
		}
		for _, st := range c.States {
			n += lawDelays(st.Delay)
		}
	}
	return n
}

func lawDelays(d laws.Delay) int64 {
	switch d := d.(type) {
	case *laws.Empirical:
		return int64(d.Len())
	case *trace.Replay:
		return int64(len(d.Lost)) + lawDelays(d.Delay)
	case *laws.Shifted:
		return lawDelays(d.Base)
	case *laws.Mixture:
		var n int64
		for _, p := range d.Parts {
			n += lawDelays(p)
		}
		return n
	}
	return 0
}
