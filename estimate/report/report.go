package report

import (
	"bytes"
	"encoding/base64"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"gonum.org/v1/plot"

	"rigwire/estimate"
	"rigwire/profiles/laws"
)

// Data is everything one soak report shows.
type Data struct {
	Title    string // e.g. "Soak: conveyor-qualification"
	Loop     string // loop file path
	Scenario string // scenario file path
	Started  time.Time
	Duration time.Duration
	Verdict  string // "pass", "fail", "inconclusive", "tripped"
	ExitCode int
	Notes    []string // free lines (seed, time scale, relay counts…)
	Phases   []Phase
	History  []Point
	Delays   map[string]Histogram // by direction: drawn delays, seconds
	LossRuns map[string]Histogram // by direction: lengths of runs of consecutive losses
	Trip     *Trip                // nil when no trip

	// Provenance says what ran, from what, when: nil leaves the section
	// out (a report without provenance cannot be filed; the soak always
	// gives one).
	Provenance *Provenance
	// TimeScale is the factor the scenario's durations were multiplied
	// by (--time-scale); 0 is read as 1. Scenario time = wall time ÷
	// TimeScale.
	TimeScale float64
	// DelaysAfterTrip are the delays the relay recorded after the safety
	// trip fired (by direction, as Delays): not drawn from the profile
	// (clean sends at once), so they are kept out of Delays and counted
	// apart.
	DelaysAfterTrip map[string]Histogram
	// Frequency is, for a loop with a sinusoidal reference, the predicted
	// response over the reference's frequency range (the loop file's own
	// network) and FrequencyMeasured the measured points drawn over it;
	// both nil otherwise.
	Frequency         []estimate.Harmonic
	FrequencyMeasured []FrequencyMeasure
	// TripWindow is the quantity the trip compared with its bound, over
	// the trip's own window, sampled over the run; nil when the trip
	// judges no windowed bound.
	TripWindow *TripWindow
}

// TripWindow is the safety trip's windowed quantity over the run.
type TripWindow struct {
	// Quantity is "ratio" (windowed mean of eᵀe over the prediction in
	// force, judged against max_ratio) or "second_moment" (the windowed
	// mean of eᵀe, against max_second_moment).
	Quantity string
	Seconds  float64 // the trip's window
	Bound    float64 // the bound it is judged against; 0: none
	// Every is the spacing of the samples in seconds (wall time).
	Every  float64
	Points []TripPoint
}

// TripPoint is one sample of the trip's windowed quantity.
type TripPoint struct {
	Elapsed float64 // seconds from start, as Point.Elapsed
	Value   float64
}

// Phase is one phase's outcome. Nil pointers mean "no value".
type Phase struct {
	Index      int
	Name       string
	Start, End float64 // seconds from start; NaN when the phase did not start or end
	Samples    int64
	Measured   *float64
	CILow      *float64
	CIHigh     *float64
	Predicted  *float64
	Verdict    string // pass | fail | inconclusive | running | not_run
	Reason     string
	// Note is said beside the verdict: cut short by the trip, a
	// prediction outside the measured interval of a bound-only check.
	Note string

	// ScenarioStart and ScenarioEnd are the phase's planned span in
	// scenario time (seconds from the scenario's start, before
	// --time-scale); NaN when unknown.
	ScenarioStart, ScenarioEnd float64
	// Network is what the relay applied in the phase; nil: unknown.
	Network *PhaseNetwork
}

// PhaseNetwork is one phase's network: the profile parameters in force,
// the profile the prediction used, and what the relay measured.
type PhaseNetwork struct {
	// Source says where the relay's profile came from: its file and the
	// phase's overrides ("warehouse-wifi.yaml with the phase's set and
	// ramp").
	Source string
	// Settings are the profile's parameters per direction, in order
	// (sensor_to_controller first); a ramp shows its start and end.
	Settings []DirectionText
	// PredictedWith says which profile the phase's prediction used: the
	// relayed one, or another belief (predict_with), then described.
	PredictedWith string
	// PredictSettings are the prediction's profile per direction when it
	// differs from the relayed one; nil otherwise.
	PredictSettings []DirectionText
	// Measured is what the relay counted in the phase, per direction.
	Measured []DirectionMeasure
}

// DirectionText is a text about one direction.
type DirectionText struct {
	Direction string
	Text      string
}

// DirectionMeasure is what the relay counted in one direction over a
// phase (up to the trip when the trip cut it).
type DirectionMeasure struct {
	Direction string
	// Datagrams read in the direction; Dropped of them by the profile's
	// loss; Other ended otherwise than forwarded or dropped (overflow,
	// stranger, tripped, …).
	Datagrams, Dropped, Other int64
	// Delays drawn and their sum in seconds (mean = DelaySum/Delays).
	Delays   int64
	DelaySum float64
	// DelayMedian is the median drawn delay, read off the histogram's
	// buckets (linear within the bucket); NaN when unknown.
	DelayMedian float64
}

// Point is one sample of the online estimate. Nil pointers mean "no value".
type Point struct {
	Elapsed   float64 // seconds from start
	Measured  *float64
	CILow     *float64
	CIHigh    *float64
	Predicted *float64
	Phase     int // Phase.Index the point belongs to
}

// Histogram holds bucket upper bounds (increasing; the last may be +Inf) and
// the NON-cumulative count of each bucket. The first bucket's lower bound is
// taken as 0 when its upper bound is positive.
type Histogram struct {
	Upper  []float64
	Counts []float64
}

// Trip describes the loop's safety trip that ended the run.
type Trip struct {
	Reason  string
	Value   float64
	Bound   float64
	Elapsed float64 // seconds from start
	Phase   string
	Action  string
}

// File names Write uses inside dir.
const (
	HTMLName         = "report.html"
	SecondMomentName = "second-moment.png"
	RatioName        = "ratio.png"
	PhasesName       = "phases.png"
	LossRunsName     = "loss-runs.png"
	FreqGainName     = "frequency-gain.png"
	FreqPhaseName    = "frequency-phase.png"
	FreqSpreadName   = "frequency-spread.png"
)

// DelayName is the PNG file name of a direction's delay histogram; characters
// other than letters, digits, '-' and '_' become '_'.
func DelayName(direction string) string {
	var b strings.Builder
	for _, r := range direction {
		switch {
		case r >= 'a' && r <= 'z', r >= 'A' && r <= 'Z', r >= '0' && r <= '9', r == '-', r == '_':
			b.WriteRune(r)
		default:
			b.WriteByte('_')
		}
	}
	if b.Len() == 0 {
		b.WriteString("unnamed")
	}
	return "delay-" + b.String() + ".png"
}

// figure is one plot of the report: either a PNG or the reason it is missing.
type figure struct {
	File    string // base name of the PNG; empty: HTML-only
	Title   string
	Caption string
	png     []byte
	plot    *plot.Plot // the plot drawn (for the SVG the tests read)
	NoData  string     // non-empty: why the plot was skipped
}

// Write creates dir if needed and writes dir/report.html and one PNG per plot
// that has data. It returns the paths written, report.html first. A plot
// without data is skipped (the HTML says "no data" and why) and a stale PNG
// of the same fixed name left by an earlier report is removed so that the
// directory never mixes runs.
func Write(dir string, d *Data) ([]string, error) {
	if d == nil {
		return nil, fmt.Errorf("report: no data to write")
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, fmt.Errorf("report: creating %s: %w", dir, err)
	}
	figs := buildFigures(d)
	var written []string
	for _, f := range figs {
		if f.File == "" { // HTML-only placeholder
			continue
		}
		path := filepath.Join(dir, f.File)
		if f.png == nil {
			if err := os.Remove(path); err != nil && !os.IsNotExist(err) {
				return written, fmt.Errorf("report: removing stale %s: %w", path, err)
			}
			continue
		}
		if err := writeFile(path, f.png); err != nil {
			return written, err
		}
		written = append(written, path)
	}
	page, err := renderHTML(d, figs)
	if err != nil {
		return written, err
	}
	htmlPath := filepath.Join(dir, HTMLName)
	if err := writeFile(htmlPath, page); err != nil {
		return written, err
	}
	return append([]string{htmlPath}, written...), nil
}

// writeFile writes through a temporary file and renames it, so a reader
// never sees half a report.
func writeFile(path string, b []byte) error {
	tmp, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+".*")
	if err != nil {
		return fmt.Errorf("report: writing %s: %w", path, err)
	}
	_, werr := tmp.Write(b)
	cerr := tmp.Close()
	if werr == nil {
		werr = cerr
	}
	if werr == nil {
		werr = os.Chmod(tmp.Name(), 0o644)
	}
	if werr == nil {
		werr = os.Rename(tmp.Name(), path)
	}
	if werr != nil {
		os.Remove(tmp.Name())
		return fmt.Errorf("report: writing %s: %w", path, werr)
	}
	return nil
}

func buildFigures(d *Data) []*figure {
	figs := []*figure{
		secondMomentFigure(d),
		ratioFigure(d),
		phasesFigure(d),
	}
	afterWhy := ""
	if d.Trip != nil && d.Trip.Action != "" {
		afterWhy = " (action " + d.Trip.Action + ")"
	}
	for _, dir := range sortedKeys(d.Delays) {
		figs = append(figs, delayFigure(dir, d.Delays[dir], d.DelaysAfterTrip[dir], afterWhy))
	}
	if len(d.Delays) == 0 {
		figs = append(figs, &figure{Title: "Drawn delays", NoData: "no delay histogram was recorded"})
	}
	figs = append(figs, lossRunsFigure(d))
	if len(d.Frequency) > 0 {
		figs = append(figs, frequencyFigures(d)...)
	}
	return figs
}

func sortedKeys(m map[string]Histogram) []string {
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	return keys
}

// val returns *p when it is a finite number.
func val(p *float64) (float64, bool) {
	if p == nil || math.IsNaN(*p) || math.IsInf(*p, 0) {
		return 0, false
	}
	return *p, true
}

func fmtNum(p *float64) string {
	v, ok := val(p)
	if !ok {
		return "—"
	}
	return fmt.Sprintf("%.4g", v)
}

// Times as the report writes them (laws.Seconds): seconds to a tenth
// ("54.0 s") for times since the start, milliseconds ("8.123 ms") for
// delays, seconds ("0.5 s") for the trip's window and its sampling and
// for a state's mean dwell, shortest seconds ("12.25 s") within a
// scenario time, and seconds to the millisecond, no space ("0.800s"),
// for the trip's time in the phase table.
var (
	tenths    = laws.Seconds{Unit: "s", Fixed: true, Digits: 1, Space: true, Missing: "—"}
	delayMs   = laws.Seconds{Unit: "ms", Space: true, Missing: "—"}
	windowSec = laws.Seconds{Unit: "s", Space: true}
	exactSec  = laws.Seconds{Unit: "s", Fixed: true, Digits: -1, Space: true}
	tripAtSec = laws.Seconds{Unit: "s", Fixed: true, Digits: 3}
)

// fmtSeconds writes a time since the start, "—" when unknown.
func fmtSeconds(s float64) string { return tenths.Format(s) }

// ratio returns measured/predicted when both are finite and predicted ≠ 0.
func ratio(m, p *float64) (float64, bool) {
	mv, ok1 := val(m)
	pv, ok2 := val(p)
	if !ok1 || !ok2 || pv == 0 {
		return 0, false
	}
	r := mv / pv
	if math.IsNaN(r) || math.IsInf(r, 0) {
		return 0, false
	}
	return r, true
}

func dataURI(png []byte) string {
	var b bytes.Buffer
	b.WriteString("data:image/png;base64,")
	b.WriteString(base64.StdEncoding.EncodeToString(png))
	return b.String()
}
