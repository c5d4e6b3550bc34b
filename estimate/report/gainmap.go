package report

import (
	"fmt"
	"image/color"
	"io"
	"math"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/palette"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"rigwire/estimate"
)

// GainMapColumns are the columns of `monitor predict --gain`'s CSV: the
// parameters' values, then the prediction at the point.
func GainMapColumns(gm *estimate.GainMap) []string {
	var cols []string
	for _, p := range gm.Params {
		cols = append(cols, p.Name)
	}
	return append(cols, "mean_square_stable", "stability", "spectral_radius", "spectral_radius_error", "second_moment", "loss_free_stable")
}

// WriteGainMapCSV writes one row per grid point (the first parameter
// outermost); second_moment is empty where the loop is not mean-square
// stable.
func WriteGainMapCSV(w io.Writer, gm *estimate.GainMap) {
	fmt.Fprintln(w, strings.Join(GainMapColumns(gm), ","))
	for _, pt := range gm.Points {
		row := make([]string, 0, len(pt.Values)+6)
		for _, v := range pt.Values {
			row = append(row, num(v))
		}
		row = append(row, fmt.Sprint(pt.MeanSquareStable), pt.Stability, num(pt.SpectralRadius), num(pt.RadiusError),
			num(pt.SecondMoment), fmt.Sprint(pt.NominalStable))
		fmt.Fprintln(w, strings.Join(row, ","))
	}
}

// GainMapLines say the best point and, for one parameter, its
// mean-square stable interval beside the loss-free one.
func GainMapLines(gm *estimate.GainMap) []string {
	var out []string
	if gm.Best >= 0 {
		pt := gm.Points[gm.Best]
		var at []string
		for i, p := range gm.Params {
			at = append(at, fmt.Sprintf("%s = %.6g", p.Name, pt.Values[i]))
		}
		out = append(out, fmt.Sprintf("best point on the grid: %s, E[eᵀe] %.5g (spectral radius %.4g)", strings.Join(at, ", "), pt.SecondMoment, pt.SpectralRadius))
	} else {
		out = append(out, "no point of the grid is mean-square stable")
	}
	m := gm.Margin
	if m == nil {
		return out
	}
	name := gm.Params[0].Name
	end := func(v float64) string {
		switch {
		case math.IsInf(v, -1):
			return "below the grid"
		case math.IsInf(v, 1):
			return "beyond the grid"
		}
		return fmt.Sprintf("%.6g", v)
	}
	if math.IsNaN(m.Low) {
		out = append(out, fmt.Sprintf("not mean-square stable at %s = %g as written", name, m.Nominal))
	} else {
		out = append(out, fmt.Sprintf("mean-square stable for %s from %s to %s (as written %g)", name, end(m.Low), end(m.High), m.Nominal))
	}
	if math.IsNaN(m.NominalLow) {
		out = append(out, fmt.Sprintf("the loss-free loop is not stable at %s = %g", name, m.Nominal))
	} else {
		out = append(out, fmt.Sprintf("the loss-free, delay-free loop is stable for %s from %s to %s", name, end(m.NominalLow), end(m.NominalHigh)))
	}
	if name == "scale" && m.High > 0 && m.NominalHigh > 0 && !math.IsInf(m.High, 0) && !math.IsInf(m.NominalHigh, 0) {
		out = append(out, fmt.Sprintf("gain margin %.4g (%.1f dB) over the network, %.4g (%.1f dB) loss-free: the network takes %.1f dB",
			m.High, 20*math.Log10(m.High), m.NominalHigh, 20*math.Log10(m.NominalHigh), 20*math.Log10(m.NominalHigh/m.High)))
	}
	return out
}

// WriteGainMapPlot writes the map to file: for one parameter E[eᵀe] and
// the spectral radius against it, with the stable interval's ends; for
// two a map of E[eᵀe] over the mean-square stable region with its
// contours, the best point and the loop as written.
func WriteGainMapPlot(gm *estimate.GainMap, file string) error {
	var pls []*plot.Plot
	var err error
	if len(gm.Params) == 1 {
		pls, err = gainCurve(gm)
	} else {
		var p *plot.Plot
		p, err = gainMapPlot(gm)
		pls = []*plot.Plot{p}
	}
	if err != nil {
		return fmt.Errorf("writing plot: %w", err)
	}
	h := sweepPanelHeight
	if len(pls) == 1 {
		h = 14 * vg.Centimeter
	}
	return writeStack(file, pls, h)
}

func gainCurve(gm *estimate.GainMap) ([]*plot.Plot, error) {
	name := gm.Params[0].Name
	top := newPredictPlot("steady E[eᵀe] and spectral radius against "+name, "", "E[eᵀe] ((output units)²)")
	bottom := newPredictPlot("", name, "spectral radius ρ")
	var pts, rho plotter.XYs
	ys := newYValues()
	rmin, rmax := 1.0, 1.0
	for _, pt := range gm.Points {
		x := pt.Values[0]
		if pt.MeanSquareStable && pt.SecondMoment > 0 && !math.IsInf(pt.SecondMoment, 0) {
			pts = append(pts, plotter.XY{X: x, Y: pt.SecondMoment})
			ys.add(pt.SecondMoment)
		}
		if !math.IsNaN(pt.SpectralRadius) && !math.IsInf(pt.SpectralRadius, 0) {
			rho = append(rho, plotter.XY{X: x, Y: pt.SpectralRadius})
			rmin, rmax = math.Min(rmin, pt.SpectralRadius), math.Max(rmax, pt.SpectralRadius)
		}
	}
	xlo, xhi := LinPad(gm.Params[0].Values[0], gm.Params[0].Values[len(gm.Params[0].Values)-1], 0.02)
	ylo, yhi := 1e-3, 1.0
	if len(pts) > 0 {
		ylo, yhi = LogPad(ys.minPos, ys.span.hi, 0.08)
	}
	yhi *= math.Pow(yhi/ylo, 0.35)
	top.Y.Scale, top.Y.Tick.Marker = plot.LogScale{}, LogTicks{}
	for _, c := range []struct {
		pl    *plot.Plot
		xy    plotter.XYs
		col   color.Color
		label string
	}{{top, pts, curveColor, "steady E[eᵀe] where mean-square stable"}, {bottom, rho, radiusColor, "spectral radius ρ of the second-moment operator"}} {
		if len(c.xy) == 0 {
			continue
		}
		l, err := plotter.NewLine(c.xy)
		if err != nil {
			return nil, err
		}
		l.Color, l.Width = c.col, vg.Points(1.5)
		c.pl.Add(l)
		c.pl.Legend.Add(c.label, l)
	}
	rlo, rhi := LinPad(rmin, rmax, 0.08)
	rhi += 0.35 * (rhi - rlo)
	if err := addBound(bottom, 1, xlo, xhi, lostColor, "ρ = 1: mean-square stability is lost above it"); err != nil {
		return nil, err
	}
	if m := gm.Margin; m != nil {
		for _, e := range []struct {
			x     float64
			col   color.Color
			label string
		}{{m.Low, lostColor, "ends of the mean-square stable interval"}, {m.High, lostColor, ""},
			{m.NominalLow, Slate, "ends of the loss-free loop's stable interval"}, {m.NominalHigh, Slate, ""}} {
			if math.IsNaN(e.x) || math.IsInf(e.x, 0) {
				continue
			}
			b, err := vline(e.x, ylo, yhi, e.col)
			if err != nil {
				return nil, err
			}
			top.Add(b)
			if e.label != "" {
				top.Legend.Add(e.label, b)
			}
		}
	}
	top.X.Min, top.X.Max, top.Y.Min, top.Y.Max = xlo, xhi, ylo, yhi
	bottom.X.Min, bottom.X.Max, bottom.Y.Min, bottom.Y.Max = xlo, xhi, rlo, rhi
	return []*plot.Plot{top, bottom}, nil
}

// gainGrid is the map's E[eᵀe] on its grid, log10, for the heat map and
// its contours; fill replaces the points that are not mean-square stable.
type gainGrid struct {
	gm   *estimate.GainMap
	fill float64
}

func (g gainGrid) Dims() (c, r int) { return len(g.gm.Params[0].Values), len(g.gm.Params[1].Values) }
func (g gainGrid) X(c int) float64  { return g.gm.Params[0].Values[c] }
func (g gainGrid) Y(r int) float64  { return g.gm.Params[1].Values[r] }
func (g gainGrid) Z(c, r int) float64 {
	pt := g.gm.Points[c*len(g.gm.Params[1].Values)+r]
	if !pt.MeanSquareStable || !(pt.SecondMoment > 0) {
		return g.fill
	}
	return math.Log10(pt.SecondMoment)
}

func gainMapPlot(gm *estimate.GainMap) (*plot.Plot, error) {
	p := newPlot(fmt.Sprintf("log₁₀ E[eᵀe] over %s and %s (blank: not mean-square stable)", gm.Params[0].Name, gm.Params[1].Name),
		gm.Params[0].Name, gm.Params[1].Name)
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, pt := range gm.Points {
		if pt.MeanSquareStable && pt.SecondMoment > 0 {
			v := math.Log10(pt.SecondMoment)
			lo, hi = math.Min(lo, v), math.Max(hi, v)
		}
	}
	if lo > hi {
		return nil, fmt.Errorf("no point of the grid is mean-square stable")
	}
	if hi == lo {
		hi = lo + 1
	}
	pal := palette.Heat(48, 1)
	hm := plotter.NewHeatMap(gainGrid{gm, math.NaN()}, pal)
	hm.Min, hm.Max = lo, hi
	hm.NaN = color.Transparent
	p.Add(hm)
	var levels []float64
	for k := 1; k < 8; k++ {
		levels = append(levels, lo+(hi-lo)*float64(k)/8)
	}
	ct := plotter.NewContour(gainGrid{gm, hi + 1}, levels, palette.Heat(len(levels), 1))
	ct.LineStyles = []draw.LineStyle{{Color: Ink, Width: vg.Points(0.6)}}
	ct.Palette = nil
	p.Add(ct)
	if gm.Best >= 0 {
		b := gm.Points[gm.Best]
		sc, err := plotter.NewScatter(plotter.XYs{{X: b.Values[0], Y: b.Values[1]}})
		if err != nil {
			return nil, err
		}
		sc.GlyphStyle = draw.GlyphStyle{Color: Ink, Radius: vg.Points(4), Shape: draw.CrossGlyph{}}
		p.Add(sc)
		p.Legend.Add(fmt.Sprintf("least E[eᵀe] on the grid: %.4g", b.SecondMoment), sc)
	}
	p.Legend.Add(fmt.Sprintf("contours: log₁₀ E[eᵀe] from %.2f to %.2f in 8 steps", lo, hi))
	return p, nil
}
