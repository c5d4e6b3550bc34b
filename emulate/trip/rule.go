package trip

import (
	"rigwire/profiles/laws"
	"rigwire/profiles/yamlpos"
)

// Action is what the relay does when the safety trip fires.
type Action int

const (
	// Clean: both directions forward at once, without loss or delay.
	Clean Action = iota
	// StopCommands: commands (controller → actuator) are no longer
	// forwarded, including those in flight; sensor datagrams pass clean.
	StopCommands
)

// String is the loop file's spelling of the action (clean,
// stop_commands).
func (a Action) String() string {
	if a == StopCommands {
		return "stop_commands"
	}
	return "clean"
}

// ParseAction reads an action as the loop file, the links file and
// `impair run --on-trip` spell it: clean or stop_commands.
func ParseAction(s string) (Action, bool) {
	switch s {
	case Clean.String():
		return Clean, true
	case StopCommands.String():
		return StopCommands, true
	}
	return Clean, false
}

// DefaultWindow is the trip's window when the loop file gives none,
// seconds (common practice: long enough to average, short enough to act).
const DefaultWindow = 1.0

// Rule is the loop's safety trip (loop file key trip). A bound that is
// zero is not set. Enabled is true when at least one bound is set.
type Rule struct {
	Enabled bool
	// MaxAbsError: trip when any |e_i| of one sample exceeds it.
	MaxAbsError float64
	// MaxSecondMoment: trip when the mean of eᵀe over the last Window
	// exceeds it (only once Window is full).
	MaxSecondMoment float64
	// MaxRatio: trip when that windowed mean over the predicted E[eᵀe]
	// exceeds it (only when the prediction is mean-square stable).
	MaxRatio float64
	// Window for MaxSecondMoment and MaxRatio (default 1s), seconds.
	Window float64
	Action Action
}

// Parse reads the loop file's trip section f for a loop sampled every
// period seconds:
//
//	trip:
//	  max_abs_error: 0.4
//	  max_second_moment: 0.05
//	  max_ratio: 4
//	  window: 1s
//	  action: clean
//
// At least one bound is required; the window must hold at least two
// sampling periods. Errors name the file, the line and the key.
func Parse(f yamlpos.Field, period float64) (Rule, error) {
	keys, err := f.Mapping("max_abs_error", "max_second_moment", "max_ratio", "window", "action")
	if err != nil {
		return Rule{}, err
	}
	t := Rule{Window: DefaultWindow, Action: Clean}
	if g := keys["max_abs_error"]; !g.IsZero() {
		if t.MaxAbsError, err = g.Positive(); err != nil {
			return Rule{}, err
		}
	}
	if g := keys["max_second_moment"]; !g.IsZero() {
		if t.MaxSecondMoment, err = g.Positive(); err != nil {
			return Rule{}, err
		}
	}
	if g := keys["max_ratio"]; !g.IsZero() {
		v, ok := g.AsFloat()
		if !ok || v <= 1 {
			return Rule{}, g.Errorf("want a number > 1, got %s", g.Got())
		}
		t.MaxRatio = v
	}
	if t.MaxAbsError == 0 && t.MaxSecondMoment == 0 && t.MaxRatio == 0 {
		return Rule{}, f.Errorf("want at least one of max_abs_error, max_second_moment, max_ratio")
	}
	min := 2 * period
	if g := keys["window"]; !g.IsZero() {
		w, err := g.Duration()
		if err != nil || !(w >= min) {
			return Rule{}, g.Errorf("want a duration ≥ 2 periods (%s), got %s", laws.FormatSeconds(min), g.Got())
		}
		t.Window = w
	} else if t.Window < min {
		return Rule{}, f.Errorf("the default window (%s) is shorter than 2 periods (%s); give window: ≥ %s", laws.FormatSeconds(DefaultWindow), laws.FormatSeconds(min), laws.FormatSeconds(min))
	}
	if g := keys["action"]; !g.IsNull() {
		s, err := g.Text()
		if err != nil {
			return Rule{}, err
		}
		a, ok := ParseAction(s)
		if !ok {
			return Rule{}, g.Errorf("want clean or stop_commands, got %s", g.Got())
		}
		t.Action = a
	}
	t.Enabled = true
	return t, nil
}
