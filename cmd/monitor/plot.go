package main

import (
	"fmt"
	"image/color"
	"math"
	"os"
	"path/filepath"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgpdf"
	"gonum.org/v1/plot/vg/vgsvg"

	"rigwire/cmd/internal/cli"
	"rigwire/estimate"
	"rigwire/estimate/report"
)

// checkPlotName accepts the formats gonum/plot writes that suit a report.
func checkPlotName(name string) error {
	switch strings.ToLower(filepath.Ext(name)) {
	case ".svg", ".png", ".pdf":
		return nil
	}
	return cli.Usagef("--plot: want a file ending in .svg, .png or .pdf, got %q", name)
}

// The colours come from the project's palette (report.Palette): the
// curve in teal, what is lost (the stability boundary, ρ = 1) in brick.
var (
	curveColor    = report.Teal
	boundaryColor = report.Brick
	radiusColor   = report.Slate
)

const (
	plotWidth = 16 * vg.Centimeter
	// plotTick is the size of tick labels and legends.
	plotTick = 9
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

func newPredictPlot(title, x, y string) *plot.Plot {
	p := plot.New()
	p.Title.Text = title
	p.X.Label.Text = x
	p.Y.Label.Text = y
	p.X.Tick.Marker = report.NiceTicks{}
	p.Y.Tick.Marker = report.NiceTicks{}
	p.X.Tick.Label.Font.Size = vg.Points(plotTick)
	p.Y.Tick.Label.Font.Size = vg.Points(plotTick)
	p.X.Label.TextStyle.Font.Size = vg.Points(10)
	p.Y.Label.TextStyle.Font.Size = vg.Points(10)
	p.Legend.TextStyle.Font.Size = vg.Points(plotTick)
	p.Legend.Top, p.Legend.Left = true, true
	p.Legend.XOffs, p.Legend.YOffs = vg.Points(6), -vg.Points(4)
	p.Legend.Padding = vg.Points(2)
	p.Add(plotter.NewGrid())
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
	xlo, xhi = report.LinPad(xlo, xhi, 0.02)
	ylo, yhi := report.LogPad(ymin, ymax, 0.08)
	if len(pts) == 0 {
		ylo, yhi = 1e-3, 1
	}
	// Room at the top for the legend.
	yhi *= math.Pow(yhi/ylo, 0.35)
	top.Y.Scale = plot.LogScale{}
	top.Y.Tick.Marker = report.LogTicks{}
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
	rlo, rhi := report.LinPad(rmin, rmax, 0.08)
	rhi += 0.35 * (rhi - rlo)
	one, err := plotter.NewLine(plotter.XYs{{X: xlo, Y: 1}, {X: xhi, Y: 1}})
	if err != nil {
		return nil, nil, err
	}
	one.Color = boundaryColor
	one.Width = vg.Points(1.2)
	one.Dashes = []vg.Length{vg.Points(2), vg.Points(2)}
	bottom.Add(one)
	bottom.Legend.Add("ρ = 1: mean-square stability is lost above it", one)
	if !math.IsNaN(res.Boundary) || res.LostFromStart {
		x := res.Boundary
		what := fmt.Sprintf("stability lost at %s = %.4g", name, x)
		if res.LostFromStart {
			x = res.Points[0].Value
			what = fmt.Sprintf("not stable from %s = %.4g on", name, x)
		}
		b, err := vline(x, ylo, yhi, boundaryColor)
		if err != nil {
			return nil, nil, err
		}
		top.Add(b)
		top.Legend.Add(what, b)
		b2, err := vline(x, rlo, rhi, boundaryColor)
		if err != nil {
			return nil, nil, err
		}
		bottom.Add(b2)
	}
	top.X.Min, top.X.Max, top.Y.Min, top.Y.Max = xlo, xhi, ylo, yhi
	bottom.X.Min, bottom.X.Max, bottom.Y.Min, bottom.Y.Max = xlo, xhi, rlo, rhi
	return top, bottom, nil
}

// plotSweep writes the sweep's two panels to file.
func plotSweep(res *estimate.SweepResult, file string) error {
	if len(res.Points) == 0 {
		return fmt.Errorf("writing plot: no points")
	}
	top, bottom, err := sweepPlots(res)
	if err != nil {
		return fmt.Errorf("writing plot: %w", err)
	}
	return saveStack(file, []*plot.Plot{top, bottom}, 8*vg.Centimeter)
}

// stepPlot draws each output's expected error with its ±1 std band.
func stepPlot(tr []estimate.Step) (*plot.Plot, error) {
	p := newPredictPlot("expected error after a setpoint step", "time after the step (s)",
		"error e = r − y (output units)")
	outputs := len(tr[0].Error.Mean)
	ylo, yhi := math.Inf(1), math.Inf(-1)
	for j := 0; j < outputs; j++ {
		c := report.Series(j)
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
		poly.Color = report.Band(c, 0x40)
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
	ylo, yhi = report.LinPad(ylo, yhi, 0.05)
	yhi += 0.3 * (yhi - ylo) // room for the legend
	p.Y.Min, p.Y.Max = ylo, yhi
	p.X.Min, p.X.Max = report.LinPad(tr[0].Time, tr[len(tr)-1].Time, 0.01)
	return p, nil
}

// plotStep writes the step response plot to file.
func plotStep(tr []estimate.Step, file string) error {
	if len(tr) == 0 {
		return fmt.Errorf("writing plot: no steps")
	}
	p, err := stepPlot(tr)
	if err != nil {
		return fmt.Errorf("writing plot: %w", err)
	}
	return saveStack(file, []*plot.Plot{p}, 10*vg.Centimeter)
}

// saveStack draws plots one above the other, each panelHeight high, as
// the file's extension says (.svg, .png or .pdf), their data areas
// aligned so that the panels share their x positions.
func saveStack(file string, plots []*plot.Plot, panelHeight vg.Length) (err error) {
	defer func() {
		if r := recover(); r != nil {
			err = fmt.Errorf("writing plot: drawing failed: %v", r)
		}
	}()
	total := panelHeight * vg.Length(len(plots))
	var canvas vg.CanvasWriterTo
	switch strings.ToLower(filepath.Ext(file)) {
	case ".svg":
		canvas = vgsvg.New(plotWidth, total)
	case ".pdf":
		canvas = vgpdf.New(plotWidth, total)
	default:
		canvas = vgimg.PngCanvas{Canvas: vgimg.New(plotWidth, total)}
	}
	grid := make([][]*plot.Plot, len(plots))
	for i, p := range plots {
		grid[i] = []*plot.Plot{p}
	}
	tiles := draw.Tiles{Rows: len(plots), Cols: 1, PadY: vg.Points(4), PadTop: vg.Points(2), PadBottom: vg.Points(2)}
	cs := plot.Align(grid, tiles, draw.New(canvas))
	for i, p := range plots {
		p.Draw(cs[i][0])
	}
	f, err := os.Create(file)
	if err != nil {
		return fmt.Errorf("writing plot: %w", err)
	}
	if _, err := canvas.WriteTo(f); err != nil {
		f.Close()
		return fmt.Errorf("writing plot %s: %w", file, err)
	}
	if err := f.Close(); err != nil {
		return fmt.Errorf("writing plot %s: %w", file, err)
	}
	return nil
}
