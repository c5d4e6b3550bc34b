package main

import (
	"fmt"
	"image/color"
	"math"
	"path/filepath"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"

	"rigwire/estimate"
)

// checkPlotName accepts the formats gonum/plot writes that suit a report.
func checkPlotName(name string) error {
	switch strings.ToLower(filepath.Ext(name)) {
	case ".svg", ".png", ".pdf":
		return nil
	}
	return usagef("--plot: want a file ending in .svg, .png or .pdf, got %q", name)
}

var (
	curveColor    = color.RGBA{R: 0x1f, G: 0x5f, B: 0x9f, A: 0xff}
	boundaryColor = color.RGBA{R: 0xc0, G: 0x30, B: 0x20, A: 0xff}
	bandColor     = color.RGBA{R: 0x1f, G: 0x5f, B: 0x9f, A: 0x40}
)

// plotSweep draws E[eᵀe] against the swept parameter on a log scale and a
// vertical line where mean-square stability is lost.
func plotSweep(res *estimate.SweepResult, file string) error {
	p := plot.New()
	p.Title.Text = "steady E[eᵀe] against " + res.Param
	p.X.Label.Text = res.Param
	p.Y.Label.Text = "E[eᵀe]"
	var pts plotter.XYs
	ymin, ymax := math.Inf(1), math.Inf(-1)
	for _, pt := range res.Points {
		if pt.MeanSquareStable && pt.SecondMoment > 0 {
			pts = append(pts, plotter.XY{X: pt.Value, Y: pt.SecondMoment})
			ymin, ymax = math.Min(ymin, pt.SecondMoment), math.Max(ymax, pt.SecondMoment)
		}
	}
	if len(pts) > 0 {
		p.Y.Scale = plot.LogScale{}
		p.Y.Tick.Marker = plot.LogTicks{}
		line, err := plotter.NewLine(pts)
		if err != nil {
			return err
		}
		line.Color = curveColor
		line.Width = vg.Points(1.5)
		p.Add(line)
		p.Legend.Add("E[eᵀe] (stable)", line)
	}
	if !math.IsNaN(res.Boundary) || res.LostFromStart {
		x := res.Boundary
		if res.LostFromStart {
			x = res.Points[0].Value
		}
		lo, hi := ymin, ymax
		if len(pts) == 0 {
			lo, hi = 1e-3, 1
		}
		if lo == hi {
			lo, hi = lo/2, hi*2
		}
		b, err := plotter.NewLine(plotter.XYs{{X: x, Y: lo}, {X: x, Y: hi}})
		if err != nil {
			return err
		}
		b.Color = boundaryColor
		b.Width = vg.Points(1.5)
		b.Dashes = []vg.Length{vg.Points(4), vg.Points(3)}
		p.Add(b)
		p.Legend.Add(fmt.Sprintf("stability lost at %s = %.4g", res.Param, x), b)
	}
	p.X.Min, p.X.Max = res.Points[0].Value, res.Points[len(res.Points)-1].Value
	p.Legend.Top = true
	p.Legend.Left = true
	p.Add(plotter.NewGrid())
	return save(p, file)
}

// plotStep draws each output's expected error with a ±1 std band.
func plotStep(tr []estimate.Step, file string) error {
	p := plot.New()
	p.Title.Text = "expected error after a setpoint step"
	p.X.Label.Text = "time after the step (s)"
	p.Y.Label.Text = "e = r − y"
	outputs := len(tr[0].Error.Mean)
	for j := 0; j < outputs; j++ {
		var mean, band plotter.XYs
		for _, s := range tr {
			mean = append(mean, plotter.XY{X: s.Time, Y: s.Error.Mean[j]})
			band = append(band, plotter.XY{X: s.Time, Y: s.Error.Mean[j] + s.Error.OutputStd[j]})
		}
		for i := len(tr) - 1; i >= 0; i-- {
			s := tr[i]
			band = append(band, plotter.XY{X: s.Time, Y: s.Error.Mean[j] - s.Error.OutputStd[j]})
		}
		poly, err := plotter.NewPolygon(band)
		if err != nil {
			return err
		}
		poly.Color = bandColor
		poly.LineStyle.Width = 0
		p.Add(poly)
		line, err := plotter.NewLine(mean)
		if err != nil {
			return err
		}
		line.Color = plotColor(j)
		line.Width = vg.Points(1.5)
		p.Add(line)
		p.Legend.Add(fmt.Sprintf("E[e%d] ± std", j), line)
	}
	p.Add(plotter.NewGrid())
	return save(p, file)
}

func plotColor(i int) color.Color {
	palette := []color.Color{curveColor, boundaryColor, color.RGBA{G: 0x80, A: 0xff}, color.RGBA{R: 0x80, B: 0x80, A: 0xff}}
	return palette[i%len(palette)]
}

func save(p *plot.Plot, file string) error {
	if err := p.Save(16*vg.Centimeter, 10*vg.Centimeter, file); err != nil {
		return fmt.Errorf("writing plot: %w", err)
	}
	return nil
}
