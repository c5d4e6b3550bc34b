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
	return strings.ToUpper(phaseVerdict(v))
}

// phaseVerdict is a verdict as a reader reads it: "not run" for not_run.
func phaseVerdict(v string) string {
	if v == "not_run" {
		return "not run"
	}
	return v
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
		pg.Rows = append(pg.Rows, pageRow{
			Name:      name,
			Span:      fmtSeconds(ph.Start) + " – " + fmtSeconds(ph.End),
			Samples:   fmt.Sprint(ph.Samples),
			Measured:  meas,
			Predicted: fmtNum(ph.Predicted),
			Ratio:     r,
			Verdict:   orDash(phaseVerdict(ph.Verdict)),
			Class:     verdictClass(ph.Verdict),
			Note:      ph.Note,
			Reason:    ph.Reason,
		})
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
<section>
<h2>Phases</h2>
{{if .Rows}}<table>
<thead><tr><th>Phase</th><th>Start – end</th><th>Samples</th><th>Measured E[eᵀe] [CI]</th><th>Predicted</th><th>Ratio</th><th>Verdict</th><th>Note</th><th>Reason</th></tr></thead>
<tbody>{{range .Rows}}
<tr><td>{{.Name}}</td><td class="num">{{.Span}}</td><td class="num">{{.Samples}}</td><td class="num">{{.Measured}}</td><td class="num">{{.Predicted}}</td><td class="num">{{.Ratio}}</td><td class="{{.Class}}">{{.Verdict}}</td><td>{{.Note}}</td><td>{{.Reason}}</td></tr>{{end}}
</tbody>
</table>{{else}}<p class="nodata">No phases were recorded.</p>{{end}}
</section>
<section>
<h2>Plots</h2>
{{range .Figures}}<figure>
{{if .Src}}<img src="{{.Src}}" alt="{{.Title}}">
<figcaption><strong>{{.Title}}.</strong> {{.Caption}} {{if .File}}(Also attached as {{.File}}.){{end}}</figcaption>
{{else}}<div class="nodata">{{.Title}}: no data — {{.NoData}}</div>{{end}}
</figure>
{{end}}</section>
<footer>Report written {{.Generated}} by rigwire.</footer>
</body>
</html>
`))
