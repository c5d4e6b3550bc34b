package main

import (
	"bytes"
	"errors"
	"html"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/exitcode"
	"rigwire/emulate/trip"
	"rigwire/estimate"
	"rigwire/estimate/engine"
	"rigwire/estimate/report"
	"rigwire/profiles"
)

// soakLoop is a scalar loop of our own for the table and report checks (a
// pump's flow loop, invented), decoding "seq,y" datagrams.
const soakLoop = `period: 10ms
plant: {a: [[-1]], b: [[2]], c: [[1]], process_noise: [[0.01]], sensor_noise: [[1e-4]]}
controller: {d: [[0.5]]}
setpoint: [0.8]
profile: {name: t, sensor_to_controller: {loss: 0.02}}
decode: {format: text, sequence: {field: 0}, outputs: [{field: 1}]}
`

// soakRig drives a monitor on a clock of its own, as a soak would.
type soakRig struct {
	m   *engine.Monitor
	now time.Time
	seq int
}

func newSoakRig(t *testing.T) *soakRig {
	t.Helper()
	loop, err := profiles.ParseLoop([]byte(soakLoop), "pump.yaml", ".")
	if err != nil {
		t.Fatal(err)
	}
	r := &soakRig{now: time.Unix(0, 0)}
	r.m, err = engine.New(loop, predicted(0.04), engine.Options{Now: func() time.Time { return r.now }})
	if err != nil {
		t.Fatal(err)
	}
	return r
}

func predicted(v float64) *estimate.Prediction {
	return &estimate.Prediction{MeanSquareStable: true, Stability: estimate.StabilityStable,
		Error: &estimate.ErrorStats{SecondMoment: v, Mean: []float64{0}}}
}

// feed sends n samples of error ±e (alternating), one per 10 ms.
func (r *soakRig) feed(n int, e float64) {
	for range n {
		v := e
		if r.seq%2 == 1 {
			v = -e
		}
		r.m.Feed([]byte(strconv.Itoa(r.seq)+","+strconv.FormatFloat(0.8-v, 'g', -1, 64)), r.now)
		r.seq++
		r.now = r.now.Add(10 * time.Millisecond)
	}
}

// writeReport writes the soak's report from its summary as
// writeSoakReport does, without a relay, and returns its HTML as text.
func writeReport(t *testing.T, s *engine.Summary, code int, verdict string) string {
	t.Helper()
	d := &report.Data{Title: "Soak: pump", Verdict: verdict, ExitCode: code, Phases: report.Phases(s.Phases)}
	if tr := s.Trip; tr != nil {
		d.Trip = &report.Trip{Reason: tr.Reason, Value: tr.Value, Bound: tr.Bound, Elapsed: tr.Elapsed, Phase: tr.Phase, Action: tr.Action}
	}
	dir := t.TempDir()
	if _, err := report.Write(dir, d); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(filepath.Join(dir, report.HTMLName))
	if err != nil {
		t.Fatal(err)
	}
	// The text of the page, tags dropped, entities decoded.
	return html.UnescapeString(regexp.MustCompile(`<[^>]*>`).ReplaceAllString(string(b), " "))
}

// A tripped soak: the phase the trip cut is judged on its samples before
// the trip and says so; its bound is met while its prediction lies
// outside the measured interval, which the row says too; the phase after
// it never ran. The table, the exit and the report all show it.
func TestSoakTableAndReportTripped(t *testing.T) {
	r := newSoakRig(t)
	if err := r.m.SetTrip(trip.Rule{MaxAbsError: 0.5}, nil); err != nil {
		t.Fatal(err)
	}
	r.m.PlanPhases([]string{"nominal", "outage", "recovery"})
	r.m.StartPhase(0, "nominal", predicted(0.04), 0, profiles.Check{Tolerance: fp(0.2), MinSamples: 20})
	r.feed(40, 0.2)
	r.m.StartPhase(1, "outage", predicted(0.0004), 0, profiles.Check{MaxSecondMoment: fp(0.5), MinSamples: 20})
	r.feed(40, 0.2)
	r.feed(1, 0.6) // fires the trip: |e| 0.6 > 0.5
	r.feed(12, 0.2)
	r.m.EndPhases(true)
	s := r.m.Summary()
	code := exitcode.OfSoak(s)
	if code != exitcode.Tripped {
		t.Fatalf("soak exit %d, want %d", code, exitcode.Tripped)
	}

	var tb bytes.Buffer
	report.PhaseTable(&tb, s)
	table := tb.String()
	for _, want := range []*regexp.Regexp{
		regexp.MustCompile(`(?m)^nominal\s+pass\s+40\s+0\.04\s+\[0\.04, 0\.04\]\s+0\.04\s+-\s+prediction 0\.04 inside`),
		regexp.MustCompile(`(?m)^outage\s+pass\s+41\s+\S+\s+\[\S+, \S+\]\s+0\.0004\s+cut by trip \(12 after it\); prediction outside interval\s+measured .* within the bound 0\.5; warning: prediction 0\.0004 outside the measured interval .*; cut short by the safety trip: judged on its 41 samples before the trip, 12 after it not judged`),
		regexp.MustCompile(`(?m)^recovery\s+not run\s+0\s+-\s+-\s+-\s+-\s+not run: the safety trip \(abs_error\) ended the soak in phase "outage"$`),
		regexp.MustCompile(`(?m)^safety trip: abs_error 0\.6 above 0\.5 in phase "outage" after 0\.800s; relay action clean; 12 later samples not judged$`),
	} {
		if !want.MatchString(table) {
			t.Errorf("table lacks %s:\n%s", want, table)
		}
	}
	var ee cli.Exit
	if err := soakExit(s, code, nil); !errors.As(err, &ee) || ee.Code != exitcode.Tripped || !strings.Contains(ee.Msg, `safety trip in phase "outage"`) {
		t.Errorf("exit %v", err)
	}

	text := writeReport(t, s, code, "tripped")
	for _, want := range []string{"TRIPPED", "Safety trip", "abs_error", "outage", "cut by trip (12 after it); prediction outside interval",
		"judged on its 41 samples before the trip", "recovery", "not run", `ended the soak in phase "outage"`} {
		if !strings.Contains(text, want) {
			t.Errorf("report lacks %q", want)
		}
	}
}

// A soak interrupted in its first phase: that phase is cut short and,
// with too few samples, inconclusive; the two after it never ran. The
// soak exits 5 naming them; the table explains "inconclusive"; the report
// says INCONCLUSIVE and lists the phases not run.
func TestSoakTableAndReportNotRun(t *testing.T) {
	r := newSoakRig(t)
	r.m.PlanPhases([]string{"nominal", "degrading", "recovery"})
	r.m.StartPhase(0, "nominal", predicted(0.04), 0, profiles.Check{Tolerance: fp(0.2), MinSamples: profiles.DefaultMinSamples})
	r.feed(30, 0.2)
	if ps := r.m.Phases(); len(ps) != 1 || ps[0].Verdict != engine.PhaseRunning {
		t.Fatalf("while running: %+v", ps)
	}
	r.m.EndPhases(true)
	s := r.m.Summary()
	code := exitcode.OfSoak(s)
	if code != exitcode.Inconclusive {
		t.Fatalf("soak exit %d, want %d", code, exitcode.Inconclusive)
	}
	var tb bytes.Buffer
	report.PhaseTable(&tb, s)
	table := tb.String()
	for _, want := range []*regexp.Regexp{
		regexp.MustCompile(`(?m)^nominal\s+inconclusive\s+30\s+.*cut short \(interrupted\)\s+only 30 judged samples, want ≥ 400; cut short: the soak was interrupted$`),
		regexp.MustCompile(`(?m)^degrading\s+not run\s+0\s+.*not run: the soak ended before it$`),
		regexp.MustCompile(`(?m)^recovery\s+not run\s+0\s+`),
		regexp.MustCompile(`(?m)^inconclusive: the data could not tell agreement from disagreement; the rule: inconclusive when fewer than min_samples`),
	} {
		if !want.MatchString(table) {
			t.Errorf("table lacks %s:\n%s", want, table)
		}
	}
	var ee cli.Exit
	err := soakExit(s, code, errors.New("context canceled"))
	if !errors.As(err, &ee) || ee.Code != exitcode.Inconclusive ||
		!strings.Contains(ee.Msg, `could not be judged: "nominal" (only 30 judged samples`) ||
		!strings.Contains(ee.Msg, `"degrading" (not run: the soak ended before it)`) ||
		!strings.HasSuffix(ee.Msg, "interrupted before the scenario's end: context canceled") {
		t.Errorf("exit %v", err)
	}

	text := writeReport(t, s, code, "inconclusive")
	for _, want := range []string{"INCONCLUSIVE", "only 30 judged samples, want ≥ 400", "cut short (interrupted)",
		"degrading", "recovery", "not run: the soak ended before it", "exit code 5"} {
		if !strings.Contains(text, want) {
			t.Errorf("report lacks %q", want)
		}
	}
	if n := strings.Count(text, "not run:"); n != 2 {
		t.Errorf("report names %d phases not run, want 2", n)
	}
}

func fp(v float64) *float64 { return &v }
