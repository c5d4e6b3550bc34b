package profiles

import (
	"bytes"
	"math"
	"reflect"
	"strings"
	"testing"

	"rigwire/profiles/laws"
	"rigwire/profiles/markov"
)

// mustLaw builds a law with the laws' own constructors, shifted.
func mustLaw(t *testing.T, d laws.Delay, err error, shift float64) laws.Delay {
	t.Helper()
	if err != nil {
		t.Fatal(err)
	}
	s, err := laws.Shift(d, shift)
	if err != nil {
		t.Fatal(err)
	}
	return s
}

// TestWriteRoundTrip: a draft written by Write and parsed by Parse is the
// profile the draft describes: each direction's states, dwells, losses
// and delay laws equal those built directly with the laws' constructors.
// The values have at most six significant digits, so nothing is rounded.
func TestWriteRoundTrip(t *testing.T) {
	gamma := DraftDelay{Kind: "gamma", Keys: []string{"shape", "scale", "shift"}, Values: []float64{3.25, 0.0021, 0.004}}
	logn := DraftDelay{Kind: "lognormal", Keys: []string{"median", "sigma"}, Values: []float64{0.0031, 0.45}}
	cases := []struct {
		name   string
		draft  Draft
		sc, ca []markov.State // what Parse must give (Name, MeanDwell, Loss, Delay)
	}{
		{
			name: "burst channel, the other direction clean",
			draft: Draft{Comments: []string{"fitted by a test"}, Name: "pump uplink",
				SensorToController: &DraftChannel{States: []DraftState{
					{Name: "good", MeanDwell: 2.5, Loss: 0, Delay: gamma},
					{Name: "burst", MeanDwell: 0.015, Loss: 1, Delay: gamma},
				}}},
			sc: []markov.State{
				{Name: "good", MeanDwell: 2.5, Loss: 0, Delay: mustLaw(t, gamma3(t), nil, 0.004)},
				{Name: "burst", MeanDwell: 0.015, Loss: 1, Delay: mustLaw(t, gamma3(t), nil, 0.004)},
			},
			ca: Clean().States, // left out: clean
		},
		{
			name: "i.i.d. on both directions",
			draft: Draft{Name: "conveyor",
				SensorToController:   &DraftChannel{Loss: 0.0125, Delay: logn},
				ControllerToActuator: &DraftChannel{Loss: 0.0125, Delay: logn}},
			sc: []markov.State{{Name: "iid", MeanDwell: math.Inf(1), Loss: 0.0125, Delay: lognormal(t)}},
			ca: []markov.State{{Name: "iid", MeanDwell: math.Inf(1), Loss: 0.0125, Delay: lognormal(t)}},
		},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var b bytes.Buffer
			if err := Write(&b, c.draft); err != nil {
				t.Fatal(err)
			}
			p, err := Parse(b.Bytes(), "written.yaml", "")
			if err != nil {
				t.Fatalf("%v\n%s", err, b.String())
			}
			if p.Name != c.draft.Name {
				t.Errorf("name %q, want %q", p.Name, c.draft.Name)
			}
			for _, d := range []struct {
				name string
				got  *markov.Channel
				want []markov.State
			}{{SensorToController, p.SensorToController, c.sc}, {ControllerToActuator, p.ControllerToActuator, c.ca}} {
				if len(d.got.States) != len(d.want) {
					t.Fatalf("%s: %d states, want %d\n%s", d.name, len(d.got.States), len(d.want), b.String())
				}
				for i, w := range d.want {
					g := d.got.States[i]
					if g.Name != w.Name || g.MeanDwell != w.MeanDwell || g.Loss != w.Loss || !reflect.DeepEqual(g.Delay, w.Delay) {
						t.Errorf("%s state %d: got %s dwell %g loss %g delay %v, want %s dwell %g loss %g delay %v",
							d.name, i, g.Name, g.MeanDwell, g.Loss, g.Delay, w.Name, w.MeanDwell, w.Loss, w.Delay)
					}
				}
			}
			if !strings.HasPrefix(b.String(), commentsOf(c.draft)) {
				t.Errorf("the file does not open with the comments:\n%s", b.String())
			}
		})
	}
}

func gamma3(t *testing.T) laws.Delay {
	t.Helper()
	d, err := laws.NewGamma(3.25, 0.0021, 0)
	if err != nil {
		t.Fatal(err)
	}
	return d
}

func lognormal(t *testing.T) laws.Delay {
	t.Helper()
	d, err := laws.NewLognormal(0.0031, 0.45, 0)
	if err != nil {
		t.Fatal(err)
	}
	return d
}

func commentsOf(d Draft) string {
	var b strings.Builder
	for _, c := range d.Comments {
		b.WriteString("# " + c + "\n")
	}
	return b.String() + "# times in seconds\n"
}

// TestWriteRefuses: a draft the format cannot hold is refused and nothing
// is written.
func TestWriteRefuses(t *testing.T) {
	ok := DraftDelay{Kind: "constant", Keys: []string{"value"}, Values: []float64{0.001}}
	cases := []struct {
		name  string
		draft Draft
		want  string
	}{
		{"unknown kind", Draft{SensorToController: &DraftChannel{Delay: DraftDelay{Kind: "cauchy"}}}, `unknown delay kind "cauchy"`},
		{"keys and values", Draft{SensorToController: &DraftChannel{Delay: DraftDelay{Kind: "constant", Keys: []string{"value"}}}}, "1 keys, 0 values"},
		{"three states", Draft{ControllerToActuator: &DraftChannel{States: []DraftState{{Name: "a", Delay: ok}, {Name: "b", Delay: ok}, {Name: "c", Delay: ok}}}}, "want one state or two, got 3 states"},
		{"state name", Draft{SensorToController: &DraftChannel{States: []DraftState{{Name: "a b", Delay: ok}, {Name: "c", Delay: ok}}}}, `state name "a b"`},
		{"key of another kind", Draft{SensorToController: &DraftChannel{Delay: DraftDelay{Kind: "gamma", Keys: []string{"shape", "mean"}, Values: []float64{2, 0.001}}}},
			`unknown key "mean" for kind gamma (want one of: shape, scale, shift)`},
		{"shift where the kind takes none", Draft{SensorToController: &DraftChannel{Delay: DraftDelay{Kind: "pareto", Keys: []string{"shape", "scale", "shift"}, Values: []float64{2, 0.001, 0.001}}}},
			`unknown key "shift" for kind pareto (want one of: shape, scale)`},
		{"required key left out", Draft{ControllerToActuator: &DraftChannel{Delay: DraftDelay{Kind: "lognormal", Keys: []string{"median"}, Values: []float64{0.003}}}},
			"controller_to_actuator: delay: missing sigma for kind lognormal"},
		{"kind of lists", Draft{SensorToController: &DraftChannel{Delay: DraftDelay{Kind: "mixture", Keys: []string{"parts"}, Values: []float64{1}}}},
			"kind mixture holds lists or a file"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var b bytes.Buffer
			err := Write(&b, c.draft)
			if err == nil || !strings.Contains(err.Error(), c.want) || b.Len() != 0 {
				t.Errorf("error %v, %d bytes written; want an error with %q and nothing written", err, b.Len(), c.want)
			}
		})
	}
}
