package report

import (
	"bytes"
	"fmt"
	"html/template"
	"math"
	"strings"
	"time"
)

// tripNote is said beside every trip: the guard is software, not a stop.
const tripNote = "This trip is a software guard inside rigwire that ended the run; " +
	"it is not an emergency stop — the rig's own e-stop must work independently of this link."

type pageFigure struct {
	Title   string
	Caption string
	Src     template.URL // data: URI of the PNG
	File    string
	NoData  string
}

type pageRow struct {
	Name, Span, Samples, Measured, Predicted, Ratio, Verdict, Class, Note, Reason string
	// ScenarioSpan is the planned span in scenario time, WallSpan what
	// it ran in wall time since the start.
	ScenarioSpan, WallSpan string
	Net                    *pageNet
}

// pageNet is one phase's network block.
type pageNet struct {
	Source, PredictedWith string
	Dirs                  []pageDir
}

type pageDir struct {
	Direction, Settings, Predict, Datagrams, Loss, MeanDelay, MedianDelay, Other string
}

type pageProv struct {
	Version, Revision, Modified, Go, CommandLine, WorkDir, TimeScale, Started, Ended, Seed string
	Inputs                                                                                 []pageInput
}

type pageInput struct {
	Role, Path, Size, SHA256, Text, NotEmbedded, Err, ID string
}

type page struct {
	Title, Loop, Scenario, Started, Duration string
	Verdict, VerdictClass, VerdictText       string
	ExitCode                                 int
	Notes                                    []string
	Trip                                     *pageTrip
	Rows                                     []pageRow
	Figures                                  []pageFigure
	Generated                                string
	Prov                                     *pageProv
	TimeNote                                 string
	HasNet                                   bool
}

type pageTrip struct {
	Reason, Value, Bound, Elapsed, Phase, Action, Note string
}

func verdictClass(v string) string {
	switch strings.ToLower(v) {
	case "pass":
		return "pass"
	case "fail":
		return "fail"
	case "tripped":
		return "tripped"
	case "running":
		return "running"
	case "inconclusive":
		return "inconclusive"
	case "not_run", "not run":
		return "notrun"
	}
	return "unknown"
}

func verdictText(v string) string {
	switch strings.ToLower(v) {
	case "pass":
		return "PASS"
	case "fail":
		return "FAIL — see the phases below"
	case "inconclusive":
		return "INCONCLUSIVE — no phase failed, but the data could not judge every one (see the phases below)"
	case "tripped":
		return "TRIPPED — the safety guard ended the run"
	case "":
		return "NO VERDICT"
	}
	return strings.ToUpper(PhaseVerdictText(v))
}

func fmtFloat(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return fmt.Sprint(v)
	}
	return fmt.Sprintf("%.4g", v)
}

func buildPage(d *Data, figs []*figure) page {
	title := d.Title
	if title == "" {
		title = "Soak report"
	}
	pg := page{
		Title:        title,
		Loop:         orDash(d.Loop),
		Scenario:     orDash(d.Scenario),
		Started:      "—",
		Duration:     d.Duration.Round(time.Millisecond).String(),
		Verdict:      d.Verdict,
		VerdictClass: verdictClass(d.Verdict),
		VerdictText:  verdictText(d.Verdict),
		ExitCode:     d.ExitCode,
		Notes:        d.Notes,
		Generated:    time.Now().UTC().Format(time.RFC3339),
	}
	if !d.Started.IsZero() {
		pg.Started = d.Started.UTC().Format("2006-01-02 15:04:05 UTC")
	}
	if t := d.Trip; t != nil {
		pg.Trip = &pageTrip{
			Reason:  orDash(t.Reason),
			Value:   fmtFloat(t.Value),
			Bound:   fmtFloat(t.Bound),
			Elapsed: fmtSeconds(t.Elapsed),
			Phase:   orDash(t.Phase),
			Action:  orDash(t.Action),
			Note:    tripNote,
		}
	}
	for _, ph := range d.Phases {
		name := ph.Name
		if name == "" {
			name = fmt.Sprintf("phase %d", ph.Index)
		}
		meas := fmtNum(ph.Measured)
		if _, ok := val(ph.Measured); ok {
			if _, ok := val(ph.CILow); ok {
				if _, ok := val(ph.CIHigh); ok {
					meas += " [" + fmtNum(ph.CILow) + ", " + fmtNum(ph.CIHigh) + "]"
				}
			}
		}
		r := "—"
		if v, ok := ratio(ph.Measured, ph.Predicted); ok {
			r = fmt.Sprintf("%.3g", v)
		}
		scen, wall, span := phaseSpans(ph, d.scale())
		pg.Rows = append(pg.Rows, pageRow{
			Name:         name,
			Span:         span,
			ScenarioSpan: scen,
			WallSpan:     wall,
			Net:          buildNet(ph),
			Samples:      fmt.Sprint(ph.Samples),
			Measured:     meas,
			Predicted:    fmtNum(ph.Predicted),
			Ratio:        r,
			Verdict:      orDash(PhaseVerdictText(ph.Verdict)),
			Class:        verdictClass(ph.Verdict),
			Note:         ph.Note,
			Reason:       ph.Reason,
		})
	}
	pg.TimeNote = timeNote(d.scale())
	for _, r := range pg.Rows {
		pg.HasNet = pg.HasNet || r.Net != nil
	}
	if pv := d.Provenance; pv != nil {
		pg.Prov = buildProv(pv)
	}
	for _, f := range figs {
		pf := pageFigure{Title: f.Title, Caption: f.Caption, File: f.File, NoData: f.NoData}
		if f.png != nil {
			pf.Src = template.URL(dataURI(f.png))
		} else if pf.NoData == "" {
			pf.NoData = "no data"
		}
		pg.Figures = append(pg.Figures, pf)
	}
	return pg
}

// scale is the time scale, 1 when unset.
func (d *Data) scale() float64 {
	if d.Provenance != nil && d.Provenance.TimeScale > 0 && d.TimeScale == 0 {
		return d.Provenance.TimeScale
	}
	if d.TimeScale > 0 && !math.IsInf(d.TimeScale, 0) {
		return d.TimeScale
	}
	return 1
}

// timeNote says how the two clocks of the report relate.
func timeNote(scale float64) string {
	if scale == 1 {
		return "Scenario time is the time the scenario file gives; the soak ran at time scale 1, so " +
			"wall time (seconds since the start, as on the plots' time axes) equals scenario time."
	}
	return fmt.Sprintf("Scenario time is the time the scenario file gives; the soak ran at time scale %g, "+
		"so each phase ran %g times its scenario duration: wall time (seconds since the start, as on the "+
		"plots' time axes) = scenario time × %g. The loop itself ran at its own period.", scale, scale, scale)
}

// fmtScenarioTime writes a scenario time as the scenario file would:
// whole minutes as "3 min", else minutes and seconds, or seconds.
func fmtScenarioTime(s float64) string {
	switch {
	case math.IsNaN(s) || math.IsInf(s, 0):
		return "—"
	case s == 0:
		return "0"
	case s >= 60 && wholeMinutes(s):
		return fmt.Sprintf("%g min", math.Round(s/60))
	case s >= 60:
		m := math.Floor(s / 60)
		return fmt.Sprintf("%g min %s", m, exactSec.Format(s-60*m))
	}
	return exactSec.Format(math.Round(s*1000) / 1000)
}

// wholeMinutes reports whether s seconds are a whole number of minutes
// (to rounding).
func wholeMinutes(s float64) bool { return math.Abs(s/60-math.Round(s/60)) < 1e-9 }

// scenarioSpan is "0–3 min" (one unit when both ends are whole minutes)
// or "3 min – 3 min 30 s".
func scenarioSpan(a, b float64) string {
	if math.IsNaN(a) || math.IsNaN(b) {
		return "—"
	}
	if wholeMinutes(a) && wholeMinutes(b) && b > 0 {
		return fmt.Sprintf("%g–%g min", math.Round(a/60), math.Round(b/60))
	}
	if a < 60 && b < 60 {
		return strings.TrimSuffix(exactSec.Format(a), " s") + "–" + exactSec.Format(b)
	}
	return fmtScenarioTime(a) + " – " + fmtScenarioTime(b)
}

// phaseSpans returns a phase's planned span in scenario time, the span it
// ran in wall time, and the sentence that says both:
// "scenario 0–3 min, ran 54.0 s at time scale 0.3 (0.0–54.0 s after the start)".
func phaseSpans(ph Phase, scale float64) (scen, wall, span string) {
	scen = scenarioSpan(ph.ScenarioStart, ph.ScenarioEnd)
	started := !math.IsNaN(ph.Start) && !math.IsInf(ph.Start, 0)
	ended := !math.IsNaN(ph.End) && !math.IsInf(ph.End, 0)
	at := ""
	if scale != 1 {
		at = fmt.Sprintf(" at time scale %g", scale)
	}
	switch {
	case ph.Verdict == "not_run" && !started:
		wall = "not run"
	case started && ended:
		wall = strings.TrimSuffix(tenths.Format(ph.Start), " s") + "–" + tenths.Format(ph.End)
	case started:
		wall = "from " + tenths.Format(ph.Start)
	default:
		wall = "—"
	}
	var parts []string
	if scen != "—" {
		parts = append(parts, "scenario "+scen)
	}
	switch {
	case wall == "not run":
		parts = append(parts, "not run")
	case started && ended:
		ran := "ran " + tenths.Format(ph.End-ph.Start) + at
		if planned := (ph.ScenarioEnd - ph.ScenarioStart) * scale; planned > 0 && ph.End-ph.Start < 0.95*planned {
			ran += " of the " + tenths.Format(planned) + " planned"
		}
		parts = append(parts, ran+" ("+wall+" after the start)")
	case started:
		parts = append(parts, "started "+tenths.Format(ph.Start)+" after the start"+at)
	}
	if len(parts) == 0 {
		return scen, wall, "—"
	}
	return scen, wall, strings.Join(parts, ", ")
}

func buildNet(ph Phase) *pageNet {
	n := ph.Network
	if n == nil {
		return nil
	}
	pn := &pageNet{Source: orDash(n.Source), PredictedWith: orDash(n.PredictedWith)}
	dirs := map[string]*pageDir{}
	var order []string
	get := func(dir string) *pageDir {
		if d, ok := dirs[dir]; ok {
			return d
		}
		d := &pageDir{Direction: dir, Settings: "—", Predict: "", Datagrams: "—", Loss: "—", MeanDelay: "—", MedianDelay: "—"}
		dirs[dir] = d
		order = append(order, dir)
		return d
	}
	for _, t := range n.Settings {
		get(t.Direction).Settings = t.Text
	}
	for _, t := range n.PredictSettings {
		get(t.Direction).Predict = t.Text
	}
	for _, m := range n.Measured {
		d := get(m.Direction)
		if ph.Verdict == "not_run" && m.Datagrams == 0 {
			continue
		}
		d.Datagrams = fmt.Sprint(m.Datagrams)
		if judged := m.Datagrams - m.Other; judged > 0 {
			d.Loss = fmt.Sprintf("%.4g (%d of %d)", float64(m.Dropped)/float64(judged), m.Dropped, judged)
		}
		if m.Delays > 0 {
			d.MeanDelay = fmtDelay(m.DelaySum / float64(m.Delays))
			d.MedianDelay = fmtDelay(m.DelayMedian)
		}
		if m.Other > 0 {
			d.Other = fmt.Sprintf("%d ended otherwise (overflow, tripped, …)", m.Other)
		}
	}
	for _, dir := range order {
		pn.Dirs = append(pn.Dirs, *dirs[dir])
	}
	return pn
}

// fmtDelay writes seconds as milliseconds, "—" when unknown.
func fmtDelay(s float64) string { return delayMs.Format(s) }

func buildProv(pv *Provenance) *pageProv {
	p := &pageProv{
		Version:     orDash(pv.Version),
		Revision:    orDash(pv.Revision),
		Modified:    "no",
		Go:          orDash(pv.Go),
		CommandLine: orDash(shellJoin(pv.CommandLine)),
		WorkDir:     orDash(pv.WorkDir),
		TimeScale:   "1 (real time)",
		Started:     fmtWall(pv.Started),
		Ended:       fmtWall(pv.Ended),
		Seed:        fmt.Sprint(pv.Seed),
	}
	if pv.Modified {
		p.Modified = "yes: the work tree had uncommitted changes"
	}
	if pv.TimeScale > 0 && pv.TimeScale != 1 {
		p.TimeScale = fmt.Sprintf("%g (each phase ran %g × its scenario duration)", pv.TimeScale, pv.TimeScale)
	}
	if !pv.Started.IsZero() && !pv.Ended.IsZero() {
		p.Ended += " (" + pv.Ended.Sub(pv.Started).Round(time.Millisecond).String() + " after the start)"
	}
	for i, in := range pv.Inputs {
		pi := pageInput{Role: in.Role, Path: orDash(in.Path), SHA256: orDash(in.SHA256), Text: in.Text,
			NotEmbedded: in.NotEmbedded, Err: in.Err, ID: fmt.Sprintf("input-%d", i+1)}
		if in.Err == "" {
			pi.Size = fmt.Sprintf("%d bytes", in.Size)
		}
		p.Inputs = append(p.Inputs, pi)
	}
	return p
}

// fmtWall writes a wall-clock time in UTC to the millisecond.
func fmtWall(t time.Time) string {
	if t.IsZero() {
		return "—"
	}
	return t.UTC().Format("2006-01-02 15:04:05.000 UTC")
}

// shellJoin writes a command line so that it can be pasted into a POSIX
// shell: arguments with characters the shell would read are single-quoted.
func shellJoin(args []string) string {
	out := make([]string, len(args))
	for i, a := range args {
		safe := a != ""
		for _, r := range a {
			if !(r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r >= '0' && r <= '9' || strings.ContainsRune("-_./=:,+@%", r)) {
				safe = false
				break
			}
		}
		if safe {
			out[i] = a
		} else {
			out[i] = "'" + strings.ReplaceAll(a, "'", `'\''`) + "'"
		}
	}
	return strings.Join(out, " ")
}

func orDash(s string) string {
	if s == "" {
		return "—"
	}
	return s
}

func renderHTML(d *Data, figs []*figure) ([]byte, error) {
	var buf bytes.Buffer
	if err := pageTemplate.Execute(&buf, buildPage(d, figs)); err != nil {
		return nil, fmt.Errorf("report: rendering HTML: %w", err)
	}
	return buf.Bytes(), nil
}

var pageTemplate = template.Must(template.New("report").Parse(`<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>{{.Title}}</title>
<style>
body { font-family: "DejaVu Sans", Arial, Helvetica, sans-serif; color: #1a1a1a; background: #fff; margin: 2em auto; max-width: 62em; padding: 0 1em; line-height: 1.4; }
h1 { font-size: 1.6em; margin-bottom: 0.2em; }
h2 { font-size: 1.2em; border-bottom: 1px solid #999; padding-bottom: 0.15em; margin-top: 1.6em; }
.verdict { display: inline-block; font-weight: bold; font-size: 1.3em; padding: 0.25em 0.7em; border: 3px solid; margin: 0.4em 0; }
.verdict.pass { color: #145a14; border-color: #145a14; background: #eaf5ea; }
.verdict.fail { color: #8b1010; border-color: #8b1010; background: #fbeaea; }
.verdict.tripped { color: #7a4100; border-color: #7a4100; background: #fdf1e0; }
.verdict.inconclusive { color: #5a4a00; border-color: #5a4a00; background: #fbf6dc; }
.verdict.unknown, .verdict.running, .verdict.notrun { color: #444; border-color: #444; background: #f2f2f2; }
dl.facts { display: grid; grid-template-columns: max-content auto; gap: 0.15em 1em; margin: 0.6em 0; }
dl.facts dt { font-weight: bold; }
dl.facts dd { margin: 0; font-family: "DejaVu Sans Mono", Consolas, monospace; word-break: break-all; }
ul.notes { font-family: "DejaVu Sans Mono", Consolas, monospace; font-size: 0.9em; }
.trip { border: 2px solid #7a4100; background: #fdf1e0; padding: 0.6em 1em; margin: 1em 0; }
.trip h2 { margin-top: 0.2em; border: none; }
.trip .guard { font-style: italic; }
table { border-collapse: collapse; width: 100%; font-size: 0.92em; }
th, td { border: 1px solid #bbb; padding: 0.3em 0.5em; text-align: left; vertical-align: top; }
th { background: #eee; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
td.pass { color: #145a14; font-weight: bold; }
td.fail { color: #8b1010; font-weight: bold; }
td.inconclusive { color: #5a4a00; font-weight: bold; }
td.running, td.unknown, td.tripped, td.notrun { color: #444; font-weight: bold; }
figure { margin: 1.2em 0; page-break-inside: avoid; break-inside: avoid; }
figure img { max-width: 100%; height: auto; border: 1px solid #ddd; }
figcaption { font-size: 0.9em; color: #333; margin-top: 0.3em; }
.nodata { border: 1px dashed #999; color: #555; padding: 1.5em; text-align: center; }
pre { background: #f4f5f6; border: 1px solid #ccc; padding: 0.6em; overflow-x: auto; font-size: 0.85em; }
details.input-text { margin: 0.4em 0; }
details.input-text summary { cursor: pointer; font-family: "DejaVu Sans Mono", Consolas, monospace; font-size: 0.9em; word-break: break-all; }
td.input-sha256, td.input-path { font-family: "DejaVu Sans Mono", Consolas, monospace; font-size: 0.85em; word-break: break-all; }
td.settings { font-size: 0.9em; }
tr.net-phase td { background: #f4f5f6; }
.timenote { font-size: 0.9em; color: #333; }
footer { margin-top: 2em; font-size: 0.8em; color: #666; }
@media print { body { margin: 0; max-width: none; } h2 { page-break-after: avoid; break-after: avoid; } }
</style>
</head>
<body>
<header>
<h1>{{.Title}}</h1>
<div class="verdict {{.VerdictClass}}">{{.VerdictText}}</div>
<dl class="facts">
<dt>Verdict</dt><dd>{{if .Verdict}}{{.Verdict}}{{else}}—{{end}} (exit code {{.ExitCode}})</dd>
<dt>Loop</dt><dd>{{.Loop}}</dd>
<dt>Scenario</dt><dd>{{.Scenario}}</dd>
<dt>Started</dt><dd>{{.Started}}</dd>
<dt>Duration</dt><dd>{{.Duration}}</dd>
</dl>
{{if .Notes}}<h2>Notes</h2>
<ul class="notes">{{range .Notes}}
<li>{{.}}</li>{{end}}
</ul>{{end}}
</header>
{{with .Trip}}<section class="trip">
<h2>Safety trip</h2>
<dl class="facts">
<dt>Reason</dt><dd>{{.Reason}}</dd>
<dt>Value</dt><dd>{{.Value}} (bound {{.Bound}})</dd>
<dt>At</dt><dd>{{.Elapsed}} after start</dd>
<dt>Phase</dt><dd>{{.Phase}}</dd>
<dt>Action</dt><dd>{{.Action}}</dd>
</dl>
<p class="guard">{{.Note}}</p>
</section>{{end}}
<section id="phases">
<h2>Phases</h2>
<p class="timenote">{{.TimeNote}}</p>
{{if .Rows}}<table>
<thead><tr><th>Phase</th><th>When</th><th>Samples</th><th>Measured E[eᵀe] [CI]</th><th>Predicted</th><th>Ratio</th><th>Verdict</th><th>Note</th><th>Reason</th></tr></thead>
<tbody>{{range .Rows}}
<tr class="phase"><td>{{.Name}}</td><td class="span" data-scenario="{{.ScenarioSpan}}" data-wall="{{.WallSpan}}">{{.Span}}</td><td class="num">{{.Samples}}</td><td class="num">{{.Measured}}</td><td class="num">{{.Predicted}}</td><td class="num">{{.Ratio}}</td><td class="{{.Class}}">{{.Verdict}}</td><td>{{.Note}}</td><td>{{.Reason}}</td></tr>{{end}}
</tbody>
</table>{{else}}<p class="nodata">No phases were recorded.</p>{{end}}
</section>
{{if .HasNet}}<section id="network">
<h2>Network per phase</h2>
<p>The profile's parameters in force in each phase, per direction (a ramp shows its value at the phase's start → at its end), the profile each phase's prediction used, and what the relay counted in the phase: datagrams read, the share the profile dropped (of those it judged), the mean and median delay it drew (the median read off the delay histogram's buckets). A phase the trip cut is counted up to the trip.</p>
<table>
<thead><tr><th>Phase</th><th>Direction</th><th>In force</th><th>Datagrams</th><th>Loss drawn</th><th>Mean delay</th><th>Median delay</th></tr></thead>
<tbody>{{range .Rows}}{{$row := .}}{{with .Net}}
<tr class="net-phase"><td colspan="7"><strong>{{$row.Name}}</strong> ({{$row.Verdict}}) — relay: {{.Source}}; prediction: {{.PredictedWith}}</td></tr>{{range .Dirs}}
<tr class="net-dir"><td></td><td>{{.Direction}}</td><td class="settings">{{.Settings}}{{if .Predict}}<br><em>prediction used:</em> {{.Predict}}{{end}}</td><td class="num">{{.Datagrams}}</td><td class="num">{{.Loss}}{{if .Other}}<br>{{.Other}}{{end}}</td><td class="num">{{.MeanDelay}}</td><td class="num">{{.MedianDelay}}</td></tr>{{end}}{{end}}{{end}}
</tbody>
</table>
</section>{{end}}
<section>
<h2>Plots</h2>
{{range .Figures}}<figure>
{{if .Src}}<img src="{{.Src}}" alt="{{.Title}}">
<figcaption><strong>{{.Title}}.</strong> {{.Caption}} {{if .File}}(Also attached as {{.File}}.){{end}}</figcaption>
{{else}}<div class="nodata">{{.Title}}: no data — {{.NoData}}</div>{{end}}
</figure>
{{end}}</section>
{{with .Prov}}<section id="provenance">
<h2>Provenance</h2>
<dl class="facts provenance">
<dt>rigwire version</dt><dd id="prov-version" class="prov-version">{{.Version}}</dd>
<dt>VCS revision</dt><dd id="prov-revision" class="prov-revision">{{.Revision}}</dd>
<dt>Modified work tree</dt><dd id="prov-modified" class="prov-modified">{{.Modified}}</dd>
<dt>Go</dt><dd id="prov-go" class="prov-go">{{.Go}}</dd>
<dt>Command line</dt><dd id="prov-command-line" class="prov-command-line">{{.CommandLine}}</dd>
<dt>Working directory</dt><dd id="prov-work-dir" class="prov-work-dir">{{.WorkDir}}</dd>
<dt>Time scale</dt><dd id="prov-time-scale" class="prov-time-scale">{{.TimeScale}}</dd>
<dt>Started</dt><dd id="prov-started" class="prov-started">{{.Started}}</dd>
<dt>Ended</dt><dd id="prov-ended" class="prov-ended">{{.Ended}}</dd>
<dt>Relay seed</dt><dd id="prov-seed" class="prov-seed">{{.Seed}}</dd>
</dl>
<h3>Inputs</h3>
<table class="inputs">
<thead><tr><th>Role</th><th>Path</th><th>Size</th><th>SHA-256</th></tr></thead>
<tbody>{{range .Inputs}}
<tr class="input" id="{{.ID}}" data-role="{{.Role}}"><td class="input-role">{{.Role}}</td><td class="input-path">{{.Path}}</td><td class="num input-size">{{.Size}}</td><td class="input-sha256">{{if .Err}}<span class="input-error">{{.Err}}</span>{{else}}{{.SHA256}}{{end}}</td></tr>{{end}}
</tbody>
</table>
{{range .Inputs}}{{if .Text}}<details class="input-text" id="{{.ID}}-text" data-role="{{.Role}}">
<summary>{{.Role}}: {{.Path}} (SHA-256 {{.SHA256}})</summary>
<pre>{{.Text}}</pre>
</details>
{{else if .NotEmbedded}}<p class="input-not-embedded">{{.Role}} {{.Path}}: not embedded ({{.NotEmbedded}}); its SHA-256 is above.</p>
{{end}}{{end}}</section>
{{end}}<footer>Report written {{.Generated}} by rigwire.</footer>
</body>
</html>
`))
