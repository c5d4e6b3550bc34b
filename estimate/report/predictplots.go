package report

import (
	"fmt"
	"image/color"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"

	"rigwire/estimate"
)

// CheckPlotName accepts the file names a prediction plot may have: the
// formats that suit a report (.svg, .png or .pdf).
func CheckPlotName(name string) error {
	if _, ok := plotFormat(name); !ok {
		return fmt.Errorf("want a file ending in .svg, .png or .pdf, got %q", name)
	}
	return nil
}

// The colours of a prediction plot, from the palette: the curve in
// teal, what is lost (the stability boundary, ρ = 1) in brick, the
// spectral radius in slate.
var (
	curveColor  = Teal
	lostColor   = Brick
	radiusColor = Slate
)

// Panel heights of the prediction plots (their width is plotWidth).
const (
	sweepPanelHeight = 8 * vg.Centimeter
	stepPanelHeight  = 10 * vg.Centimeter
)

// sweepAxisLabel is what the swept parameter means, as the x axis says it.
func sweepAxisLabel(param string) string {
	switch param {
	case estimate.SweepLoss:
		return "extra loss q added to both directions (each loss ℓ becomes ℓ + (1 − ℓ)·q)"
	case estimate.SweepDelayScale:
		return "delay scale (a factor on every network delay of both directions)"
	}
	return param
}

// sweepParamName is the parameter's name in the title and legend.
func sweepParamName(param string) string {
	switch param {
	case estimate.SweepLoss:
		return "extra loss q"
	case estimate.SweepDelayScale:
		return "delay scale"
	}
	return param
}

// newPredictPlot is newPlot with its legend inside the data area, at
// the top left (the plots leave room for it above the curves).
func newPredictPlot(title, x, y string) *plot.Plot {
	p := newPlot(title, x, y)
	p.Legend.TextStyle.Font.Size = vg.Points(labelSize)
	p.Legend.Top, p.Legend.Left = true, true
	p.Legend.XOffs, p.Legend.YOffs = vg.Points(6), -vg.Points(4)
	p.Legend.Padding = vg.Points(2)
	return p
}

// vline is a vertical line at x from lo to hi.
func vline(x, lo, hi float64, c color.Color) (*plotter.Line, error) {
	l, err := plotter.NewLine(plotter.XYs{{X: x, Y: lo}, {X: x, Y: hi}})
	if err != nil {
		return nil, err
	}
	l.Color = c
	l.Width = vg.Points(1.5)
	l.Dashes = []vg.Length{vg.Points(4), vg.Points(3)}
	return l, nil
}

// sweepPlots draws the sweep in two panels over the same x range: the
// steady E[eᵀe] on a log axis where the loop is mean-square stable, and
// the spectral radius ρ with the line ρ = 1; a dashed line where
// stability is lost, in both.
func sweepPlots(res *estimate.SweepResult) (top, bottom *plot.Plot, err error) {
	name := sweepParamName(res.Param)
	top = newPredictPlot("steady E[eᵀe] and spectral radius against the "+name, "",
		"E[eᵀe] ((output units)²)")
	bottom = newPredictPlot("", sweepAxisLabel(res.Param), "spectral radius ρ")
	var pts, rho plotter.XYs
	ymin, ymax := math.Inf(1), math.Inf(-1)
	rmin, rmax := 1.0, 1.0
	for _, pt := range res.Points {
		if pt.MeanSquareStable && pt.SecondMoment > 0 && !math.IsInf(pt.SecondMoment, 0) {
			pts = append(pts, plotter.XY{X: pt.Value, Y: pt.SecondMoment})
			ymin, ymax = math.Min(ymin, pt.SecondMoment), math.Max(ymax, pt.SecondMoment)
		}
		if !math.IsNaN(pt.SpectralRadius) && !math.IsInf(pt.SpectralRadius, 0) {
			rho = append(rho, plotter.XY{X: pt.Value, Y: pt.SpectralRadius})
			rmin, rmax = math.Min(rmin, pt.SpectralRadius), math.Max(rmax, pt.SpectralRadius)
		}
	}
	xlo, xhi := res.Points[0].Value, res.Points[len(res.Points)-1].Value
	xlo, xhi = LinPad(xlo, xhi, 0.02)
	ylo, yhi := LogPad(ymin, ymax, 0.08)
	if len(pts) == 0 {
		ylo, yhi = 1e-3, 1
	}
	// Room at the top for the legend.
	yhi *= math.Pow(yhi/ylo, 0.35)
	top.Y.Scale = plot.LogScale{}
	top.Y.Tick.Marker = LogTicks{}
	if len(pts) > 0 {
		line, err := plotter.NewLine(pts)
		if err != nil {
			return nil, nil, err
		}
		line.Color = curveColor
		line.Width = vg.Points(1.5)
		top.Add(line)
		top.Legend.Add("steady E[eᵀe] where mean-square stable", line)
	}
	if len(rho) > 0 {
		line, err := plotter.NewLine(rho)
		if err != nil {
			return nil, nil, err
		}
		line.Color = radiusColor
		line.Width = vg.Points(1.5)
		bottom.Add(line)
		bottom.Legend.Add("spectral radius ρ of the second-moment operator", line)
	}
	rlo, rhi := LinPad(rmin, rmax, 0.08)
	rhi += 0.35 * (rhi - rlo)
	if err := addBound(bottom, 1, xlo, xhi, lostColor, "ρ = 1: mean-square stability is lost above it"); err != nil {
		return nil, nil, err
	}
	if !math.IsNaN(res.Boundary) || res.LostFromStart {
		x := res.Boundary
		what := fmt.Sprintf("stability lost at %s = %.4g", name, x)
		if res.LostFromStart {
			x = res.Points[0].Value
			what = fmt.Sprintf("not stable from %s = %.4g on", name, x)
		}
		b, err := vline(x, ylo, yhi, lostColor)
		if err != nil {
			return nil, nil, err
		}
		top.Add(b)
		top.Legend.Add(what, b)
		b2, err := vline(x, rlo, rhi, lostColor)
		if err != nil {
			return nil, nil, err
		}
		bottom.Add(b2)
	}
	top.X.Min, top.X.Max, top.Y.Min, top.Y.Max = xlo, xhi, ylo, yhi
	bottom.X.Min, bottom.X.Max, bottom.Y.Min, bottom.Y.Max = xlo, xhi, rlo, rhi
	return top, bottom, nil
}

// WriteSweepPlot writes a --vary sweep's two panels to file (.svg, .png
// or .pdf, as CheckPlotName accepts).
func WriteSweepPlot(res *estimate.SweepResult, file string) error {
	if len(res.Points) == 0 {
		return fmt.Errorf("writing plot: no points")
	}
	top, bottom, err := sweepPlots(res)
	if err != nil {
		return fmt.Errorf("writing plot: %w", err)
	}
	return writeStack(file, []*plot.Plot{top, bottom}, sweepPanelHeight)
}

// stepPlot draws each output's expected error with its ±1 std band.
func stepPlot(tr []estimate.Step) (*plot.Plot, error) {
	p := newPredictPlot("expected error after a setpoint step", "time after the step (s)",
		"error e = r − y (output units)")
	outputs := len(tr[0].Error.Mean)
	ylo, yhi := math.Inf(1), math.Inf(-1)
	for j := 0; j < outputs; j++ {
		c := Series(j)
		var mean, band plotter.XYs
		for _, s := range tr {
			m, sd := s.Error.Mean[j], s.Error.OutputStd[j]
			mean = append(mean, plotter.XY{X: s.Time, Y: m})
			band = append(band, plotter.XY{X: s.Time, Y: m + sd})
			ylo, yhi = math.Min(ylo, m-sd), math.Max(yhi, m+sd)
		}
		for i := len(tr) - 1; i >= 0; i-- {
			s := tr[i]
			band = append(band, plotter.XY{X: s.Time, Y: s.Error.Mean[j] - s.Error.OutputStd[j]})
		}
		poly, err := plotter.NewPolygon(band)
		if err != nil {
			return nil, err
		}
		poly.Color = Band(c, 0x40)
		poly.LineStyle.Width = 0
		p.Add(poly)
		line, err := plotter.NewLine(mean)
		if err != nil {
			return nil, err
		}
		line.Color = c
		line.Width = vg.Points(1.5)
		p.Add(line)
		out := ""
		if outputs > 1 {
			out = fmt.Sprintf(" of output %d", j)
		}
		p.Legend.Add("E[e]"+out, line)
		p.Legend.Add("E[e] ± 1 std"+out+" (band)", poly)
	}
	if !(yhi > ylo) || math.IsInf(yhi-ylo, 0) {
		ylo, yhi = -1, 1
	}
	ylo, yhi = LinPad(ylo, yhi, 0.05)
	yhi += 0.3 * (yhi - ylo) // room for the legend
	p.Y.Min, p.Y.Max = ylo, yhi
	p.X.Min, p.X.Max = LinPad(tr[0].Time, tr[len(tr)-1].Time, 0.01)
	return p, nil
}

// WriteStepPlot writes a --step response's plot to file (.svg, .png or
// .pdf, as CheckPlotName accepts).
func WriteStepPlot(tr []estimate.Step, file string) error {
	if len(tr) == 0 {
		return fmt.Errorf("writing plot: no steps")
	}
	p, err := stepPlot(tr)
	if err != nil {
		return fmt.Errorf("writing plot: %w", err)
	}
	return writeStack(file, []*plot.Plot{p}, stepPanelHeight)
}
