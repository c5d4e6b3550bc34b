package report

import (
	"encoding/json"
	"errors"
	"fmt"
	"image/color"
	"io"
	"math"
	"math/cmplx"
	"slices"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"rigwire/estimate"
	"rigwire/estimate/engine"
	"rigwire/profiles"
)

// FrequencyColumns are the columns of `monitor predict --frequency`'s CSV
// for p outputs: the frequency, then per output i the mean response from
// setpoint to output and to error and the loss-free loop's, and the
// phase-averaged variance, then the sums over the outputs.
func FrequencyColumns(p int) []string {
	cols := []string{"frequency_hz"}
	for i := 0; i < p; i++ {
		for _, c := range []string{"gain", "phase_deg", "error_gain", "error_phase_deg", "nominal_gain", "nominal_phase_deg", "variance"} {
			cols = append(cols, fmt.Sprintf("%s_%d", c, i))
		}
	}
	return append(cols, "spread", "spread_peak", "second_moment", "nominal_spread")
}

// num formats a value for the CSV: empty where it does not exist (an
// output whose reference does not move, an unstable loss-free loop).
func num(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return ""
	}
	return strconv.FormatFloat(v, 'g', 10, 64)
}

// WriteFrequencyCSV writes the frequency response, one row per frequency.
func WriteFrequencyCSV(w io.Writer, hs []estimate.Harmonic) {
	if len(hs) == 0 {
		return
	}
	p := len(hs[0].Reference)
	fmt.Fprintln(w, strings.Join(FrequencyColumns(p), ","))
	for _, h := range hs {
		row := []string{num(h.Frequency)}
		for i := 0; i < p; i++ {
			g, ph := estimate.Gain(h.Output[i], h.Reference[i])
			eg, eph := estimate.Gain(h.Error[i], h.Reference[i])
			ng, nph := math.NaN(), math.NaN()
			if h.Nominal.Stable {
				ng, nph = estimate.Gain(h.Nominal.Output[i], h.Reference[i])
			}
			row = append(row, num(g), num(ph), num(eg), num(eph), num(ng), num(nph), num(h.Variance[i]))
		}
		ns := math.NaN()
		if h.Nominal.Stable {
			ns = h.Nominal.Spread
		}
		row = append(row, num(h.Spread), num(h.SpreadPeak), num(h.SecondMoment), num(ns))
		fmt.Fprintln(w, strings.Join(row, ","))
	}
}

// jnum is a JSON number that is null where the value does not exist.
type jnum float64

func (v jnum) MarshalJSON() ([]byte, error) {
	f := float64(v)
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return []byte("null"), nil
	}
	return []byte(strconv.FormatFloat(f, 'g', -1, 64)), nil
}

type freqOutputJSON struct {
	ReferenceAmplitude jnum `json:"reference_amplitude"`
	Gain               jnum `json:"gain"`
	PhaseDeg           jnum `json:"phase_deg"`
	ErrorGain          jnum `json:"error_gain"`
	ErrorPhaseDeg      jnum `json:"error_phase_deg"`
	OutputOffset       jnum `json:"output_offset"`
	ErrorOffset        jnum `json:"error_offset"`
	Variance           jnum `json:"variance"`
	NominalGain        jnum `json:"nominal_gain"`
	NominalPhaseDeg    jnum `json:"nominal_phase_deg"`
	NominalVariance    jnum `json:"nominal_variance"`
}

type freqPointJSON struct {
	FrequencyHz        jnum             `json:"frequency_hz"`
	Outputs            []freqOutputJSON `json:"outputs"`
	Spread             jnum             `json:"spread"`
	SpreadPeak         jnum             `json:"spread_peak"`
	SpreadPeakPhaseDeg jnum             `json:"spread_peak_phase_deg"`
	SecondMoment       jnum             `json:"second_moment"`
	NominalStable      bool             `json:"nominal_stable"`
	NominalSpread      jnum             `json:"nominal_spread"`
}

// WriteFrequencyJSON writes the frequency response as one JSON object:
// period_seconds and points, each with its frequency, per output the
// responses and variances, and the sums (null where a value does not
// exist).
func WriteFrequencyJSON(w io.Writer, period float64, hs []estimate.Harmonic) error {
	out := struct {
		PeriodSeconds float64         `json:"period_seconds"`
		Points        []freqPointJSON `json:"points"`
	}{PeriodSeconds: period, Points: []freqPointJSON{}}
	for _, h := range hs {
		pt := freqPointJSON{FrequencyHz: jnum(h.Frequency), Spread: jnum(h.Spread), SpreadPeak: jnum(h.SpreadPeak),
			SpreadPeakPhaseDeg: jnum(h.PeakPhase * 180 / math.Pi), SecondMoment: jnum(h.SecondMoment),
			NominalStable: h.Nominal.Stable, NominalSpread: jnum(math.NaN())}
		if h.Nominal.Stable {
			pt.NominalSpread = jnum(h.Nominal.Spread)
		}
		for i := range h.Reference {
			g, ph := estimate.Gain(h.Output[i], h.Reference[i])
			eg, eph := estimate.Gain(h.Error[i], h.Reference[i])
			o := freqOutputJSON{ReferenceAmplitude: jnum(cmplx.Abs(h.Reference[i])), Gain: jnum(g), PhaseDeg: jnum(ph),
				ErrorGain: jnum(eg), ErrorPhaseDeg: jnum(eph), OutputOffset: jnum(h.OutputOffset[i]), ErrorOffset: jnum(h.ErrorOffset[i]),
				Variance: jnum(h.Variance[i]), NominalGain: jnum(math.NaN()), NominalPhaseDeg: jnum(math.NaN()), NominalVariance: jnum(math.NaN())}
			if h.Nominal.Stable {
				ng, nph := estimate.Gain(h.Nominal.Output[i], h.Reference[i])
				o.NominalGain, o.NominalPhaseDeg, o.NominalVariance = jnum(ng), jnum(nph), jnum(h.Nominal.Variance[i])
			}
			pt.Outputs = append(pt.Outputs, o)
		}
		out.Points = append(out.Points, pt)
	}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(out)
}

// FrequencyMeasure is one measured point drawn over the predicted
// curves: an output's gain, phase (degrees) and the spread at a
// frequency, each with its interval (NaN bounds: none), and its verdict
// ("" when not judged).
type FrequencyMeasure struct {
	Frequency                     float64
	Output                        int
	Gain, GainLow, GainHigh       float64
	Phase, PhaseLow, PhaseHigh    float64
	Spread, SpreadLow, SpreadHigh float64
	Verdict                       string
}

// Panel height of the frequency plot's three panels.
const freqPanelHeight = 7 * vg.Centimeter

// frequencyPlots draws gain, phase and spread against frequency on a log
// axis: the prediction over the network (solid), the loss-free loop
// (dashed) and the measured points with their intervals.
func frequencyPlots(hs []estimate.Harmonic, meas []FrequencyMeasure) ([]*plot.Plot, error) {
	p := len(hs[0].Reference)
	gain := newPredictPlot("mean response and spread against the reference's frequency", "", "gain |Y/R| (setpoint → output)")
	phase := newPredictPlot("", "", "phase arg(Y/R) (degrees)")
	spread := newPredictPlot("", "frequency (Hz)", "spread Var(e), phase-averaged ((output units)²)")
	for _, pl := range []*plot.Plot{gain, phase, spread} {
		pl.X.Scale = plot.LogScale{}
		pl.X.Tick.Marker = LogTicks{}
	}
	gain.Y.Scale, gain.Y.Tick.Marker = plot.LogScale{}, LogTicks{}
	spread.Y.Scale, spread.Y.Tick.Marker = plot.LogScale{}, LogTicks{}
	gy, py, sy := newYValues(), newYValues(), newYValues()
	xs := newSpan()
	addLine := func(pl *plot.Plot, pts plotter.XYs, c color.Color, dashed bool, label string) error {
		if len(pts) < 1 {
			return nil
		}
		l, err := plotter.NewLine(pts)
		if err != nil {
			return err
		}
		l.Color = c
		l.Width = vg.Points(1.5)
		if dashed {
			l.Dashes = []vg.Length{vg.Points(5), vg.Points(3)}
		}
		pl.Add(l)
		if label != "" {
			pl.Legend.Add(label, l)
		}
		return nil
	}
	for i := 0; i < p; i++ {
		if hs[0].Reference[i] == 0 {
			continue
		}
		var g, ph, ng, nph plotter.XYs
		for _, h := range hs {
			if !(h.Frequency > 0) {
				continue
			}
			xs.add(h.Frequency)
			gv, pv := estimate.Gain(h.Output[i], h.Reference[i])
			if gv > 0 {
				g = append(g, plotter.XY{X: h.Frequency, Y: gv})
				gy.add(gv)
			}
			ph = append(ph, plotter.XY{X: h.Frequency, Y: pv})
			py.add(pv)
			if h.Nominal.Stable {
				a, b := estimate.Gain(h.Nominal.Output[i], h.Reference[i])
				if a > 0 {
					ng = append(ng, plotter.XY{X: h.Frequency, Y: a})
					gy.add(a)
				}
				nph = append(nph, plotter.XY{X: h.Frequency, Y: b})
				py.add(b)
			}
		}
		out := ""
		if p > 1 {
			out = fmt.Sprintf(", output %d", i)
		}
		c := Series(i)
		if err := addLine(gain, g, c, false, "predicted over the network"+out); err != nil {
			return nil, err
		}
		if err := addLine(gain, ng, c, true, "loss-free, delay-free loop"+out); err != nil {
			return nil, err
		}
		if err := addLine(phase, ph, c, false, ""); err != nil {
			return nil, err
		}
		if err := addLine(phase, nph, c, true, ""); err != nil {
			return nil, err
		}
	}
	var s, ns plotter.XYs
	for _, h := range hs {
		if h.Frequency > 0 && h.Spread > 0 {
			s = append(s, plotter.XY{X: h.Frequency, Y: h.Spread})
			sy.add(h.Spread)
		}
		if h.Frequency > 0 && h.Nominal.Stable && h.Nominal.Spread > 0 {
			ns = append(ns, plotter.XY{X: h.Frequency, Y: h.Nominal.Spread})
			sy.add(h.Nominal.Spread)
		}
	}
	if err := addLine(spread, s, curveColor, false, "predicted over the network"); err != nil {
		return nil, err
	}
	if err := addLine(spread, ns, curveColor, true, "loss-free, delay-free loop (noise only)"); err != nil {
		return nil, err
	}
	// Measured points with their intervals.
	marks := false
	for _, m := range meas {
		if !(m.Frequency > 0) {
			continue
		}
		xs.add(m.Frequency)
		c := Series(m.Output)
		for _, set := range []struct {
			pl        *plot.Plot
			v, lo, hi float64
			ys        *yValues
			positive  bool
		}{{gain, m.Gain, m.GainLow, m.GainHigh, &gy, true}, {phase, m.Phase, m.PhaseLow, m.PhaseHigh, &py, false}, {spread, m.Spread, m.SpreadLow, m.SpreadHigh, &sy, true}} {
			if math.IsNaN(set.v) || set.positive && !(set.v > 0) {
				continue
			}
			if m.Output > 0 && set.pl == spread {
				continue // the spread is over all outputs: drawn once
			}
			set.ys.add(set.v)
			if !math.IsNaN(set.lo) && !math.IsNaN(set.hi) && (!set.positive || set.lo > 0) && !math.IsInf(set.hi, 0) {
				set.ys.add(set.lo)
				set.ys.add(set.hi)
				bar, err := plotter.NewLine(plotter.XYs{{X: m.Frequency, Y: set.lo}, {X: m.Frequency, Y: set.hi}})
				if err != nil {
					return nil, err
				}
				bar.Color, bar.Width = c, vg.Points(1.2)
				set.pl.Add(bar)
			}
			sc, err := plotter.NewScatter(plotter.XYs{{X: m.Frequency, Y: set.v}})
			if err != nil {
				return nil, err
			}
			sc.GlyphStyle.Color = c
			sc.GlyphStyle.Radius = vg.Points(3)
			sc.GlyphStyle.Shape = draw.CircleGlyph{}
			if m.Verdict == "fail" {
				sc.GlyphStyle.Color = lostColor
				sc.GlyphStyle.Shape = draw.CrossGlyph{}
			}
			set.pl.Add(sc)
			if !marks && set.pl == gain {
				gain.Legend.Add("measured, with its interval", sc)
				marks = true
			}
		}
	}
	if xs.empty() {
		return nil, fmt.Errorf("no frequency above 0 to draw")
	}
	xlo, xhi := LogPad(xs.lo, xs.hi, 0.05)
	for _, pl := range []*plot.Plot{gain, phase, spread} {
		pl.X.Min, pl.X.Max = xlo, xhi
	}
	fix := func(pl *plot.Plot, v yValues, log bool) {
		if log {
			lo, hi := 1e-3, 1.0
			if v.minPos <= v.span.hi && !math.IsInf(v.minPos, 1) {
				lo, hi = LogPad(v.minPos, v.span.hi, 0.08)
			}
			hi *= math.Pow(hi/lo, 0.45) // room for the legend
			pl.Y.Min, pl.Y.Max = lo, hi
			return
		}
		lo, hi := -180.0, 180.0
		if !v.span.empty() {
			lo, hi = LinPad(v.span.lo, v.span.hi, 0.08)
		}
		pl.Y.Min, pl.Y.Max = lo, hi
	}
	fix(gain, gy, true)
	fix(phase, py, false)
	fix(spread, sy, true)
	return []*plot.Plot{gain, phase, spread}, nil
}

// WriteFrequencyPlot writes the frequency response (and measured points,
// if any) to file (.svg, .png or .pdf, as CheckPlotName accepts).
func WriteFrequencyPlot(hs []estimate.Harmonic, meas []FrequencyMeasure, file string) error {
	if len(hs) == 0 {
		return fmt.Errorf("writing plot: no frequencies")
	}
	pls, err := frequencyPlots(hs, meas)
	if err != nil {
		return fmt.Errorf("writing plot: %w", err)
	}
	return writeStack(file, pls, freqPanelHeight)
}

// frequencyFigures are the soak report's three frequency panels (gain,
// phase, spread), each its own figure.
func frequencyFigures(d *Data) []*figure {
	figs := []*figure{
		{File: FreqGainName, Title: "Frequency response: gain",
			Caption: "Gain |Y/R| of the mean response from setpoint to output against the reference's frequency: predicted over the loop file's network (solid), the loss-free, delay-free loop (dashed), and measured (dots, whiskers: the confidence interval; a red cross: the phase or frequency failed its check)."},
		{File: FreqPhaseName, Title: "Frequency response: phase",
			Caption: "Phase arg(Y/R) in degrees, as the gain."},
		{File: FreqSpreadName, Title: "Frequency response: spread",
			Caption: "The error's variance about its mean response, averaged over the reference's phase and summed over the outputs, as the gain; the loss-free loop's is the noise alone."},
	}
	pls, err := frequencyPlots(d.Frequency, d.FrequencyMeasured)
	if err != nil {
		for _, f := range figs {
			f.failed(err)
		}
		return figs
	}
	for i, f := range figs {
		pls[i].X.Label.Text = "frequency (Hz)"
		finish(f, pls[i])
	}
	return figs
}

// SoakFrequency is the soak report's frequency data for loop: the
// predicted response on 40 log-spaced frequencies around the reference's
// (from half the lowest to twice the highest, below the Nyquist
// frequency), and the measured points: the frequency phases' when the
// scenario has any, else the run's per frequency. nil, nil for a loop
// without a sinusoidal reference or not mean-square stable.
func SoakFrequency(loop *profiles.Loop, s *engine.Summary) ([]estimate.Harmonic, []FrequencyMeasure, error) {
	ref := loop.Reference
	if !ref.Sinusoidal() {
		return nil, nil, nil
	}
	lo, hi := slices.Min(ref.Frequencies)/2, math.Min(2*slices.Max(ref.Frequencies), 0.95/(2*loop.Period))
	freqs := append(profiles.LogSpaced(lo, hi, 40), ref.Frequencies...)
	slices.Sort(freqs)
	md, err := estimate.Build(loop, estimate.Options{})
	if err != nil {
		return nil, nil, err
	}
	hs, err := md.FrequencyResponse(ref, freqs)
	if errors.Is(err, estimate.ErrNotStable) {
		return nil, nil, nil
	}
	if err != nil {
		return nil, nil, err
	}
	var meas []FrequencyMeasure
	add := func(fr *engine.FrequencyResult, verdict string) {
		for i, o := range fr.Outputs {
			if o.Gain == nil {
				continue
			}
			meas = append(meas, FrequencyMeasure{Frequency: fr.FrequencyHz, Output: i,
				Gain: value(o.Gain), GainLow: value(o.GainCILow), GainHigh: value(o.GainCIHigh),
				Phase: value(o.PhaseDeg), PhaseLow: value(o.PhaseCILow), PhaseHigh: value(o.PhaseCIHigh),
				Spread: value(fr.Spread), SpreadLow: value(fr.SpreadCILow), SpreadHigh: value(fr.SpreadCIHigh), Verdict: verdict})
		}
	}
	for _, ph := range s.Phases {
		if ph.Frequency != nil {
			add(ph.Frequency, ph.Verdict)
		}
	}
	if len(meas) == 0 {
		for i := range s.FrequencyResponse {
			v := ""
			if s.FrequencyResponse[i].Verdict == engine.FrequencyDiffer {
				v = "fail"
			}
			add(&s.FrequencyResponse[i], v)
		}
	}
	return hs, meas, nil
}

// value is *p, NaN for nil.
func value(p *float64) float64 {
	if p == nil {
		return math.NaN()
	}
	return *p
}
