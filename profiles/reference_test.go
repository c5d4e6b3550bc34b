package profiles

import (
	"math"
	"strings"
	"testing"
)

const refLoopHead = `period: 10ms
plant: {a: [[-1]], b: [[1]], c: [[1]]}
controller: {d: [[2]]}
profile: {sensor_to_controller: {loss: 0.1}, controller_to_actuator: {loss: 0.1}}
setpoint: [1]
`

func parseRefLoop(t *testing.T, ref string) (*Loop, error) {
	t.Helper()
	return ParseLoop([]byte(refLoopHead+ref), "loop.yaml", "")
}

// TestReferenceBad: every wrong reference key names file, line and key
// and says what was expected.
func TestReferenceBad(t *testing.T) {
	cases := map[string]string{
		"reference: {kind: square, amplitude: [1]}":                                                            `loop.yaml:6: reference.kind: want sine or sweep`,
		"reference: {kind: sine, amplitude: [1]}":                                                              `loop.yaml:6: reference.frequency: missing (required)`,
		"reference: {kind: sine, frequency: 50, amplitude: [1]}":                                               `loop.yaml:6: reference.frequency: want a frequency in Hz above 0 and below the Nyquist frequency 1/(2h) = 50 Hz, got "50"`,
		"reference: {kind: sine, frequency: -1, amplitude: [1]}":                                               `reference.frequency: want a frequency in Hz above 0`,
		"reference: {kind: sine, frequency: 1, amplitude: [1, 2]}":                                             `reference.amplitude: want 1 numbers (one per output of plant.c), got 2`,
		"reference: {kind: sine, frequency: 1, amplitude: [0]}":                                                `reference.amplitude: want at least one amplitude > 0`,
		"reference: {kind: sine, frequency: 1, amplitude: [-1]}":                                               `reference.amplitude: want amplitudes in [0, 1e+50], got [0] = -1`,
		"reference: {kind: sine, frequency: 1, amplitude: [1], phase: [400]}":                                  `reference.phase: want phases in degrees within ±360`,
		"reference: {kind: sine, frequency: 1, amplitude: [1], dwell: 1s}":                                     `reference.dwell: not a key of a sine reference`,
		"reference: {kind: sine, frequency: 1, amplitude: [1], speed: 1}":                                      `reference: unknown key "speed"`,
		"reference: {kind: sweep, frequencies: [1, 2], amplitude: [1]}":                                        `reference.dwell: missing (required)`,
		"reference: {kind: sweep, amplitude: [1], dwell: 10s}":                                                 `reference: want frequencies (a list, Hz) or from, to and points (log-spaced), got neither`,
		"reference: {kind: sweep, frequencies: [1, 60], amplitude: [1], dwell: 10s}":                           `reference.frequencies[1]: want a frequency in Hz above 0 and below the Nyquist`,
		"reference: {kind: sweep, from: 2, to: 1, points: 3, amplitude: [1], dwell: 10s}":                      `reference.to: want a frequency above from (2 Hz), got "1"`,
		"reference: {kind: sweep, from: 1, to: 2, points: 1, amplitude: [1], dwell: 10s}":                      `reference.points: want a whole number of frequencies in [2, 64], got "1"`,
		"reference: {kind: sweep, frequencies: [0.1], amplitude: [1], dwell: 10s}":                             `reference: frequency 0.1 Hz (1 of the sweep): want at least two cycles in the 8s of each dwell after settling, got 0.8`,
		"reference: {kind: sweep, frequencies: [1], amplitude: [1], dwell: 0.1s}":                              `reference.dwell: want a duration in [200ms, 168h0m0s], got "0.1s"`,
		"reference: {kind: sweep, frequencies: [1], amplitude: [1], dwell: 10s, settle: 6s}":                   `reference.settle: want a duration in [0s, 5s], got "6s"`,
		"reference: {kind: sine, frequency: 1, amplitude: [1]}\ndecode: {format: text, outputs: [{field: 0}]}": `loop.yaml:7: decode: want a sequence field with a sinusoidal reference`,
	}
	for ref, want := range cases {
		_, err := parseRefLoop(t, ref+"\n")
		if err == nil || !strings.Contains(err.Error(), want) {
			t.Errorf("%s:\n got %v\nwant …%s…", ref, err, want)
		}
	}
}

// TestReferenceAt: the reference is offset + A sin(2π f t + φ) at t_k =
// k h for a sine, with t counted from each dwell's start for a sweep,
// cycling through the frequencies; the phasor convention is r = offset +
// Re(R e^{jθ}).
func TestReferenceAt(t *testing.T) {
	l, err := parseRefLoop(t, "reference: {kind: sine, frequency: 2, amplitude: [0.5], phase: [30]}\n")
	if err != nil {
		t.Fatal(err)
	}
	r := make([]float64, 1)
	for _, k := range []uint64{0, 1, 7, 1234567, 1 << 40} {
		l.ReferenceAt(k, r)
		cyc := math.Mod(float64(k%50)*0.02, 1) // f·h = 0.02 cycles a sample: the phase repeats every 50 samples
		want := 1 + 0.5*math.Sin(2*math.Pi*cyc+math.Pi/6)
		tol := 1e-9
		if k > 1<<32 {
			tol = 1e-5 // f·h = 0.02 is rounded to 4e-19 in binary: 2⁴⁰ samples drift 5e-7 cycles
		}
		if math.Abs(r[0]-want) > tol {
			t.Errorf("k=%d: r = %.12g, want %.12g", k, r[0], want)
		}
		_, theta, _ := l.Reference.Segment(k, l.Period)
		R := l.Reference.Phasor(0)
		if got := 1 + real(R*complex(math.Cos(theta), math.Sin(theta))); math.Abs(got-r[0]) > 1e-12 {
			t.Errorf("k=%d: phasor gives %.12g, want %.12g", k, got, want)
		}
	}
	if _, _, settling := l.ReferenceAt(l.Reference.SettleSamples-1, r); !settling {
		t.Error("the last settling sample is not settling")
	}
	if _, _, settling := l.ReferenceAt(l.Reference.SettleSamples, r); settling {
		t.Error("the first settled sample is settling")
	}

	s, err := parseRefLoop(t, "reference: {kind: sweep, from: 1, to: 4, points: 3, amplitude: [2], dwell: 3s, settle: 1s}\n")
	if err != nil {
		t.Fatal(err)
	}
	if f := s.Reference.Frequencies; len(f) != 3 || f[0] != 1 || math.Abs(f[1]-2) > 1e-12 || f[2] != 4 {
		t.Fatalf("log-spaced 1…4 in 3: %v", f)
	}
	if s.Reference.DwellSamples != 300 || s.Reference.SettleSamples != 100 {
		t.Fatalf("dwell %d, settle %d samples; want 300, 100", s.Reference.DwellSamples, s.Reference.SettleSamples)
	}
	for _, c := range []struct {
		k    uint64
		seg  int
		sett bool
	}{{0, 0, true}, {99, 0, true}, {100, 0, false}, {300, 1, true}, {450, 1, false}, {899, 2, false}, {900, 0, true}} {
		seg, _, sett := s.ReferenceAt(c.k, r)
		local := float64(c.k%300) * 0.01
		want := 1 + 2*math.Sin(2*math.Pi*s.Reference.Frequencies[c.seg]*local)
		if seg != c.seg || sett != c.sett || math.Abs(r[0]-want) > 1e-9 {
			t.Errorf("k=%d: segment %d settling %v r %.9g; want %d %v %.9g", c.k, seg, sett, r[0], c.seg, c.sett, want)
		}
	}
}
