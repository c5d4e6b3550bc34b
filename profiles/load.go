package profiles

import (
	"fmt"
	"math"
	"path/filepath"
	"rigwire/profiles/laws"
	"rigwire/profiles/markov"
	"rigwire/profiles/yamlpos"
	"strconv"

	"gopkg.in/yaml.v3"
)

// Load reads and validates the profile file at path. Relative paths inside
// it (an empirical delay's file) are resolved against the file's
// directory. Errors name the file, the line and the key path:
//
//	pick.yaml:7: sensor_to_controller: unknown key "lossy" (want one of: loss, delay, states, trace)
func Load(path string) (*Profile, error) {
	data, err := yamlpos.ReadInputFile(path, "profile", yamlpos.MaxYAMLBytes)
	if err != nil {
		return nil, err
	}
	p, err := Parse(data, path, filepath.Dir(path))
	if err != nil {
		return nil, err
	}
	p.File = path
	return p, nil
}

// Parse validates a profile held in memory. file names it in messages; dir
// is the directory that relative paths inside it are resolved against.
func Parse(data []byte, file, dir string) (*Profile, error) {
	root, err := yamlpos.Document(file, data)
	if err != nil {
		return nil, err
	}
	return parseProfile(root, dir)
}

// ParseNode validates a profile given inline in another YAML file (the
// `profile` key of a loop description): node is the profile's mapping,
// file the enclosing file's name for messages, dir the directory for
// relative paths. Key paths in errors start at the profile's own keys;
// use ParseField to have them start with the enclosing key.
func ParseNode(node *yaml.Node, file, dir string) (*Profile, error) {
	return parseProfile(yamlpos.NodeField(file, "", node), dir)
}

// ParseField is ParseNode for a Field, keeping its key path in messages:
// `loop.yaml:14: profile.sensor_to_controller.loss: want a number in [0, 1], got "2"`.
func ParseField(f yamlpos.Field, dir string) (*Profile, error) {
	return parseProfile(f, dir)
}

func parseProfile(root yamlpos.Field, dir string) (*Profile, error) {
	if root.IsNull() {
		return nil, root.Errorf("want a profile (a mapping), got %s", root.Got())
	}
	if err := root.CheckSize(yamlpos.MaxNodes); err != nil {
		return nil, err
	}
	keys, err := root.Mapping("name", "seed", SensorToController, ControllerToActuator)
	if err != nil {
		return nil, err
	}
	p := &Profile{}
	if f, ok := keys["name"]; ok {
		if p.Name, err = f.Text(); err != nil {
			return nil, err
		}
	}
	if f, ok := keys["seed"]; ok {
		if p.Seed, err = f.Uint64(); err != nil {
			return nil, err
		}
		p.HasSeed = true
	}
	if p.SensorToController, err = parseChannel(keys[SensorToController], dir); err != nil {
		return nil, err
	}
	if p.ControllerToActuator, err = parseChannel(keys[ControllerToActuator], dir); err != nil {
		return nil, err
	}
	return p, nil
}

// Limits of the profile format, beyond the laws' own domains. They keep
// every accepted profile numerically sound (no draw or matrix exponential
// overflows) and are far outside what a network does.
const (
	MaxStates    = 64     // states of one direction's chain
	MinMeanDwell = 1e-6   // seconds: 1µs
	MaxMeanDwell = 864000 // seconds: 10 days
	MinShape     = 0.1    // gamma, weibull, pareto shapes
	MaxShape     = 1e4
	MaxSigma     = 10.0 // lognormal sigma
)

// Clean is a one-state channel that neither loses nor delays.
func Clean() *markov.Channel {
	return &markov.Channel{States: []markov.State{{Name: "clean", MeanDwell: math.Inf(1), Delay: laws.Constant{}}}}
}

func parseChannel(f yamlpos.Field, dir string) (*markov.Channel, error) {
	if f.IsNull() {
		return Clean(), nil
	}
	keys, err := f.Mapping("loss", "delay", "states", "trace")
	if err != nil {
		return nil, err
	}
	if tr, ok := keys["trace"]; ok {
		return parseTraceChannel(tr, keys, dir)
	}
	st, hasStates := keys["states"]
	if !hasStates {
		s, err := parseLossDelay(keys, dir)
		if err != nil {
			return nil, err
		}
		s.Name, s.MeanDwell = "iid", math.Inf(1)
		return &markov.Channel{States: []markov.State{s}}, nil
	}
	for _, k := range []string{"loss", "delay"} {
		if g, ok := keys[k]; ok {
			return nil, &yamlpos.Error{File: f.File, Line: g.Line(), Key: f.Path, Msg: fmt.Sprintf("want either states or loss/delay, got both (%s and states)", k)}
		}
	}
	return parseStates(st, dir)
}

// parseLossDelay reads the loss and delay keys shared by a plain direction
// and a state.
func parseLossDelay(keys map[string]yamlpos.Field, dir string) (markov.State, error) {
	s := markov.State{Delay: laws.Constant{}}
	var err error
	if f, ok := keys["loss"]; ok {
		if s.Loss, err = f.FloatIn(0, 1); err != nil {
			return s, err
		}
	}
	if f, ok := keys["delay"]; ok && !f.IsNull() {
		if s.Delay, err = parseDelay(f, dir, 0); err != nil {
			return s, err
		}
	}
	return s, nil
}

func parseStates(f yamlpos.Field, dir string) (*markov.Channel, error) {
	items, err := f.Seq()
	if err != nil {
		return nil, err
	}
	if len(items) == 0 {
		return nil, f.Errorf("want at least one state, got none")
	}
	if len(items) > MaxStates {
		return nil, f.Errorf("want at most %d states, got %d", MaxStates, len(items))
	}
	n := len(items)
	c := &markov.Channel{States: make([]markov.State, n)}
	index := make(map[string]int, n)
	nexts := make([]yamlpos.Field, n)
	for i, it := range items {
		keys, err := it.Mapping("name", "mean_dwell", "loss", "delay", "next")
		if err != nil {
			return nil, err
		}
		s, err := parseLossDelay(keys, dir)
		if err != nil {
			return nil, err
		}
		s.Name = "state" + strconv.Itoa(i)
		if g, ok := keys["name"]; ok {
			if s.Name, err = g.Text(); err != nil {
				return nil, err
			}
			if s.Name == "" {
				return nil, g.Errorf("want a non-empty name")
			}
		}
		if _, dup := index[s.Name]; dup {
			return nil, keys["name"].Errorf("state name %s used twice", yamlpos.Token(s.Name))
		}
		index[s.Name] = i
		s.MeanDwell = math.Inf(1)
		if g, ok := keys["mean_dwell"]; ok {
			if s.MeanDwell, err = g.DurationIn(MinMeanDwell, MaxMeanDwell); err != nil {
				return nil, err
			}
		} else if n > 1 {
			return nil, it.Errorf("missing mean_dwell (a duration > 0)")
		}
		if n == 1 {
			s.MeanDwell = math.Inf(1) // a lone state never leaves
		}
		if g, ok := keys["next"]; ok {
			if n == 1 {
				return nil, g.Errorf("a single state has no next")
			}
			nexts[i] = g
		} else if n > 2 {
			return nil, it.Errorf("missing next (with more than two states each needs next: {state: weight, …})")
		}
		c.States[i] = s
	}
	if n == 1 {
		return c, nil
	}
	for i := range c.States {
		jump := make([]float64, n)
		if nexts[i].IsZero() {
			jump[1-i] = 1 // two states: the other one
		} else {
			keys, err := nexts[i].Mapping(stateNames(c)...)
			if err != nil {
				return nil, err
			}
			total := 0.0
			for _, s := range c.States { // file order, for the first error
				g, ok := keys[s.Name]
				if !ok {
					continue
				}
				j := index[s.Name]
				if j == i {
					return nil, g.Errorf("a state cannot jump to itself")
				}
				w, err := g.FloatIn(0, math.Inf(1))
				if err != nil {
					return nil, err
				}
				jump[j] = w
				total += w
			}
			if !(total > 0) {
				return nil, nexts[i].Errorf("want weights ≥ 0, not all 0")
			}
			for j := range jump {
				jump[j] /= total
			}
		}
		c.States[i].Jump = jump
	}
	if i, j, ok := unreachable(c); ok {
		return nil, f.Errorf("state %s cannot be reached from state %s; want every state reachable from every other", yamlpos.Token(c.States[j].Name), yamlpos.Token(c.States[i].Name))
	}
	return c, nil
}

func stateNames(c *markov.Channel) []string {
	out := make([]string, len(c.States))
	for i, s := range c.States {
		out[i] = s.Name
	}
	return out
}

// unreachable returns a pair of states (from, to) such that to cannot be
// reached from from, or ok = false when the chain is irreducible (every
// state reachable from every other), which gives it a unique stationary
// law with every state visited (Norris §3.5, from memory).
func unreachable(c *markov.Channel) (from, to int, ok bool) {
	n := len(c.States)
	reach := make([][]bool, n)
	for i := range reach {
		reach[i] = make([]bool, n)
		reach[i][i] = true
		for j, p := range c.States[i].Jump {
			if p > 0 {
				reach[i][j] = true
			}
		}
	}
	for k := range n { // Warshall's transitive closure
		for i := range n {
			if reach[i][k] {
				for j := range n {
					if reach[k][j] {
						reach[i][j] = true
					}
				}
			}
		}
	}
	for i := range n {
		for j := range n {
			if !reach[i][j] {
				return i, j, true
			}
		}
	}
	return 0, 0, false
}
