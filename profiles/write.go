package profiles

import (
	"fmt"
	"io"
	"regexp"
	"slices"
	"strconv"
	"strings"
)

// Draft is a network profile to write: what Write puts in a profile file
// that Load reads back. Each direction left nil is left out of the file
// (no loss and no delay). It spells delay laws as the file does, by kind
// and keys, so it writes any parametric law the format has.
type Draft struct {
	// Comments are written first, each as a "# " line.
	Comments             []string
	Name                 string
	SensorToController   *DraftChannel
	ControllerToActuator *DraftChannel
}

// DraftChannel is one direction: either States (a Markov channel), or,
// when States is empty, one state's Loss and Delay.
type DraftChannel struct {
	Loss   float64
	Delay  DraftDelay
	States []DraftState
}

// DraftState is one state of a Markov channel. Next is left out: a
// two-state channel needs none, and Write refuses more states.
type DraftState struct {
	Name      string
	MeanDwell float64 // seconds
	Loss      float64
	Delay     DraftDelay
}

// DraftDelay is a delay law as the profile file spells it: its kind
// ("gamma") and its keys ("shape", "scale", "shift") with their values,
// seconds for times.
type DraftDelay struct {
	Kind   string
	Keys   []string
	Values []float64
}

// Write writes d as a profile file: its comments, "# times in seconds",
// the name, then each direction given. Numbers are written with six
// significant digits (what Load reads back is d rounded so), times in
// seconds. A draft the format cannot hold (an unknown kind, or one whose
// keys hold lists, a key the kind does not take or a required key left
// out, keys and values that do not pair, a Markov channel of other than
// two states) is refused before anything is written.
func Write(w io.Writer, d Draft) error {
	if err := d.check(); err != nil {
		return err
	}
	var b strings.Builder
	for _, c := range d.Comments {
		fmt.Fprintf(&b, "# %s\n", c)
	}
	b.WriteString("# times in seconds\n")
	fmt.Fprintf(&b, "name: %s\n", strconv.Quote(d.Name))
	for _, dir := range d.directions() {
		fmt.Fprintf(&b, "%s:\n", dir.name)
		if len(dir.c.States) == 0 {
			fmt.Fprintf(&b, "  loss: %s\n  delay: %s\n", draftNum(dir.c.Loss), dir.c.Delay.yaml())
			continue
		}
		b.WriteString("  states:\n")
		for _, s := range dir.c.States {
			fmt.Fprintf(&b, "    - {name: %s, mean_dwell: %s, loss: %s, delay: %s}\n", s.Name, draftNum(s.MeanDwell), draftNum(s.Loss), s.Delay.yaml())
		}
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// draftDirection is one direction a draft gives, with its name.
type draftDirection struct {
	name string
	c    *DraftChannel
}

// directions are the directions d gives, in the file's order.
func (d Draft) directions() []draftDirection {
	var out []draftDirection
	for _, dir := range []draftDirection{{SensorToController, d.SensorToController}, {ControllerToActuator, d.ControllerToActuator}} {
		if dir.c != nil {
			out = append(out, dir)
		}
	}
	return out
}

// check refuses what the format cannot hold.
func (d Draft) check() error {
	for _, dir := range d.directions() {
		if n := len(dir.c.States); n != 0 && n != 2 {
			return fmt.Errorf("writing profile: %s: want one state or two, got %d states", dir.name, n)
		}
		delays := []DraftDelay{dir.c.Delay}
		if len(dir.c.States) > 0 {
			delays = nil
			for _, s := range dir.c.States {
				if !draftStateName.MatchString(s.Name) {
					return fmt.Errorf("writing profile: %s: state name %q: want a letter, then letters, digits, _ and -", dir.name, s.Name)
				}
				delays = append(delays, s.Delay)
			}
		}
		for _, dl := range delays {
			if err := dl.check(); err != nil {
				return fmt.Errorf("writing profile: %s: %w", dir.name, err)
			}
		}
	}
	return nil
}

// check holds the law to the parser's table of kinds (delayKinds): a
// known kind whose keys hold numbers, its keys among the kind's (shift
// where the kind takes one), its required keys given, one value a key.
func (dl DraftDelay) check() error {
	kind, ok := delayKinds[dl.Kind]
	if !ok {
		return fmt.Errorf("unknown delay kind %q", dl.Kind)
	}
	if dl.Kind == "empirical" || dl.Kind == "mixture" {
		return fmt.Errorf("delay: kind %s holds lists or a file, not numbers; a draft spells parametric laws only", dl.Kind)
	}
	if len(dl.Keys) != len(dl.Values) {
		return fmt.Errorf("delay %s: %d keys, %d values", dl.Kind, len(dl.Keys), len(dl.Values))
	}
	for _, k := range dl.Keys {
		if !slices.Contains(kind.lawKeys(), k) {
			return fmt.Errorf("delay: unknown key %q for kind %s (want one of: %s)", k, dl.Kind, strings.Join(kind.lawKeys(), ", "))
		}
	}
	for _, k := range kind.required {
		if !slices.Contains(dl.Keys, k) {
			return fmt.Errorf("delay: missing %s for kind %s", k, dl.Kind)
		}
	}
	return nil
}

// yaml is the law as a flow mapping: {kind: gamma, shape: 3, scale: 0.002}.
func (dl DraftDelay) yaml() string {
	var b strings.Builder
	fmt.Fprintf(&b, "{kind: %s", dl.Kind)
	for i, k := range dl.Keys {
		fmt.Fprintf(&b, ", %s: %s", k, draftNum(dl.Values[i]))
	}
	b.WriteString("}")
	return b.String()
}

// draftStateName is a state name Write can leave unquoted.
var draftStateName = regexp.MustCompile(`^[A-Za-z][A-Za-z0-9_-]*$`)

// draftNum writes a number with six significant digits.
func draftNum(x float64) string { return strconv.FormatFloat(x, 'g', 6, 64) }

// DelayFlowYAML spells a parametric delay law as a one-line mapping of the
// profile format, {kind: gamma, shape: 3, scale: 0.002}, from its kind and
// its keys' values (as estimate/fit names them), checked against the
// format's table of kinds.
func DelayFlowYAML(kind string, keys []string, values []float64) (string, error) {
	dl := DraftDelay{Kind: kind, Keys: keys, Values: values}
	if err := dl.check(); err != nil {
		return "", err
	}
	return dl.yaml(), nil
}
