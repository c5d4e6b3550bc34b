package trip_test

import (
	"strings"
	"testing"

	"rigwire/emulate/trip"
	"rigwire/profiles"
)

// tripLoop is a small valid loop; trip sections are appended to it.
const tripLoop = `period: 10ms
plant: {a: [[0]], b: [[1]], c: [[1]]}
controller: {d: [[2]]}
profile: {sensor_to_controller: {loss: 0.01}}
`

func TestParse(t *testing.T) {
	cases := []struct {
		name string
		trip string
		want trip.Rule
	}{
		{"none", "", trip.Rule{}},
		{"abs only, defaults", "trip: {max_abs_error: 0.4}\n",
			trip.Rule{Enabled: true, MaxAbsError: 0.4, Window: 1, Action: trip.Clean}},
		{"all keys", "trip:\n  max_abs_error: 0.4\n  max_second_moment: 0.05\n  max_ratio: 4\n  window: 250ms\n  action: stop_commands\n",
			trip.Rule{Enabled: true, MaxAbsError: 0.4, MaxSecondMoment: 0.05, MaxRatio: 4, Window: 0.25, Action: trip.StopCommands}},
		{"window in seconds, exactly 2 periods", "trip: {max_ratio: 1.5, window: 0.02, action: clean}\n",
			trip.Rule{Enabled: true, MaxRatio: 1.5, Window: 0.02, Action: trip.Clean}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			l, err := profiles.ParseLoop([]byte(tripLoop+c.trip), "loop.yaml", "")
			if err != nil {
				t.Fatal(err)
			}
			if l.Trip != c.want {
				t.Errorf("trip %+v, want %+v", l.Trip, c.want)
			}
		})
	}
}

func TestParseBad(t *testing.T) {
	cases := []struct {
		trip, want string
	}{
		{"trip: {}\n", `loop.yaml:5: trip: want at least one of max_abs_error, max_second_moment, max_ratio`},
		{"trip:\n  window: 1s\n", `loop.yaml:6: trip: want at least one of max_abs_error, max_second_moment, max_ratio`},
		{"trip: {max_abs_error: 0}\n", `loop.yaml:5: trip.max_abs_error: want a number > 0, got "0"`},
		{"trip: {max_abs_error: -1}\n", `loop.yaml:5: trip.max_abs_error: want a number > 0, got "-1"`},
		{"trip: {max_second_moment: big}\n", `loop.yaml:5: trip.max_second_moment: want a number > 0, got "big"`},
		{"trip: {max_ratio: 1}\n", `loop.yaml:5: trip.max_ratio: want a number > 1, got "1"`},
		{"trip:\n  max_ratio: 2\n  window: 15ms\n", `loop.yaml:7: trip.window: want a duration ≥ 2 periods (20ms), got "15ms"`},
		{"trip:\n  max_ratio: 2\n  window: soon\n", `loop.yaml:7: trip.window: want a duration ≥ 2 periods (20ms), got "soon"`},
		{"trip:\n  max_ratio: 2\n  action: halt\n", `loop.yaml:7: trip.action: want clean or stop_commands, got "halt"`},
		{"trip:\n  max_ratio: 2\n  max_error: 1\n", `loop.yaml:7: trip: unknown key "max_error" (want one of: max_abs_error, max_second_moment, max_ratio, window, action)`},
		{"trip: [1]\n", `loop.yaml:5: trip: want a mapping, got a sequence`},
	}
	for _, c := range cases {
		_, err := profiles.ParseLoop([]byte(tripLoop+c.trip), "loop.yaml", "")
		if err == nil {
			t.Errorf("%q: loaded, want %s", c.trip, c.want)
			continue
		}
		if err.Error() != c.want {
			t.Errorf("%q:\ngot  %s\nwant %s", c.trip, err, c.want)
		}
	}
	// A long period: the default window of 1s is under 2 periods.
	long := strings.Replace(tripLoop, "period: 10ms", "period: 600ms", 1)
	_, err := profiles.ParseLoop([]byte(long+"trip: {max_abs_error: 1}\n"), "loop.yaml", "")
	want := `loop.yaml:5: trip: the default window (1s) is shorter than 2 periods (1.2s); give window: ≥ 1.2s`
	if err == nil || err.Error() != want {
		t.Errorf("got %v\nwant %s", err, want)
	}
}
