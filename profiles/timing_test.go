package profiles

import (
	"errors"
	"testing"

	"rigwire/profiles/yamlpos"
)

// timingBase is a loop file up to its timing policy; line 5 is the first
// line a case adds.
const timingBase = "period: 10ms\nplant: {a: [[-1]], b: [[1]], c: [[1]]}\ncontroller: {d: [[1]]}\nprofile: {name: x}\n"

// TestLoopTimingErrors: every way the timing section can be wrong gives
// one error naming the file, the line, the key and what was expected
// (the project's rule for every input), whatever the order of the keys.
// The loop files under testdata/loops/timing-*.bad.yaml are the same
// cases as files.
func TestLoopTimingErrors(t *testing.T) {
	const whole = "want a whole number of periods from 1 to 16, got "
	cases := []struct{ name, extra, want string }{
		{"not a mapping", "timing: 4\n", `loop.yaml:5: timing: want a mapping, got "4"`},
		{"a list", "timing: [1, 4]\n", `loop.yaml:5: timing: want a mapping, got a sequence`},
		{"unknown key", "timing: {command_horizons: 3}\n",
			`loop.yaml:5: timing: unknown key "command_horizons" (want one of: sample_horizon, command_horizon)`},
		{"a key twice", "timing:\n  sample_horizon: 2\n  sample_horizon: 3\n", `loop.yaml:7: timing: key "sample_horizon" given twice`},
		{"fraction", "timing: {command_horizon: 2.5}\n", `loop.yaml:5: timing.command_horizon: ` + whole + `"2.5"`},
		{"a whole number written as a decimal", "timing: {command_horizon: 2.0}\n", `loop.yaml:5: timing.command_horizon: ` + whole + `"2.0"`},
		{"text", "timing: {sample_horizon: two}\n", `loop.yaml:5: timing.sample_horizon: ` + whole + `"two"`},
		{"quoted number", "timing: {command_horizon: \"3\"}\n", `loop.yaml:5: timing.command_horizon: ` + whole + `"3"`},
		{"boolean", "timing: {command_horizon: true}\n", `loop.yaml:5: timing.command_horizon: ` + whole + `"true"`},
		{"a list as a horizon", "timing: {command_horizon: [3]}\n", `loop.yaml:5: timing.command_horizon: ` + whole + `a sequence`},
		{"zero", "timing: {command_horizon: 0}\n", `loop.yaml:5: timing.command_horizon: ` + whole + `"0"`},
		{"negative", "timing: {sample_horizon: -1}\n", `loop.yaml:5: timing.sample_horizon: ` + whole + `"-1"`},
		{"sample horizon above the largest", "timing: {sample_horizon: 17, command_horizon: 17}\n",
			`loop.yaml:5: timing.sample_horizon: ` + whole + `"17"`},
		{"command horizon above the largest", "timing: {command_horizon: 17}\n", `loop.yaml:5: timing.command_horizon: ` + whole + `"17"`},
		{"beyond any integer", "timing: {command_horizon: 99999999999999999999}\n",
			`loop.yaml:5: timing.command_horizon: ` + whole + `"99999999999999999999"`},
		{"command horizon below the sample horizon", "timing:\n  sample_horizon: 3\n  command_horizon: 2\n",
			`loop.yaml:7: timing.command_horizon: want a command horizon of at least the sample horizon (3 periods): a command is never younger than the sample it answers, got 2`},
		{"sample horizon alone above 1 (the command's stays 1)", "timing: {sample_horizon: 3}\n",
			`loop.yaml:5: timing: want a command horizon of at least the sample horizon (3 periods): a command is never younger than the sample it answers, got 1`},
		{"several periods with the zero actuator", "actuator: {on_loss: zero}\ntiming: {command_horizon: 2}\n",
			`loop.yaml:6: timing.command_horizon: want 1 with actuator.on_loss: zero (that actuator drops every command at the end of its own period), got 2`},
		{"the zero actuator after the timing section", "timing: {command_horizon: 4}\nactuator: {on_loss: zero}\n",
			`loop.yaml:5: timing.command_horizon: want 1 with actuator.on_loss: zero (that actuator drops every command at the end of its own period), got 4`},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			l, err := ParseLoop([]byte(timingBase+tc.extra), "loop.yaml", "")
			if err == nil {
				t.Fatalf("accepted (timing %+v), want %s", l.Timing, tc.want)
			}
			if err.Error() != tc.want {
				t.Errorf("got  %s\nwant %s", err, tc.want)
			}
			var pe *yamlpos.Error
			if !errors.As(err, &pe) {
				t.Errorf("error is not a positioned *yamlpos.Error: %T", err)
			}
		})
	}
}

// TestLoopTimingAccepted: what the timing section accepts, and the
// defaults — a horizon left out (or null) is one period, today's rule
// (estimate/model.md §1); the loaded Timing holds both horizons.
func TestLoopTimingAccepted(t *testing.T) {
	cases := []struct {
		name, extra string
		ns, na      int
	}{
		{"no timing section", "", 1, 1},
		{"a null section", "timing:\n", 1, 1},
		{"an empty mapping", "timing: {}\n", 1, 1},
		{"null horizons", "timing: {sample_horizon: ~, command_horizon: ~}\n", 1, 1},
		{"both one", "timing: {sample_horizon: 1, command_horizon: 1}\n", 1, 1},
		{"the command's alone", "timing: {command_horizon: 4}\n", 1, 4},
		{"equal horizons", "timing: {sample_horizon: 3, command_horizon: 3}\n", 3, 3},
		{"both, block style", "timing:\n  sample_horizon: 2\n  command_horizon: 5\n", 2, 5},
		{"the largest", "timing: {sample_horizon: 16, command_horizon: 16}\n", 16, 16},
		{"the holding actuator, said", "actuator: {on_loss: hold}\ntiming: {command_horizon: 4}\n", 1, 4},
		{"the zero actuator with one period", "actuator: {on_loss: zero}\ntiming: {command_horizon: 1}\n", 1, 1},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			l, err := ParseLoop([]byte(timingBase+tc.extra), "loop.yaml", "")
			if err != nil {
				t.Fatal(err)
			}
			if ns, na := l.Horizons(); ns != tc.ns || na != tc.na {
				t.Errorf("Horizons() = %d, %d; want %d, %d", ns, na, tc.ns, tc.na)
			}
			if tc.extra != "" && (l.Timing.SampleHorizon != tc.ns || l.Timing.CommandHorizon != tc.na) {
				t.Errorf("Timing = %+v; want both horizons filled in (%d, %d)", l.Timing, tc.ns, tc.na)
			}
		})
	}
}
