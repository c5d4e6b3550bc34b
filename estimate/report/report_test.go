package report

import (
	"bytes"
	"crypto/sha256"
	"encoding/base64"
	"encoding/hex"
	"fmt"
	"image/png"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"golang.org/x/net/html"
)

func f64(v float64) *float64 { return &v }

// pumpSoak is invented data for our own pump scenario: a nominal phase, a
// phase whose delay ramps up, and an outage phase that misses its bound.
func pumpSoak(points int) *Data {
	rng := rand.New(rand.NewPCG(7, 11))
	phases := []Phase{
		{Index: 0, Name: "nominal", Start: 0, End: 120},
		{Index: 1, Name: "degrading", Start: 120, End: 240},
		{Index: 2, Name: "outage", Start: 240, End: 300},
	}
	predicted := func(t float64) (float64, int) {
		switch {
		case t < 120:
			return 0.020, 0
		case t < 240:
			return 0.020 + 0.030*(t-120)/120, 1 // ramp
		default:
			return 0.090, 2
		}
	}
	var hist []Point
	var sums [3]float64
	var counts [3]int64
	for i := 0; i < points; i++ {
		t := 300 * float64(i) / float64(points)
		pr, ph := predicted(t)
		m := pr * (1 + 0.1*rng.NormFloat64())
		if ph == 2 {
			m *= 1.6 // the outage does worse than predicted
		}
		w := 0.15 * pr
		pt := Point{Elapsed: t, Measured: f64(m), CILow: f64(m - w), CIHigh: f64(m + w), Predicted: f64(pr), Phase: ph}
		if i < 3 { // the estimate needs a few samples before it has an interval
			pt.CILow, pt.CIHigh = nil, nil
		}
		hist = append(hist, pt)
		sums[ph] += m
		counts[ph]++
	}
	for i := range phases {
		if counts[i] == 0 {
			continue
		}
		m := sums[i] / float64(counts[i])
		pr, _ := predicted((phases[i].Start + phases[i].End) / 2)
		phases[i].Samples = counts[i] * 50
		phases[i].Measured, phases[i].CILow, phases[i].CIHigh = f64(m), f64(m*0.93), f64(m*1.07)
		phases[i].Predicted = f64(pr)
		phases[i].Verdict = "pass"
		phases[i].Reason = "measured within the bound"
	}
	phases[2].Verdict = "fail"
	phases[2].Reason = "measured/predicted 1.6 above the allowed 1.25"
	inf := math.Inf(1)
	return &Data{
		Title:    "Soak: pump-qualification",
		Loop:     "testdata/pump.loop.yaml",
		Scenario: "testdata/pump.soak.yaml",
		Started:  time.Date(2026, 12, 2, 9, 0, 0, 0, time.UTC),
		Duration: 300 * time.Second,
		Verdict:  "fail",
		ExitCode: 1,
		Notes:    []string{"seed 42", "time scale 1", "relayed 15000 sensor datagrams, 14812 controller datagrams"},
		Phases:   phases,
		History:  hist,
		Delays: map[string]Histogram{
			"sensor_to_controller":   {Upper: []float64{0.001, 0.002, 0.005, 0.010, 0.020, 0.050, inf}, Counts: []float64{120, 800, 6000, 5200, 2100, 600, 30}},
			"controller_to_actuator": {Upper: []float64{0.001, 0.002, 0.005, 0.010, 0.020, 0.050, inf}, Counts: []float64{300, 1500, 8000, 3900, 900, 150, 0}},
		},
		LossRuns: map[string]Histogram{
			"sensor_to_controller":   {Upper: []float64{1, 2, 3, 5, 10, inf}, Counts: []float64{410, 95, 21, 8, 2, 1}},
			"controller_to_actuator": {Upper: []float64{1, 2, 3, 5, 10, inf}, Counts: []float64{380, 70, 12, 3, 0, 0}},
		},
	}
}

// checked is what checkReport found in a written report.
type checked struct {
	html    string
	text    string
	imgs    int
	pngs    []string
	scripts int
}

// checkReport asserts the invariants every report must hold and returns
// what it saw for further checks.
func checkReport(t *testing.T, dir string, paths []string) checked {
	t.Helper()
	var c checked
	if len(paths) == 0 || filepath.Base(paths[0]) != HTMLName {
		t.Fatalf("paths %v: want report.html first", paths)
	}
	for _, p := range paths {
		if filepath.Dir(p) != dir {
			t.Errorf("%s written outside %s", p, dir)
		}
		b, err := os.ReadFile(p)
		if err != nil {
			t.Fatalf("returned path %s: %v", p, err)
		}
		if strings.HasSuffix(p, ".png") {
			c.pngs = append(c.pngs, filepath.Base(p))
			img, err := png.Decode(bytes.NewReader(b))
			if err != nil {
				t.Fatalf("%s does not decode as PNG: %v", p, err)
			}
			w, h := img.Bounds().Dx(), img.Bounds().Dy()
			if w < 300 || h < 200 || w > 4000 || h > 4000 {
				t.Errorf("%s is %d×%d pixels", p, w, h)
			}
		}
	}
	raw, err := os.ReadFile(paths[0])
	if err != nil {
		t.Fatal(err)
	}
	c.html = string(raw)
	doc, err := html.Parse(bytes.NewReader(raw))
	if err != nil {
		t.Fatalf("report.html does not parse: %v", err)
	}
	var text strings.Builder
	var walk func(n *html.Node)
	walk = func(n *html.Node) {
		if n.Type == html.TextNode {
			text.WriteString(n.Data)
			text.WriteByte(' ')
		}
		if n.Type == html.ElementNode {
			if n.Data == "script" {
				c.scripts++
			}
			for _, a := range n.Attr {
				if a.Key != "src" && a.Key != "href" {
					continue
				}
				v := strings.ToLower(strings.TrimSpace(a.Val))
				if strings.HasPrefix(v, "http:") || strings.HasPrefix(v, "https:") || strings.HasPrefix(v, "//") {
					t.Errorf("external reference <%s %s=%q>", n.Data, a.Key, a.Val)
				}
				if n.Data == "img" && a.Key == "src" {
					const prefix = "data:image/png;base64,"
					if !strings.HasPrefix(a.Val, prefix) {
						t.Errorf("img src %.40q is not an embedded PNG", a.Val)
						continue
					}
					b, err := base64.StdEncoding.DecodeString(a.Val[len(prefix):])
					if err != nil {
						t.Errorf("img src: bad base64: %v", err)
						continue
					}
					if _, err := png.Decode(bytes.NewReader(b)); err != nil {
						t.Errorf("embedded image does not decode: %v", err)
					}
					c.imgs++
				}
			}
		}
		for ch := n.FirstChild; ch != nil; ch = ch.NextSibling {
			walk(ch)
		}
	}
	walk(doc)
	c.text = text.String()
	if c.imgs != len(c.pngs) {
		t.Errorf("%d embedded images but %d PNG files %v", c.imgs, len(c.pngs), c.pngs)
	}
	if c.scripts != 0 {
		t.Errorf("report has %d script elements", c.scripts)
	}
	return c
}

func TestWritePumpSoak(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "new", "dir")
	paths, err := Write(dir, pumpSoak(300))
	if err != nil {
		t.Fatal(err)
	}
	c := checkReport(t, dir, paths)
	want := []string{SecondMomentName, RatioName, PhasesName,
		DelayName("controller_to_actuator"), DelayName("sensor_to_controller"), LossRunsName}
	if strings.Join(c.pngs, ",") != strings.Join(want, ",") {
		t.Errorf("PNGs %v, want %v", c.pngs, want)
	}
	for _, s := range []string{"nominal", "degrading", "outage", "FAIL", "Soak: pump-qualification",
		"testdata/pump.loop.yaml", "testdata/pump.soak.yaml", "seed 42", "2026-12-02 09:00:00 UTC", "5m0s",
		"measured/predicted 1.6 above the allowed 1.25", "exit code 1", "30 delays above 50 ms", "0.02024 [0.01882, 0.02166]"} {
		if !strings.Contains(c.text, s) {
			t.Errorf("report text lacks %q", s)
		}
	}
	if strings.Contains(c.text, "no data") {
		t.Errorf("full data but the report says no data")
	}
	if strings.Contains(c.text, "Safety trip") {
		t.Errorf("no trip but a trip block")
	}
}

func TestTextIsEscaped(t *testing.T) {
	d := pumpSoak(50)
	d.Phases[1].Name = `<script>alert("x")</script>`
	d.Phases[1].Reason = `<img src="http://example.invalid/x.png">`
	d.Title = `pump & <b>co</b>`
	d.Notes = append(d.Notes, `<a href="https://example.invalid">link</a>`)
	d.Delays = map[string]Histogram{`a/../<b>`: {Upper: []float64{0.01}, Counts: []float64{3}}}
	dir := t.TempDir()
	paths, err := Write(dir, d)
	if err != nil {
		t.Fatal(err)
	}
	c := checkReport(t, dir, paths) // no script element, no external src/href
	if !strings.Contains(c.text, `<script>alert("x")</script>`) {
		t.Errorf("phase name not shown as text")
	}
	if !strings.Contains(c.html, "&lt;script&gt;") {
		t.Errorf("phase name not escaped in the HTML source")
	}
	for _, p := range paths {
		if filepath.Dir(p) != dir || strings.ContainsAny(filepath.Base(p), "<>/") {
			t.Errorf("unsafe file name %q", p)
		}
	}
}

func TestTrip(t *testing.T) {
	d := pumpSoak(200)
	d.Verdict, d.ExitCode = "tripped", 3
	d.Trip = &Trip{Reason: "tracking error above its guard", Value: 0.31, Bound: 0.25, Elapsed: 251.5, Phase: "outage", Action: "hold last actuator command"}
	dir := t.TempDir()
	paths, err := Write(dir, d)
	if err != nil {
		t.Fatal(err)
	}
	c := checkReport(t, dir, paths)
	for _, s := range []string{"TRIPPED", "Safety trip", "tracking error above its guard", "0.31", "0.25", "251.5 s",
		"hold last actuator command", "not an emergency stop"} {
		if !strings.Contains(c.text, s) {
			t.Errorf("trip block lacks %q", s)
		}
	}
}

func TestEdgeCases(t *testing.T) {
	nan, inf := math.NaN(), math.Inf(1)
	cases := map[string]*Data{
		"empty": {},
		"nil values": {
			Verdict: "fail",
			Phases:  []Phase{{Index: 0, Name: "nominal", Verdict: "running"}, {Index: 1, Start: nan, End: inf}},
			History: []Point{{Elapsed: 0}, {Elapsed: 1, Phase: 1}, {Elapsed: nan, Measured: f64(1)}},
		},
		"NaN and Inf values": {
			Phases: []Phase{{Name: "x", Measured: f64(nan), CILow: f64(-inf), CIHigh: f64(inf), Predicted: f64(0)}},
			History: []Point{
				{Elapsed: 0, Measured: f64(nan), Predicted: f64(inf)},
				{Elapsed: 1, Measured: f64(1), Predicted: f64(0)},
				{Elapsed: 2, Measured: f64(inf), CILow: f64(2), CIHigh: f64(1)},
			},
		},
		"single point": {
			Verdict: "pass",
			Phases:  []Phase{{Name: "only", Start: 5, End: 5, Samples: 1, Measured: f64(0.5), Predicted: f64(0.5), Verdict: "pass"}},
			History: []Point{{Elapsed: 5, Measured: f64(0.5), CILow: f64(0.4), CIHigh: f64(0.6), Predicted: f64(0.5)}},
		},
		"all zero": {
			Phases:   []Phase{{Name: "z", Measured: f64(0), CILow: f64(0), CIHigh: f64(0), Predicted: f64(0)}},
			History:  []Point{{Elapsed: 0, Measured: f64(0), Predicted: f64(0)}, {Elapsed: 0, Measured: f64(0), Predicted: f64(0)}},
			Delays:   map[string]Histogram{"sensor_to_controller": {Upper: []float64{0.01, inf}, Counts: []float64{0, 0}}},
			LossRuns: map[string]Histogram{"sensor_to_controller": {Upper: []float64{1}, Counts: []float64{0}}},
		},
		"odd histograms": {
			Delays: map[string]Histogram{
				"only_inf":   {Upper: []float64{inf}, Counts: []float64{4}},
				"mismatch":   {Upper: []float64{0.001, 0.002, 0.004}, Counts: []float64{1, 2}},
				"decreasing": {Upper: []float64{0.002, 0.001}, Counts: []float64{1, 2}},
				"nan":        {Upper: []float64{nan, 0.1}, Counts: []float64{1, nan}},
				"negative":   {Upper: []float64{-0.001, 0, 0.001}, Counts: []float64{1, 1, 1}},
				"empty":      {},
				"":           {Upper: []float64{0.01}, Counts: []float64{1}},
			},
			LossRuns: map[string]Histogram{
				"a": {Upper: []float64{1, 4, inf}, Counts: []float64{5, 1, 1}},
				"b": {Upper: []float64{2, 3}, Counts: []float64{2, 1}},
				"c": {Upper: []float64{3, 1}, Counts: []float64{2, 1}},
			},
		},
	}
	for name, d := range cases {
		t.Run(name, func(t *testing.T) {
			dir := t.TempDir()
			paths, err := Write(dir, d)
			if err != nil {
				t.Fatal(err)
			}
			c := checkReport(t, dir, paths)
			if len(c.pngs) < 6 && !strings.Contains(c.text, "no data") {
				t.Errorf("%d plots drawn but the report never says no data", len(c.pngs))
			}
		})
	}
}

func TestLossRunBoundsDiffer(t *testing.T) {
	inf := math.Inf(1)
	d := &Data{LossRuns: map[string]Histogram{
		"sensor_to_controller":   {Upper: []float64{1, 4, inf}, Counts: []float64{5, 1, 1}},
		"controller_to_actuator": {Upper: []float64{2, 3}, Counts: []float64{2, 1, 9}},
	}}
	dir := t.TempDir()
	paths, err := Write(dir, d)
	if err != nil {
		t.Fatal(err)
	}
	c := checkReport(t, dir, paths)
	for _, s := range []string{"different bucket bounds", "2 bucket bounds but 3 counts"} {
		if !strings.Contains(c.text, s) {
			t.Errorf("loss-run caption lacks %q", s)
		}
	}
}

func TestEmptyNamesEveryMissingPlot(t *testing.T) {
	dir := t.TempDir()
	paths, err := Write(dir, &Data{Title: "Soak: conveyor"})
	if err != nil {
		t.Fatal(err)
	}
	if len(paths) != 1 {
		t.Errorf("paths %v: want only report.html", paths)
	}
	c := checkReport(t, dir, paths)
	if n := strings.Count(c.text, "no data"); n < 5 {
		t.Errorf("%d 'no data' notes, want one per missing plot", n)
	}
	if !strings.Contains(c.text, "NO VERDICT") {
		t.Errorf("empty verdict not shown as such")
	}
}

func TestStalePlotRemoved(t *testing.T) {
	dir := t.TempDir()
	if _, err := Write(dir, pumpSoak(40)); err != nil {
		t.Fatal(err)
	}
	d := pumpSoak(40)
	d.History = nil
	paths, err := Write(dir, d)
	if err != nil {
		t.Fatal(err)
	}
	for _, name := range []string{SecondMomentName, RatioName} {
		if _, err := os.Stat(filepath.Join(dir, name)); !os.IsNotExist(err) {
			t.Errorf("%s from the earlier report left behind (err %v)", name, err)
		}
	}
	checkReport(t, dir, paths)
}

func TestWriteErrors(t *testing.T) {
	if _, err := Write(t.TempDir(), nil); err == nil {
		t.Error("nil data: no error")
	}
	file := filepath.Join(t.TempDir(), "file")
	if err := os.WriteFile(file, nil, 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err := Write(filepath.Join(file, "sub"), pumpSoak(10)); err == nil || !strings.Contains(err.Error(), "file") {
		t.Errorf("dir under a file: err %v, want one naming the path", err)
	}
}

func TestLongHistory(t *testing.T) {
	dir := t.TempDir()
	paths, err := Write(dir, pumpSoak(4096))
	if err != nil {
		t.Fatal(err)
	}
	c := checkReport(t, dir, paths)
	if len(c.pngs) != 6 {
		t.Errorf("PNGs %v, want 6", c.pngs)
	}
}

func BenchmarkWrite4096(b *testing.B) {
	d := pumpSoak(4096)
	dir := b.TempDir()
	for b.Loop() {
		if _, err := Write(dir, d); err != nil {
			b.Fatal(err)
		}
	}
}

// A soak that could not judge every phase: the header says INCONCLUSIVE,
// the phase that never ran has no span and reads "not run", and each
// row's note (cut short by the trip, a prediction outside the interval)
// is shown.
func TestInconclusiveAndNotRun(t *testing.T) {
	d := pumpSoak(120)
	d.Verdict, d.ExitCode = "inconclusive", 5
	d.Phases[1].Verdict, d.Phases[1].Reason = "inconclusive", "only 300 judged samples, want ≥ 400"
	d.Phases[1].Note = "cut by trip (12 after it)"
	d.Phases[2] = Phase{Index: 2, Name: "outage", Start: math.NaN(), End: math.NaN(), Verdict: "not_run",
		Reason: "not run: the soak ended before it"}
	d.Phases = append(d.Phases, Phase{Index: 3, Name: "bounded", Start: 300, End: 360, Samples: 6000,
		Measured: f64(0.0007), CILow: f64(0.0006), CIHigh: f64(0.0008), Predicted: f64(0.09), Verdict: "pass",
		Reason: "within the bound 0.5; warning: prediction 0.09 outside the measured interval", Note: "prediction outside interval"})
	dir := t.TempDir()
	paths, err := Write(dir, d)
	if err != nil {
		t.Fatal(err)
	}
	c := checkReport(t, dir, paths)
	for _, s := range []string{"INCONCLUSIVE", "exit code 5", "only 300 judged samples, want ≥ 400", "cut by trip (12 after it)",
		"not run", "not run: the soak ended before it", "prediction outside interval"} {
		if !strings.Contains(c.text, s) {
			t.Errorf("report text lacks %q", s)
		}
	}
	if strings.Contains(c.text, "not_run") {
		t.Errorf("the report shows the JSON spelling not_run")
	}
	if !strings.Contains(c.html, `class="inconclusive"`) || !strings.Contains(c.html, `class="notrun"`) {
		t.Errorf("rows lack their verdict classes")
	}
}

// conveyorInputs are small inputs of our own (a conveyor's loop, its
// profile and a two-phase scenario) for the provenance checks.
var conveyorInputs = []struct{ role, path, text string }{
	{"loop", "loops/conveyor.yaml", "period: 10ms\nplant: {a: [[-2.5]], b: [[5]], c: [[1]]}\n"},
	{"scenario", "scenarios/conveyor.yaml", "name: conveyor\nprofile: wifi.yaml\nphases:\n  - {name: nominal, duration: 3m}\n"},
	{"scenario's base profile", "profiles/wifi.yaml", "sensor_to_controller: {loss: 0.02, delay: {kind: constant, value: 4ms}}\n"},
}

func provenanceSoak() *Data {
	d := pumpSoak(120)
	d.TimeScale = 0.3
	pv := &Provenance{Version: "v0.9.1", Revision: "0123456789abcdef0123456789abcdef01234567", Modified: true,
		Go: "go1.26.0", CommandLine: []string{"monitor", "soak", "--loop", "loops/conveyor.yaml", "--time-scale", "0.3", "--report", "out dir"},
		WorkDir: "/lab/conveyor", TimeScale: 0.3, Seed: 42,
		Started: time.Date(2026, 12, 2, 9, 0, 0, 0, time.UTC), Ended: time.Date(2026, 12, 2, 9, 1, 30, 500e6, time.UTC)}
	for _, in := range conveyorInputs {
		pv.Inputs = append(pv.Inputs, InputFromBytes(in.role, in.path, []byte(in.text)))
	}
	pv.Inputs = append(pv.Inputs, Input{Role: "profile of phase outage", Path: "gone.yaml", Err: "reading gone.yaml for the report: no such file"})
	d.Provenance = pv
	// Scenario times: 3 min, 3 min, 1 min; at scale 0.3 the phases ran 54 s, 54 s, 18 s.
	spans := [][2]float64{{0, 180}, {180, 360}, {360, 420}}
	for i := range d.Phases {
		d.Phases[i].ScenarioStart, d.Phases[i].ScenarioEnd = spans[i][0], spans[i][1]
		d.Phases[i].Start, d.Phases[i].End = spans[i][0]*0.3, spans[i][1]*0.3
	}
	d.Phases[0].Network = &PhaseNetwork{Source: "profiles/wifi.yaml", PredictedWith: "the profile the relay applied",
		Settings: []DirectionText{{"sensor_to_controller", "loss 0.02, delay constant 4ms"}, {"controller_to_actuator", "loss 0, delay constant 0"}},
		Measured: []DirectionMeasure{{Direction: "sensor_to_controller", Datagrams: 5400, Dropped: 108, Delays: 5292, DelaySum: 5292 * 0.004, DelayMedian: 0.004},
			{Direction: "controller_to_actuator", Datagrams: 5292, Delays: 5292, DelayMedian: math.NaN()}}}
	d.Phases[1].Network = &PhaseNetwork{Source: "profiles/wifi.yaml with set {sensor_to_controller.loss: 0.3}",
		PredictedWith:   "another belief: the relayed profile with the phase's predict_with {sensor_to_controller.loss: 0}",
		Settings:        []DirectionText{{"sensor_to_controller", "loss 0.3, delay constant 4ms"}},
		PredictSettings: []DirectionText{{"sensor_to_controller", "loss 0, delay constant 4ms"}}}
	d.Phases[2] = Phase{Index: 2, Name: "outage", Start: math.NaN(), End: math.NaN(), ScenarioStart: 360, ScenarioEnd: 420,
		Verdict: "not_run", Reason: "not run: the soak ended before it",
		Network: &PhaseNetwork{Source: "profiles/wifi.yaml with set {sensor_to_controller.loss: 0.6}",
			Settings: []DirectionText{{"sensor_to_controller", "loss 0.6, delay constant 4ms"}}}}
	return d
}

// elementText is the text inside the element with the given id.
func elementText(t *testing.T, page, id string) string {
	t.Helper()
	doc, err := html.Parse(strings.NewReader(page))
	if err != nil {
		t.Fatal(err)
	}
	var found *html.Node
	var walk func(n *html.Node)
	walk = func(n *html.Node) {
		for _, a := range n.Attr {
			if a.Key == "id" && a.Val == id {
				found = n
			}
		}
		for c := n.FirstChild; c != nil && found == nil; c = c.NextSibling {
			walk(c)
		}
	}
	walk(doc)
	if found == nil {
		t.Fatalf("no element with id %q", id)
	}
	var b strings.Builder
	var text func(n *html.Node)
	text = func(n *html.Node) {
		if n.Type == html.TextNode {
			b.WriteString(n.Data)
		}
		for c := n.FirstChild; c != nil; c = c.NextSibling {
			text(c)
		}
	}
	text(found)
	return b.String()
}

// The report says what ran, from what and when, in an element a script
// can find (id="provenance", one id per field), each input embedded and
// hashed; the phases give scenario and wall time; a phase not run says so;
// each phase lists the network in force and what the relay measured.
func TestProvenanceAndPhaseTimes(t *testing.T) {
	dir := t.TempDir()
	paths, err := Write(dir, provenanceSoak())
	if err != nil {
		t.Fatal(err)
	}
	c := checkReport(t, dir, paths)
	fields := []struct{ id, want string }{
		{"prov-version", "v0.9.1"},
		{"prov-revision", "0123456789abcdef0123456789abcdef01234567"},
		{"prov-modified", "yes"},
		{"prov-command-line", "monitor soak --loop loops/conveyor.yaml --time-scale 0.3 --report 'out dir'"},
		{"prov-time-scale", "0.3"},
		{"prov-started", "2026-12-02 09:00:00.000 UTC"},
		{"prov-ended", "2026-12-02 09:01:30.500 UTC (1m30.5s after the start)"},
		{"prov-seed", "42"},
		{"prov-work-dir", "/lab/conveyor"},
	}
	for _, f := range fields {
		if got := elementText(t, c.html, f.id); !strings.Contains(got, f.want) {
			t.Errorf("#%s = %q, want it to contain %q", f.id, got, f.want)
		}
	}
	for i, in := range conveyorInputs {
		// SHA-256 computed here from the text, independently of the report.
		sum := sha256.Sum256([]byte(in.text))
		want := hex.EncodeToString(sum[:])
		id := fmt.Sprintf("input-%d", i+1)
		row := elementText(t, c.html, id)
		if !strings.Contains(row, want) || !strings.Contains(row, in.path) || !strings.Contains(row, in.role) {
			t.Errorf("#%s = %q, want role %q, path %q and SHA-256 %s", id, row, in.role, in.path, want)
		}
		if got := elementText(t, c.html, id+"-text"); !strings.Contains(got, in.text) {
			t.Errorf("#%s-text = %q, want the file's text embedded", id, got)
		}
	}
	if !strings.Contains(c.html, `<details class="input-text"`) {
		t.Errorf("inputs not in collapsible details")
	}
	if row := elementText(t, c.html, "input-4"); !strings.Contains(row, "no such file") {
		t.Errorf("an input that could not be read back: row %q", row)
	}
	for _, s := range []string{
		"scenario 0–3 min, ran 54.0 s at time scale 0.3 (0.0–54.0 s after the start)",
		"scenario 3–6 min, ran 54.0 s at time scale 0.3 (54.0–108.0 s after the start)",
		"scenario 6–7 min, not run",
		"wall time (seconds since the start, as on the plots' time axes) = scenario time × 0.3",
		// per-phase settings, the prediction's profile, the measurement
		"loss 0.02, delay constant 4ms", "loss 0.3, delay constant 4ms", "loss 0.6, delay constant 4ms",
		"profiles/wifi.yaml with set {sensor_to_controller.loss: 0.3}",
		"predict_with {sensor_to_controller.loss: 0}",
		"0.02 (108 of 5400)", "4 ms",
	} {
		if !strings.Contains(c.text, s) {
			t.Errorf("report text lacks %q", s)
		}
	}
	net := elementText(t, c.html, "network")
	if !strings.Contains(net, "prediction used: loss 0, delay constant 4ms") {
		t.Errorf("the phase with predict_with does not show the prediction's profile: %q", net)
	}
	if i := strings.Index(net, "outage"); i < 0 || strings.Contains(net[i:], "5400") {
		t.Errorf("the phase not run shows measurements: %q", net)
	}
}

// The phase spans read as a lab lead reads a scenario.
func TestPhaseSpans(t *testing.T) {
	nan := math.NaN()
	cases := []struct {
		name  string
		ph    Phase
		scale float64
		want  string
	}{
		{"scaled", Phase{ScenarioStart: 0, ScenarioEnd: 180, Start: 0, End: 54}, 0.3, "scenario 0–3 min, ran 54.0 s at time scale 0.3 (0.0–54.0 s after the start)"},
		{"real time", Phase{ScenarioStart: 180, ScenarioEnd: 210, Start: 180, End: 210}, 1, "scenario 3 min – 3 min 30 s, ran 30.0 s (180.0–210.0 s after the start)"},
		{"seconds", Phase{ScenarioStart: 0, ScenarioEnd: 20, Start: 0.1, End: 2.1}, 0.1, "scenario 0–20 s, ran 2.0 s at time scale 0.1 (0.1–2.1 s after the start)"},
		{"cut by the trip", Phase{ScenarioStart: 0, ScenarioEnd: 180, Start: 0, End: 12}, 0.3, "scenario 0–3 min, ran 12.0 s at time scale 0.3 of the 54.0 s planned (0.0–12.0 s after the start)"},
		{"not run", Phase{ScenarioStart: 180, ScenarioEnd: 240, Start: nan, End: nan, Verdict: "not_run"}, 0.3, "scenario 3–4 min, not run"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if _, _, got := phaseSpans(c.ph, c.scale); got != c.want {
				t.Errorf("span %q, want %q", got, c.want)
			}
		})
	}
}

// The plots use our palette, not a plotting library's default cycle: no Go
// file of the repository names its first colours. The codes are built
// from parts so that this file does not hold them either.
func TestPaletteIsOurs(t *testing.T) {
	var banned []string
	for _, parts := range [][3]string{{"1f", "77", "b4"}, {"ff", "7f", "0e"}, {"2c", "a0", "2c"}, {"94", "67", "bd"}, {"d6", "27", "28"}} {
		banned = append(banned, "#"+parts[0]+parts[1]+parts[2])
		banned = append(banned, fmt.Sprintf("r: 0x%s, g: 0x%s, b: 0x%s", parts[0], parts[1], parts[2]))
	}
	root, err := filepath.Abs(filepath.Join("..", ".."))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(filepath.Join(root, "go.mod")); err != nil {
		t.Fatalf("repository root not found at %s: %v", root, err)
	}
	files := 0
	err = filepath.WalkDir(root, func(path string, d os.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if d.IsDir() && (d.Name() == ".git" || d.Name() == "node_modules") {
			return filepath.SkipDir
		}
		if d.IsDir() || !strings.HasSuffix(path, ".go") {
			return nil
		}
		b, err := os.ReadFile(path)
		if err != nil {
			return err
		}
		files++
		low := strings.Join(strings.Fields(strings.ToLower(string(b))), " ")
		for _, s := range banned {
			if strings.Contains(low, s) {
				t.Errorf("%s: names %s, a colour of a common plotting library's default cycle", path, s)
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if files < 50 {
		t.Errorf("only %d Go files read under %s", files, root)
	}
	for _, c := range Palette {
		for _, s := range banned {
			if strings.EqualFold(colorHex(c), s) {
				t.Errorf("palette colour %s is a default-cycle colour", colorHex(c))
			}
		}
	}
}
