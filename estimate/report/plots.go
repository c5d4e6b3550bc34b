package report

import (
	"fmt"
	"image/color"
	"math"
	"sort"
	"strconv"
	"strings"
	"unicode/utf8"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Colours, from the project's palette (palette.go): what was measured in
// teal, the prediction in brick red (dashed), the trip's own window in
// ochre, references and phase boundaries in slate, so the plots also read
// in greyscale print.
var (
	measuredColor  = Teal
	bandColor      = Band(Teal, 0x50) // not premultiplied
	predictedColor = Brick
	windowColor    = Ochre
	boundaryColor  = Slate
	overflowColor  = Mist
	tripColor      = Brick
)

func directionColor(i int) color.Color { return Series(i) }

const (
	plotWidth  = 16 * vg.Centimeter
	plotHeight = 10 * vg.Centimeter
	// labelSize is the size of tick labels, phase names and the legend.
	labelSize = 9
)

// legendHeight is the height of the strip below a plot of plotHeight in
// which drawFigure puts p's legend (never over the data or the phase
// names); 0 when p has no legend.
func legendHeight(p *plot.Plot) vg.Length {
	l := p.Legend
	styleLegend(&l)
	r := l.Rectangle(draw.Canvas{Rectangle: vg.Rectangle{Max: vg.Point{X: plotWidth, Y: plotHeight}}})
	h := r.Max.Y - r.Min.Y
	if h <= 0 {
		return 0
	}
	return h + l.TextStyle.FontExtents().Descent + vg.Points(10)
}

// styleLegend sets the legend's look for its strip below the plot.
func styleLegend(l *plot.Legend) {
	l.Top, l.Left = true, true
	l.XOffs, l.YOffs = 0, 0
	l.Padding = vg.Points(2)
	l.TextStyle.Font.Size = vg.Points(labelSize)
}

// drawFigure draws p on dc: the plot above, its legend (if any) in a strip
// below.
func drawFigure(p *plot.Plot, dc draw.Canvas) {
	leg := p.Legend
	lh := legendHeight(p)
	p.Legend = plot.NewLegend()
	defer func() { p.Legend = leg }()
	top := dc
	top.Min.Y += lh
	p.Draw(top)
	if lh > 0 {
		strip := dc
		strip.Max.Y = dc.Min.Y + lh - vg.Points(2)
		strip.Min.X += vg.Points(36)
		styleLegend(&leg)
		leg.Draw(strip)
	}
}

// failed marks f as not drawn because drawing its plot failed with err.
func (f *figure) failed(err error) *figure {
	f.NoData = "drawing failed: " + err.Error()
	return f
}

// finish renders p into f, or records why it could not.
func finish(f *figure, p *plot.Plot) *figure {
	png, err := render(p)
	if err != nil {
		f.NoData = err.Error()
		return f
	}
	f.png, f.plot = png, p
	return f
}

func newPlot(title, x, y string) *plot.Plot {
	p := plot.New()
	p.Title.Text = title
	p.X.Label.Text = x
	p.Y.Label.Text = y
	p.X.Tick.Marker = NiceTicks{}
	p.Y.Tick.Marker = NiceTicks{}
	p.X.Tick.Label.Font.Size = vg.Points(labelSize)
	p.Y.Tick.Label.Font.Size = vg.Points(labelSize)
	p.X.Label.TextStyle.Font.Size = vg.Points(10)
	p.Y.Label.TextStyle.Font.Size = vg.Points(10)
	p.Add(plotter.NewGrid())
	return p
}

// yAxis is a plot's vertical axis: linear from zero, or logarithmic when
// the values span decades; Floor is the lowest value drawn, at which
// bands and whiskers are clipped.
type yAxis struct {
	Log      bool
	Lo, Hi   float64 // the axis range, headroom included
	Floor    float64 // = Lo
	DataHi   float64
	headroom float64
}

// logAbove is the ratio of the largest to the smallest positive value
// above which an axis turns logarithmic.
const logAbove = 30

// chooseY picks the axis for positive quantities in s (zeros and
// negatives never set a log axis's floor), leaving the top fraction
// headroom of the height free for phase names.
func chooseY(s span, minPos float64, headroom float64) yAxis {
	lo, hi := s.widened()
	if s.empty() {
		lo, hi = 0, 1
	}
	if minPos > 0 && hi > 0 && hi/minPos >= logAbove {
		l, h := LogPad(minPos, hi, 0.04)
		// headroom on the log scale: the top fraction of the decades
		h *= math.Pow(h/l, headroom/(1-headroom))
		return yAxis{Log: true, Lo: l, Hi: h, Floor: l, DataHi: hi, headroom: headroom}
	}
	// A second moment or a ratio: from zero; an interval's end below
	// zero (it cannot be, the interval is positive) is clipped there.
	lo = 0
	if !(hi > lo) {
		hi = 1
	}
	h := hi + (hi-lo)*headroom/(1-headroom)
	return yAxis{Lo: lo, Hi: h, Floor: lo, DataHi: hi, headroom: headroom}
}

// apply sets p's Y axis.
func (a yAxis) apply(p *plot.Plot) {
	p.Y.Min, p.Y.Max = a.Lo, a.Hi
	if a.Log {
		p.Y.Scale = plot.LogScale{}
		p.Y.Tick.Marker = LogTicks{}
	}
}

// clip keeps v inside the axis (a band never reaches below its floor).
func (a yAxis) clip(v float64) float64 {
	return math.Min(math.Max(v, a.Floor), a.Hi)
}

// sortedHistory returns the points with a finite time, in time order.
func sortedHistory(h []Point) []Point {
	out := make([]Point, 0, len(h))
	for _, pt := range h {
		if !math.IsNaN(pt.Elapsed) && !math.IsInf(pt.Elapsed, 0) {
			out = append(out, pt)
		}
	}
	sort.SliceStable(out, func(i, j int) bool { return out[i].Elapsed < out[j].Elapsed })
	return out
}

// span tracks the range of the values drawn.
type span struct{ lo, hi float64 }

func newSpan() span { return span{math.Inf(1), math.Inf(-1)} }

func (s *span) add(v float64) {
	s.lo, s.hi = math.Min(s.lo, v), math.Max(s.hi, v)
}

func (s span) empty() bool { return s.lo > s.hi }

// yValues gathers the values a plot's y axis must show: their span and
// the smallest positive one (a logarithmic axis's floor).
type yValues struct {
	span
	minPos float64 // +Inf before a positive value
}

func newYValues() yValues { return yValues{span: newSpan(), minPos: math.Inf(1)} }

func (y *yValues) add(v float64) {
	y.span.add(v)
	if v > 0 {
		y.minPos = math.Min(y.minPos, v)
	}
}

// axis is the axis for the values (chooseY), the top fraction headroom
// of its height left free.
func (y yValues) axis(headroom float64) yAxis {
	minPos := y.minPos
	if math.IsInf(minPos, 1) {
		minPos = 0
	}
	return chooseY(y.span, minPos, headroom)
}

// widened returns a non-degenerate range.
func (s span) widened() (float64, float64) {
	if s.empty() {
		return 0, 1
	}
	if s.lo == s.hi {
		d := math.Abs(s.lo) / 2
		if d == 0 {
			d = 1
		}
		return s.lo - d, s.hi + d
	}
	return s.lo, s.hi
}

// addSegments draws each run of consecutive points as a line, and single
// points as glyphs so a lone sample is still visible.
func addSegments(p *plot.Plot, segs []plotter.XYs, c color.Color, dashes []vg.Length) (plot.Thumbnailer, error) {
	var thumb plot.Thumbnailer
	for _, s := range segs {
		if len(s) == 1 {
			sc, err := plotter.NewScatter(s)
			if err != nil {
				return nil, err
			}
			sc.Color = c
			sc.Shape = draw.CircleGlyph{}
			sc.Radius = vg.Points(2.5)
			p.Add(sc)
			if thumb == nil {
				thumb = sc
			}
			continue
		}
		l, err := plotter.NewLine(s)
		if err != nil {
			return nil, err
		}
		l.Color = c
		l.Width = vg.Points(1.5)
		l.Dashes = dashes
		p.Add(l)
		thumb = l
	}
	return thumb, nil
}

// segmenter splits a series at missing values.
type segmenter struct {
	segs []plotter.XYs
	cur  plotter.XYs
}

func (s *segmenter) add(x, y float64) { s.cur = append(s.cur, plotter.XY{X: x, Y: y}) }

func (s *segmenter) gap() {
	if len(s.cur) > 0 {
		s.segs = append(s.segs, s.cur)
		s.cur = nil
	}
}

func (s *segmenter) done() []plotter.XYs { s.gap(); return s.segs }

// boundary is a vertical line where a phase starts.
type boundary struct {
	x     float64
	name  string
	short string
}

// boundaries lists phase starts within [xlo, xhi]; without phases it uses
// the points where History changes phase. Names are numbered from 1 as in
// the report's table, the short form being the number alone.
func boundaries(d *Data, hist []Point, xlo, xhi float64) []boundary {
	var out []boundary
	if len(d.Phases) > 0 {
		for i, ph := range d.Phases {
			if math.IsNaN(ph.Start) || math.IsInf(ph.Start, 0) || ph.Start < xlo || ph.Start > xhi {
				continue
			}
			name := ph.Name
			if name == "" {
				name = fmt.Sprintf("phase %d", ph.Index+1)
			}
			n := fmt.Sprint(i + 1)
			out = append(out, boundary{ph.Start, n + " " + shorten(name, 20), n})
		}
		return out
	}
	for i, pt := range hist {
		if i == 0 || pt.Phase != hist[i-1].Phase {
			n := fmt.Sprint(pt.Phase + 1)
			out = append(out, boundary{pt.Elapsed, "phase " + n, n})
		}
	}
	return out
}

// stagger draws short texts along the top of the data area, each at its
// x, in the first of rows rows where it does not run into a text already
// placed; a text that fits in no row is drawn in its short form, and
// dropped (counted in dropped) when even that does not fit.
type stagger struct {
	items   []staggerItem
	rows    int
	style   text.Style
	dropped int
}

type staggerItem struct {
	x           float64
	text, short string
}

func newStagger(rows int) *stagger {
	p := plot.New() // for the default text handler and font
	sty := p.X.Tick.Label
	sty.Font.Size = vg.Points(labelSize - 1)
	sty.Color = boundaryColor
	sty.XAlign, sty.YAlign = draw.XLeft, draw.YBottom
	sty.Rotation = 0
	return &stagger{rows: rows, style: sty}
}

func (s *stagger) Plot(c draw.Canvas, p *plot.Plot) {
	trX, _ := p.Transforms(&c)
	lineH := s.style.Height("Ag") + vg.Points(2)
	gap := vg.Points(4)
	end := make([]vg.Length, s.rows)
	for i := range end {
		end[i] = c.Min.X - 1000
	}
	s.dropped = 0
	for _, it := range s.items {
		x := trX(it.x) + vg.Points(2)
		placed := false
		for _, txt := range []string{it.text, it.short} {
			w := textWidth(s.style, txt)
			for r := 0; r < s.rows && !placed; r++ {
				if x >= end[r]+gap && x+w <= c.Max.X {
					c.FillText(s.style, vg.Point{X: x, Y: c.Max.Y - vg.Length(r+1)*lineH}, txt)
					end[r] = x + w
					placed = true
				}
			}
			if placed {
				break
			}
		}
		if !placed {
			s.dropped++
		}
	}
}

// textWidth is a text's width, never less than half an em per character:
// room for wider glyphs than the measured font's, should the viewer
// substitute another.
func textWidth(sty text.Style, txt string) vg.Length {
	est := vg.Length(0.5*float64(utf8.RuneCountInString(txt))) * sty.Font.Size
	return max(sty.Width(txt), est)
}

// addBoundaries draws dashed vertical lines from ylo to yhi and the phase
// names, staggered in up to three rows along the top.
func addBoundaries(p *plot.Plot, bs []boundary, ylo, yhi float64) error {
	if len(bs) == 0 {
		return nil
	}
	st := newStagger(3)
	for _, b := range bs {
		l, err := plotter.NewLine(plotter.XYs{{X: b.x, Y: ylo}, {X: b.x, Y: yhi}})
		if err != nil {
			return err
		}
		l.Color = boundaryColor
		l.Width = vg.Points(0.8)
		l.Dashes = []vg.Length{vg.Points(3), vg.Points(3)}
		p.Add(l)
		st.items = append(st.items, staggerItem{x: b.x, text: b.name, short: b.short})
	}
	p.Add(st)
	return nil
}

// addTrip draws a solid vertical line where the safety trip fired, when
// that time lies within [xlo, xhi].
func addTrip(p *plot.Plot, t *Trip, xlo, xhi, ylo, yhi float64) error {
	if t == nil || math.IsNaN(t.Elapsed) || t.Elapsed < xlo || t.Elapsed > xhi {
		return nil
	}
	l, err := plotter.NewLine(plotter.XYs{{X: t.Elapsed, Y: ylo}, {X: t.Elapsed, Y: yhi}})
	if err != nil {
		return err
	}
	l.Color = tripColor
	l.Width = vg.Points(1.5)
	p.Add(l)
	p.Legend.Add("safety trip at "+tenths.Format(t.Elapsed), l)
	return nil
}

func shorten(s string, n int) string {
	r := []rune(s)
	if len(r) <= n {
		return s
	}
	return string(r[:n-1]) + "…"
}

// timeAxisLabel is the time axis's label: wall time, and how scenario time
// relates to it.
func timeAxisLabel(d *Data) string {
	if sc := d.scale(); sc != 1 {
		return fmt.Sprintf("wall time since start (s); scenario time = wall time ÷ %g", sc)
	}
	return "time since start (s); = scenario time (time scale 1)"
}

// timeRange is the time axis's range: the values drawn, widened to the
// phases' starts and ends so that the first phase's boundary shows.
func timeRange(d *Data, xs span) (float64, float64) {
	for _, ph := range d.Phases {
		for _, v := range []float64{ph.Start, ph.End} {
			if !math.IsNaN(v) && !math.IsInf(v, 0) {
				xs.add(v)
			}
		}
	}
	return xs.widened()
}

// tripWindowFor returns the trip's windowed series when it is the given
// quantity and has points.
func tripWindowFor(d *Data, quantity string) *TripWindow {
	if w := d.TripWindow; w != nil && w.Quantity == quantity && len(w.Points) > 0 {
		return w
	}
	return nil
}

// tripWindowName is the legend's name of the trip's series.
func tripWindowName(w *TripWindow) string {
	what := "mean eᵀe"
	if w.Quantity == "ratio" {
		what = "mean eᵀe / predicted"
	}
	return fmt.Sprintf("trip's own %s over its %s window", what, fmtWindow(w.Seconds))
}

func fmtWindow(s float64) string { return windowSec.Format(s) }

// drawnTripValue reports whether a point of the trip's windowed quantity
// is drawn: positive and finite (a log axis has no room for the others).
func drawnTripValue(v float64) bool { return v > 0 && !math.IsInf(v, 0) }

// addTripValues adds to ys what addTripLines draws of the trip's window
// w: its drawn points, its bound, and the value that fired the trip.
func addTripValues(ys *yValues, d *Data, w *TripWindow) {
	for _, pt := range w.Points {
		if drawnTripValue(pt.Value) {
			ys.add(pt.Value)
		}
	}
	if w.Bound > 0 {
		ys.add(w.Bound)
	}
	if t := d.Trip; t != nil && t.Value > 0 && t.Reason == tripReason(w.Quantity) {
		ys.add(t.Value)
	}
}

// addTripLines draws the trip's windowed quantity (addTripWindow) and, when
// the trip has one, its bound, named by its key in the loop file.
func addTripLines(p *plot.Plot, d *Data, w *TripWindow, xlo, xhi float64, key string) error {
	if err := addTripWindow(p, d, w); err != nil {
		return err
	}
	if w.Bound > 0 {
		return addBound(p, w.Bound, xlo, xhi, tripColor, fmt.Sprintf("trip bound %s %.4g", key, w.Bound))
	}
	return nil
}

// addTripWindow draws the trip's windowed quantity and the value that
// fired the trip (a marker at the trip's time).
func addTripWindow(p *plot.Plot, d *Data, w *TripWindow) error {
	var seg segmenter
	for _, pt := range w.Points {
		if !drawnTripValue(pt.Value) {
			seg.gap()
			continue
		}
		seg.add(pt.Elapsed, pt.Value)
	}
	th, err := addSegments(p, seg.done(), windowColor, nil)
	if err != nil {
		return err
	}
	if th != nil {
		p.Legend.Add(tripWindowName(w), th)
	}
	if t := d.Trip; t != nil && t.Reason == tripReason(w.Quantity) && t.Value > 0 && !math.IsNaN(t.Elapsed) {
		sc, err := plotter.NewScatter(plotter.XYs{{X: t.Elapsed, Y: t.Value}})
		if err != nil {
			return err
		}
		sc.Color = tripColor
		sc.Shape = draw.PyramidGlyph{}
		sc.Radius = vg.Points(4)
		p.Add(sc)
		p.Legend.Add(fmt.Sprintf("the value that fired the trip: %.4g above %.4g", t.Value, t.Bound), sc)
	}
	return nil
}

// tripReason is the trip event's reason for a windowed quantity.
func tripReason(quantity string) string {
	if quantity == "ratio" {
		return "ratio"
	}
	return "second_moment"
}

// addBound draws a horizontal dotted line at y across [xlo, xhi].
func addBound(p *plot.Plot, y, xlo, xhi float64, c color.Color, name string) error {
	l, err := plotter.NewLine(plotter.XYs{{X: xlo, Y: y}, {X: xhi, Y: y}})
	if err != nil {
		return err
	}
	l.Color = c
	l.Width = vg.Points(1.2)
	l.Dashes = []vg.Length{vg.Points(2), vg.Points(2)}
	p.Add(l)
	p.Legend.Add(name, l)
	return nil
}

// headroom is the share of a time plot's height kept free for the phase
// names along its top.
const headroom = 0.2

func secondMomentFigure(d *Data) *figure {
	f := &figure{
		File:  SecondMomentName,
		Title: "Tracking error second moment E[eᵀe]",
		Caption: "Measured E[eᵀe] (teal, shaded: its confidence interval, which is built on the log scale and " +
			"never reaches below zero) against the prediction in force (brick red, dashed) over the run; " +
			"dashed slate lines mark where each phase starts (numbered as in the table), a solid brick line " +
			"where the safety trip fired, if it did. The axis turns logarithmic when the values span decades; " +
			"a band is clipped at the axis's floor.",
	}
	hist := sortedHistory(d.History)
	xs, ys := newSpan(), newYValues()
	for _, pt := range hist {
		for _, p := range []*float64{pt.Measured, pt.CILow, pt.CIHigh, pt.Predicted} {
			if v, ok := val(p); ok {
				xs.add(pt.Elapsed)
				ys.add(v)
			}
		}
	}
	tw := tripWindowFor(d, "second_moment")
	if tw != nil {
		addTripValues(&ys, d, tw)
	}
	if xs.empty() {
		f.NoData = "no measured or predicted value in the history"
		return f
	}
	ax := ys.axis(headroom)
	var meas, pred segmenter
	var bandSegs [][2]plotter.XYs
	var lo, hi plotter.XYs
	lone := &whiskers{line: draw.LineStyle{Color: measuredColor, Width: vg.Points(1)}}
	flushBand := func() {
		switch {
		case len(lo) > 1:
			bandSegs = append(bandSegs, [2]plotter.XYs{lo, hi})
		case len(lo) == 1: // an interval with no neighbour: a whisker
			lone.w = append(lone.w, [3]float64{lo[0].X, lo[0].Y, hi[0].Y})
		}
		lo, hi = nil, nil
	}
	havePrev := false
	var prevY float64
	prevPhase := 0
	for _, pt := range hist {
		x := pt.Elapsed
		if m, ok := val(pt.Measured); ok && (!ax.Log || m > 0) {
			meas.add(x, m)
		} else {
			meas.gap()
		}
		l, okl := val(pt.CILow)
		h, okh := val(pt.CIHigh)
		if okl && okh && l <= h && h > ax.Floor {
			lo = append(lo, plotter.XY{X: x, Y: ax.clip(l)})
			hi = append(hi, plotter.XY{X: x, Y: ax.clip(h)})
		} else {
			flushBand()
		}
		if v, ok := val(pt.Predicted); ok && (!ax.Log || v > 0) {
			if havePrev && pt.Phase != prevPhase && v != prevY {
				pred.add(x, prevY) // step at the phase change
			}
			pred.add(x, v)
			havePrev, prevY, prevPhase = true, v, pt.Phase
		} else {
			pred.gap()
			havePrev = false
		}
	}
	flushBand()
	p := newPlot(f.Title, timeAxisLabel(d), "E[eᵀe] ((output units)²)")
	for i, b := range bandSegs {
		poly := make(plotter.XYs, 0, 2*len(b[0]))
		poly = append(poly, b[1]...)
		for j := len(b[0]) - 1; j >= 0; j-- {
			poly = append(poly, b[0][j])
		}
		pg, err := plotter.NewPolygon(poly)
		if err != nil {
			return f.failed(err)
		}
		pg.Color = bandColor
		pg.LineStyle.Width = 0
		p.Add(pg)
		if i == 0 {
			p.Legend.Add("confidence interval of the measured E[eᵀe]", pg)
		}
	}
	if len(lone.w) > 0 {
		p.Add(lone)
		if len(bandSegs) == 0 {
			p.Legend.Add("confidence interval of the measured E[eᵀe]", lone)
		}
	}
	if th, err := addSegments(p, meas.done(), measuredColor, nil); err != nil {
		return f.failed(err)
	} else if th != nil {
		p.Legend.Add("measured E[eᵀe] (the estimator's window)", th)
	}
	if th, err := addSegments(p, pred.done(), predictedColor, []vg.Length{vg.Points(6), vg.Points(3)}); err != nil {
		return f.failed(err)
	} else if th != nil {
		p.Legend.Add("predicted E[eᵀe] in force", th)
	}
	xlo, xhi := timeRange(d, xs)
	if tw != nil {
		if err := addTripLines(p, d, tw, xlo, xhi, "max_second_moment"); err != nil {
			return f.failed(err)
		}
		f.Caption += " The ochre line is the quantity the safety trip compared with its bound: the mean of eᵀe " +
			"over the trip's own window of " + fmtWindow(tw.Seconds) + ", sampled every " + fmtWindow(tw.Every) + "."
	}
	return finishTimePlot(f, p, d, hist, xlo, xhi, ax)
}

// finishTimePlot adds the phase boundaries and the trip to a plot over
// time, fixes its axes and renders it.
func finishTimePlot(f *figure, p *plot.Plot, d *Data, hist []Point, xlo, xhi float64, ax yAxis) *figure {
	if err := addBoundaries(p, boundaries(d, hist, xlo, xhi), ax.Lo, ax.Hi); err != nil {
		return f.failed(err)
	}
	if err := addTrip(p, d.Trip, xlo, xhi, ax.Lo, ax.Hi); err != nil {
		return f.failed(err)
	}
	p.X.Min, p.X.Max = xlo, xhi
	ax.apply(p)
	return finish(f, p)
}

func ratioFigure(d *Data) *figure {
	f := &figure{
		File:  RatioName,
		Title: "Measured over predicted",
		Caption: "Measured E[eᵀe] over the estimator's window divided by the prediction in force (teal); " +
			"1 (slate, dotted) means the measurement matches the prediction.",
	}
	hist := sortedHistory(d.History)
	var seg segmenter
	xs, ys := newSpan(), newYValues()
	for _, pt := range hist {
		if r, ok := ratio(pt.Measured, pt.Predicted); ok {
			xs.add(pt.Elapsed)
			ys.add(r)
		}
	}
	tw := tripWindowFor(d, "ratio")
	if tw != nil {
		// The trip's ratio is data of this plot too: its times count.
		for _, pt := range tw.Points {
			if drawnTripValue(pt.Value) {
				xs.add(pt.Elapsed)
			}
		}
		addTripValues(&ys, d, tw)
	}
	if xs.empty() {
		f.NoData = "no point has both a measured and a non-zero predicted value"
		return f
	}
	ys.add(1)
	ax := ys.axis(headroom)
	for _, pt := range hist {
		if r, ok := ratio(pt.Measured, pt.Predicted); ok && (!ax.Log || r > 0) {
			seg.add(pt.Elapsed, r)
		} else {
			seg.gap()
		}
	}
	p := newPlot(f.Title, timeAxisLabel(d), "measured / predicted")
	xlo, xhi := timeRange(d, xs)
	if err := addBound(p, 1, xlo, xhi, boundaryColor, "1 (as predicted)"); err != nil {
		return f.failed(err)
	}
	if th, err := addSegments(p, seg.done(), measuredColor, nil); err != nil {
		return f.failed(err)
	} else if th != nil {
		p.Legend.Add("measured / predicted (the estimator's window)", th)
	}
	if tw != nil {
		if err := addTripLines(p, d, tw, xlo, xhi, "max_ratio"); err != nil {
			return f.failed(err)
		}
		f.Caption += " The ochre line is the very ratio the safety trip compared with its bound (brick, dotted): " +
			"the mean of eᵀe over the trip's own window of " + fmtWindow(tw.Seconds) + " over the prediction in force, " +
			"sampled every " + fmtWindow(tw.Every) + "; it moves far faster than the estimator's window, so it can " +
			"cross the bound while the teal ratio stays low. The marker is the value that fired the trip."
	}
	return finishTimePlot(f, p, d, hist, xlo, xhi, ax)
}

// rects is a plotter of filled rectangles in data coordinates.
type rects struct {
	r    [][4]float64 // x0, x1, y0, y1
	fill color.Color
	line draw.LineStyle
}

func newRects(fill color.Color) *rects {
	return &rects{fill: fill, line: draw.LineStyle{Color: color.Black, Width: vg.Points(0.5)}}
}

func (b *rects) add(x0, x1, y0, y1 float64) { b.r = append(b.r, [4]float64{x0, x1, y0, y1}) }

func (b *rects) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	for _, r := range b.r {
		pts := []vg.Point{
			{X: trX(r[0]), Y: trY(r[2])}, {X: trX(r[1]), Y: trY(r[2])},
			{X: trX(r[1]), Y: trY(r[3])}, {X: trX(r[0]), Y: trY(r[3])},
		}
		c.FillPolygon(b.fill, c.ClipPolygonXY(pts))
		pts = append(pts, pts[0])
		c.StrokeLines(b.line, c.ClipLinesXY(pts)...)
	}
}

func (b *rects) DataRange() (xmin, xmax, ymin, ymax float64) {
	s, t := newSpan(), newSpan()
	for _, r := range b.r {
		s.add(r[0])
		s.add(r[1])
		t.add(r[2])
		t.add(r[3])
	}
	xmin, xmax = s.widened()
	ymin, ymax = t.widened()
	return
}

func (b *rects) Thumbnail(c *draw.Canvas) {
	pts := []vg.Point{
		{X: c.Min.X, Y: c.Min.Y}, {X: c.Max.X, Y: c.Min.Y},
		{X: c.Max.X, Y: c.Max.Y}, {X: c.Min.X, Y: c.Max.Y},
	}
	c.FillPolygon(b.fill, c.ClipPolygonY(pts))
	pts = append(pts, pts[0])
	c.StrokeLines(b.line, c.ClipLinesY(pts)...)
}

// whiskers draws vertical interval lines with caps, in data coordinates.
type whiskers struct {
	w    [][3]float64 // x, ylo, yhi
	line draw.LineStyle
}

func (w *whiskers) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	cap := vg.Points(4)
	for _, v := range w.w {
		x, lo, hi := trX(v[0]), trY(v[1]), trY(v[2])
		c.StrokeLines(w.line, c.ClipLinesXY([]vg.Point{{X: x, Y: lo}, {X: x, Y: hi}})...)
		c.StrokeLines(w.line, c.ClipLinesXY([]vg.Point{{X: x - cap, Y: lo}, {X: x + cap, Y: lo}})...)
		c.StrokeLines(w.line, c.ClipLinesXY([]vg.Point{{X: x - cap, Y: hi}, {X: x + cap, Y: hi}})...)
	}
}

func (w *whiskers) Thumbnail(c *draw.Canvas) {
	x := (c.Min.X + c.Max.X) / 2
	c.StrokeLine2(w.line, x, c.Min.Y, x, c.Max.Y)
}

func phasesFigure(d *Data) *figure {
	f := &figure{
		File:  PhasesName,
		Title: "Per-phase E[eᵀe]",
		Caption: "For each phase (numbered as in the table): measured E[eᵀe] (teal, whiskers: its confidence " +
			"interval, clipped at the axis's floor) beside the prediction (brick red); the phase's verdict is " +
			"written above its bars. The axis turns logarithmic when the values span decades.",
	}
	if len(d.Phases) == 0 {
		f.NoData = "no phases"
		return f
	}
	ys := newYValues()
	any := false
	for _, ph := range d.Phases {
		for _, p := range []*float64{ph.Measured, ph.CILow, ph.CIHigh, ph.Predicted} {
			if v, ok := val(p); ok {
				ys.add(v)
				any = true
			}
		}
	}
	if !any {
		f.NoData = "no phase has a measured or predicted value"
		return f
	}
	ys.add(0)
	ax := ys.axis(0.15)
	meas, pred := newRects(measuredColor), newRects(predictedColor)
	wh := &whiskers{line: draw.LineStyle{Color: Ink, Width: vg.Points(1)}}
	names := make([]string, len(d.Phases))
	st := newStagger(2)
	st.style.Color = color.Black
	for i, ph := range d.Phases {
		x := float64(i)
		name := ph.Name
		if name == "" {
			name = fmt.Sprintf("phase %d", ph.Index+1)
		}
		names[i] = fmt.Sprintf("%d %s", i+1, shorten(name, 16))
		v := strings.ToUpper(PhaseVerdictText(ph.Verdict))
		if v == "" {
			v = "NO VERDICT"
		}
		st.items = append(st.items, staggerItem{x: x - 0.4, text: v, short: shorten(v, 4)})
		if m, ok := val(ph.Measured); ok && m > ax.Floor {
			meas.add(x-0.36, x-0.02, ax.Floor, m)
		}
		l, okl := val(ph.CILow)
		h, okh := val(ph.CIHigh)
		if okl && okh && l <= h && h > ax.Floor {
			wh.w = append(wh.w, [3]float64{x - 0.19, ax.clip(l), ax.clip(h)})
		}
		if pv, ok := val(ph.Predicted); ok && pv > ax.Floor {
			pred.add(x+0.02, x+0.36, ax.Floor, pv)
		}
	}
	p := newPlot(f.Title, "phase", "E[eᵀe] ((output units)²)")
	p.Add(meas, pred, wh, st)
	p.Legend.Add("measured E[eᵀe]", meas)
	p.Legend.Add("its confidence interval", wh)
	p.Legend.Add("predicted E[eᵀe]", pred)
	FitCategoryLabels(p, names, plotWidth-3*vg.Centimeter)
	ax.apply(p)
	return finish(f, p)
}

// bucket is one histogram bucket ready to draw.
type bucket struct {
	lo, hi   float64
	count    float64
	overflow bool // the +Inf bucket, drawn with a made-up width
}

// buckets checks h and turns it into drawable buckets, scaled by scale.
// It returns a reason when h cannot be drawn, and a note when something
// about it must be said in the caption.
func buckets(h Histogram, scale float64) (bs []bucket, total float64, note string, reason string) {
	n := len(h.Upper)
	if len(h.Counts) != n {
		if len(h.Counts) < n {
			n = len(h.Counts)
		}
		note = fmt.Sprintf("%d bucket bounds but %d counts; only the first %d buckets are drawn. ", len(h.Upper), len(h.Counts), n)
	}
	if n == 0 {
		return nil, 0, note, "no buckets"
	}
	for i := 0; i < n; i++ {
		u, c := h.Upper[i], h.Counts[i]
		if math.IsNaN(u) || math.IsInf(u, -1) || (math.IsInf(u, 1) && i != n-1) {
			return nil, 0, note, fmt.Sprintf("bucket %d has upper bound %v", i+1, u)
		}
		if i > 0 && u <= h.Upper[i-1] {
			return nil, 0, note, fmt.Sprintf("bucket bounds are not increasing at bucket %d (%v after %v)", i+1, u, h.Upper[i-1])
		}
		if math.IsNaN(c) || math.IsInf(c, 0) || c < 0 {
			return nil, 0, note, fmt.Sprintf("bucket %d has count %v", i+1, c)
		}
		total += c
	}
	if total == 0 {
		return nil, 0, note, "all counts are zero"
	}
	for i := 0; i < n; i++ {
		b := bucket{count: h.Counts[i]}
		switch {
		case math.IsInf(h.Upper[i], 1):
			b.overflow = true
			if i == 0 {
				b.lo, b.hi = 0, 1
			} else {
				b.lo = h.Upper[i-1] * scale
				w := b.lo - bs[i-1].lo
				if w <= 0 {
					w = math.Max(math.Abs(b.lo)/4, 1)
				}
				b.hi = b.lo + w
			}
		case i == 0:
			b.hi = h.Upper[0] * scale
			if b.hi > 0 {
				b.lo = 0
			} else if n > 1 && !math.IsInf(h.Upper[1], 1) {
				b.lo = b.hi - (h.Upper[1]*scale - b.hi)
			} else {
				b.lo = b.hi - 1
			}
		default:
			b.lo, b.hi = h.Upper[i-1]*scale, h.Upper[i]*scale
		}
		bs = append(bs, b)
	}
	return bs, total, note, ""
}

// histTotal is the sum of a histogram's counts (0 when it cannot be read).
func histTotal(h Histogram) float64 {
	t := 0.0
	for _, c := range h.Counts {
		if c > 0 && !math.IsInf(c, 0) {
			t += c
		}
	}
	return t
}

func delayFigure(direction string, h Histogram, after Histogram, afterWhy string) *figure {
	f := &figure{
		File:  DelayName(direction),
		Title: "Drawn delays, " + direction,
	}
	bs, total, note, reason := buckets(h, 1000)
	if reason != "" {
		f.NoData = reason
		if n := histTotal(after); n > 0 {
			f.NoData += fmt.Sprintf(" (%.0f datagrams relayed after the safety trip are not drawn delays and are not counted here%s)", n, afterWhy)
		}
		return f
	}
	// Show the buckets that hold delays, with one empty bucket either side.
	first, last := 0, len(bs)-1
	for first < last && bs[first].count == 0 {
		first++
	}
	for last > first && bs[last].count == 0 {
		last--
	}
	first, last = max(first-1, 0), min(last+1, len(bs)-1)
	shown := bs[first : last+1]
	f.Caption = fmt.Sprintf("%sHow many of the %.0f delays the relay drew for %s during the phases fell in each "+
		"bucket; each bar is labelled by its bucket's upper bound in milliseconds (the run records seconds) and "+
		"drawn equally wide whatever its width.", note, total, direction)
	if first > 0 || last < len(bs)-1 {
		f.Caption += fmt.Sprintf(" Buckets from %s to %s ms are shown; the others are empty.", fmtMs(shown[0].lo), fmtMs(shown[len(shown)-1].hi))
	}
	p := newPlot(f.Title, "delay bucket, upper bound (ms)", "datagrams")
	in, over := newRects(measuredColor), newRects(overflowColor)
	labels := make([]string, len(shown))
	for i, b := range shown {
		x := float64(i)
		if b.overflow {
			over.add(x-0.4, x+0.4, 0, b.count)
			labels[i] = "> " + fmtMs(b.lo)
			continue
		}
		in.add(x-0.4, x+0.4, 0, b.count)
		labels[i] = fmtMs(b.hi)
		if i == 0 && first == 0 && b.lo == 0 {
			labels[i] = "≤ " + fmtMs(b.hi)
		}
	}
	if len(in.r) > 0 {
		p.Add(in)
		p.Legend.Add("delays drawn from the profile", in)
	}
	if len(over.r) > 0 {
		p.Add(over)
		lastB := shown[len(shown)-1]
		p.Legend.Add("above the last bound", over)
		f.Caption += fmt.Sprintf(" The light grey bar counts the %.0f delays above %s ms.", lastB.count, fmtMs(lastB.lo))
	}
	if n := histTotal(after); n > 0 {
		f.Caption += fmt.Sprintf(" Not counted here: the %.0f datagrams relayed after the safety trip fired%s — "+
			"their delays were not drawn from the profile.", n, afterWhy)
	}
	FitCategoryLabels(p, labels, plotWidth-3*vg.Centimeter)
	p.Y.Min = 0
	p.Y.Max = 1.15 * maxCount(shown)
	return finish(f, p)
}

func fmtMs(v float64) string { return strconv.FormatFloat(v, 'g', 3, 64) }

func maxCount(bs []bucket) float64 {
	m := 0.0
	for _, b := range bs {
		m = math.Max(m, b.count)
	}
	if m == 0 {
		return 1
	}
	return m
}

func lossRunsFigure(d *Data) *figure {
	f := &figure{
		File:  LossRunsName,
		Title: "Runs of consecutive losses",
	}
	dirs := sortedKeys(d.LossRuns)
	if len(dirs) == 0 {
		f.NoData = "no loss-run histogram was recorded"
		return f
	}
	// Place every direction's buckets on the union of their upper bounds.
	type series struct {
		dir string
		bs  []bucket
	}
	var ss []series
	var notes []string
	bounds := map[float64]bool{}
	same := true
	var firstBounds []float64
	for _, dir := range dirs {
		bs, _, note, reason := buckets(d.LossRuns[dir], 1)
		if note != "" {
			notes = append(notes, dir+": "+strings.TrimSpace(note))
		}
		if reason != "" {
			notes = append(notes, dir+": not drawn ("+reason+").")
			continue
		}
		for i, b := range bs {
			if b.overflow {
				bounds[math.Inf(1)] = true
			} else {
				bounds[d.LossRuns[dir].Upper[i]] = true
			}
		}
		ub := d.LossRuns[dir].Upper[:len(bs)]
		if len(ss) == 0 {
			firstBounds = ub
		} else if !equalFloats(ub, firstBounds) {
			same = false
		}
		ss = append(ss, series{dir, bs})
	}
	if len(ss) == 0 {
		f.NoData = "no loss runs counted"
		if len(notes) > 0 {
			f.NoData += " (" + strings.Join(notes, " ") + ")"
		}
		return f
	}
	var ups []float64
	for u := range bounds {
		ups = append(ups, u)
	}
	sort.Float64s(ups)
	index := map[float64]int{}
	labels := make([]string, len(ups))
	for i, u := range ups {
		index[u] = i
		switch {
		case !same && math.IsInf(u, 1) && i > 0:
			labels[i] = fmt.Sprintf("> %g", ups[i-1])
		case !same:
			labels[i] = fmt.Sprintf("≤ %g", u)
		case math.IsInf(u, 1) && i > 0:
			labels[i] = fmt.Sprintf("> %g", ups[i-1])
		case math.IsInf(u, 1):
			labels[i] = "any"
		case i > 0 && u-ups[i-1] > 1:
			labels[i] = fmt.Sprintf("%g–%g", math.Floor(ups[i-1])+1, u)
		case i == 0 && u > 1:
			labels[i] = fmt.Sprintf("1–%g", u)
		default:
			labels[i] = fmt.Sprintf("%g", u)
		}
	}
	p := newPlot(f.Title, "run length (consecutive datagrams lost)", "runs")
	width := 0.8 / float64(len(ss))
	for k, s := range ss {
		r := newRects(directionColor(k))
		h := d.LossRuns[s.dir]
		for i, b := range s.bs {
			u := math.Inf(1)
			if !b.overflow {
				u = h.Upper[i]
			}
			x := float64(index[u]) - 0.4 + float64(k)*width
			r.add(x, x+width, 0, b.count)
		}
		p.Add(r)
		p.Legend.Add(s.dir, r)
	}
	FitCategoryLabels(p, labels, plotWidth-3*vg.Centimeter)
	p.Y.Min = 0
	ymax := 1.0
	for _, s := range ss {
		ymax = math.Max(ymax, maxCount(s.bs))
	}
	p.Y.Max = 1.15 * ymax
	f.Caption = "Number of runs of consecutive lost datagrams by run length, one colour per direction; " +
		"each bar is a bucket labelled by the run lengths it holds."
	if !same {
		f.Caption += " The directions use different bucket bounds, so each bar sits at its bucket's upper bound."
	}
	if len(notes) > 0 {
		f.Caption += " " + strings.Join(notes, " ")
	}
	return finish(f, p)
}

func equalFloats(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}
