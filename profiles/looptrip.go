package profiles

import (
	"rigwire/profiles/laws"
	"rigwire/profiles/yamlpos"
)

// DefaultTripWindow is the trip's window when the loop file gives none,
// seconds (common practice: long enough to average, short enough to act).
const DefaultTripWindow = 1.0

// parseTrip reads the loop file's trip section:
//
//	trip:
//	  max_abs_error: 0.4
//	  max_second_moment: 0.05
//	  max_ratio: 4
//	  window: 1s
//	  action: clean
//
// At least one bound is required; the window must hold at least two
// sampling periods.
func parseTrip(f yamlpos.Field, t *Trip, period float64) error {
	keys, err := f.Mapping("max_abs_error", "max_second_moment", "max_ratio", "window", "action")
	if err != nil {
		return err
	}
	*t = Trip{Window: DefaultTripWindow, Action: TripClean}
	if g := keys["max_abs_error"]; !g.IsZero() {
		if t.MaxAbsError, err = g.Positive(); err != nil {
			return err
		}
	}
	if g := keys["max_second_moment"]; !g.IsZero() {
		if t.MaxSecondMoment, err = g.Positive(); err != nil {
			return err
		}
	}
	if g := keys["max_ratio"]; !g.IsZero() {
		v, ok := g.AsFloat()
		if !ok || v <= 1 {
			return g.Errorf("want a number > 1, got %s", g.Got())
		}
		t.MaxRatio = v
	}
	if t.MaxAbsError == 0 && t.MaxSecondMoment == 0 && t.MaxRatio == 0 {
		return f.Errorf("want at least one of max_abs_error, max_second_moment, max_ratio")
	}
	min := 2 * period
	if g := keys["window"]; !g.IsZero() {
		w, err := g.Duration()
		if err != nil || !(w >= min) {
			return g.Errorf("want a duration ≥ 2 periods (%s), got %s", laws.FormatSeconds(min), g.Got())
		}
		t.Window = w
	} else if t.Window < min {
		return f.Errorf("the default window (%s) is shorter than 2 periods (%s); give window: ≥ %s", laws.FormatSeconds(DefaultTripWindow), laws.FormatSeconds(min), laws.FormatSeconds(min))
	}
	if g := keys["action"]; !g.IsNull() {
		s, err := g.Text()
		if err != nil {
			return err
		}
		switch s {
		case "clean":
			t.Action = TripClean
		case "stop_commands":
			t.Action = TripStopCommands
		default:
			return g.Errorf("want clean or stop_commands, got %s", g.Got())
		}
	}
	t.Enabled = true
	return nil
}
