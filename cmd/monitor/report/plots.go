package report

import (
	"bytes"
	"fmt"
	"image/color"
	"math"
	"sort"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
)

// Colours: the measured estimate in blue, the prediction in dark orange,
// boundaries and references in grey, so the plots also read in greyscale
// print (dashes differ as well as colours).
var (
	measuredColor  = color.RGBA{R: 0x1f, G: 0x5f, B: 0x9f, A: 0xff}
	bandColor      = color.NRGBA{R: 0x1f, G: 0x5f, B: 0x9f, A: 0x50} // not premultiplied
	predictedColor = color.RGBA{R: 0xc0, G: 0x60, B: 0x10, A: 0xff}
	boundaryColor  = color.RGBA{R: 0x60, G: 0x60, B: 0x60, A: 0xff}
	overflowColor  = color.RGBA{R: 0xa0, G: 0xa0, B: 0xa0, A: 0xff}
	tripColor      = color.RGBA{R: 0xb0, G: 0x10, B: 0x10, A: 0xff}
)

func directionColor(i int) color.Color {
	palette := []color.Color{measuredColor, predictedColor, color.RGBA{G: 0x80, B: 0x40, A: 0xff}, color.RGBA{R: 0x80, B: 0x80, A: 0xff}}
	return palette[i%len(palette)]
}

const (
	plotWidth  = 16 * vg.Centimeter
	plotHeight = 10 * vg.Centimeter
)

// render draws p on a PNG canvas. A panic inside the plotting library is
// turned into an error so that one odd plot never costs the whole report.
func render(p *plot.Plot) (png []byte, err error) {
	defer func() {
		if r := recover(); r != nil {
			png, err = nil, fmt.Errorf("drawing failed: %v", r)
		}
	}()
	c := vgimg.New(plotWidth, plotHeight)
	p.Draw(draw.New(c))
	var buf bytes.Buffer
	if _, err := (vgimg.PngCanvas{Canvas: c}).WriteTo(&buf); err != nil {
		return nil, fmt.Errorf("encoding PNG: %w", err)
	}
	return buf.Bytes(), nil
}

// finish renders p into f, or records why it could not.
func finish(f *figure, p *plot.Plot) *figure {
	png, err := render(p)
	if err != nil {
		f.NoData = err.Error()
		return f
	}
	f.png = png
	return f
}

func newPlot(title, x, y string) *plot.Plot {
	p := plot.New()
	p.Title.Text = title
	p.X.Label.Text = x
	p.Y.Label.Text = y
	p.X.Tick.Marker = niceTicks{}
	p.Y.Tick.Marker = niceTicks{}
	p.Add(plotter.NewGrid())
	return p
}

// niceTicks puts about six labelled ticks on steps of 1, 2 or 5 times a
// power of ten, labelled without trailing zeros.
type niceTicks struct{}

func (niceTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(hi > lo) || math.IsInf(hi-lo, 0) {
		return plot.DefaultTicks{}.Ticks(lo, hi)
	}
	raw := (hi - lo) / 6
	mag := math.Pow(10, math.Floor(math.Log10(raw)))
	step, minors := 10*mag, 5
	for _, m := range []struct {
		f float64
		n int
	}{{1, 5}, {2, 4}, {5, 5}} {
		if m.f*mag >= raw {
			step, minors = m.f*mag, m.n
			break
		}
	}
	minor := step / float64(minors)
	var ticks []plot.Tick
	first := math.Ceil(lo/minor - 1e-9)
	for k := first; k*minor <= hi+minor*1e-9; k++ {
		v := k * minor
		t := plot.Tick{Value: v}
		if int64(k)%int64(minors) == 0 {
			if math.Abs(v) < step*1e-9 {
				v = 0
			}
			t.Label = strconv.FormatFloat(v, 'g', 6, 64)
		}
		ticks = append(ticks, t)
		if len(ticks) > 200 { // cannot happen with finite bounds; stay safe
			break
		}
	}
	return ticks
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
	x    float64
	name string
}

// boundaries lists phase starts within [xlo, xhi]; without phases it uses
// the points where History changes phase.
func boundaries(d *Data, hist []Point, xlo, xhi float64) []boundary {
	var out []boundary
	if len(d.Phases) > 0 {
		for _, ph := range d.Phases {
			if math.IsNaN(ph.Start) || math.IsInf(ph.Start, 0) || ph.Start < xlo || ph.Start > xhi {
				continue
			}
			name := ph.Name
			if name == "" {
				name = fmt.Sprintf("phase %d", ph.Index)
			}
			out = append(out, boundary{ph.Start, name})
		}
		return out
	}
	for i, pt := range hist {
		if i == 0 || pt.Phase != hist[i-1].Phase {
			out = append(out, boundary{pt.Elapsed, fmt.Sprintf("phase %d", pt.Phase)})
		}
	}
	return out
}

// addBoundaries draws dashed vertical lines from ylo to yhi with the phase
// names written just below the top.
func addBoundaries(p *plot.Plot, bs []boundary, ylo, yhi float64) error {
	if len(bs) == 0 {
		return nil
	}
	var labels plotter.XYLabels
	for _, b := range bs {
		l, err := plotter.NewLine(plotter.XYs{{X: b.x, Y: ylo}, {X: b.x, Y: yhi}})
		if err != nil {
			return err
		}
		l.Color = boundaryColor
		l.Width = vg.Points(0.8)
		l.Dashes = []vg.Length{vg.Points(3), vg.Points(3)}
		p.Add(l)
		labels.XYs = append(labels.XYs, plotter.XY{X: b.x, Y: yhi})
		labels.Labels = append(labels.Labels, shorten(b.name, 24))
	}
	lab, err := plotter.NewLabels(labels)
	if err != nil {
		return err
	}
	for i := range lab.TextStyle {
		lab.TextStyle[i].Color = boundaryColor
		lab.TextStyle[i].YAlign = draw.YTop
		lab.TextStyle[i].Font.Size = vg.Points(8)
	}
	lab.Offset = vg.Point{X: vg.Points(2), Y: -vg.Points(1)}
	p.Add(lab)
	return nil
}

// addTrip draws a solid red vertical line where the safety trip fired, when
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
	p.Legend.Add(fmt.Sprintf("safety trip at %.1f s", t.Elapsed), l)
	return nil
}

func shorten(s string, n int) string {
	r := []rune(s)
	if len(r) <= n {
		return s
	}
	return string(r[:n-1]) + "…"
}

func secondMomentFigure(d *Data) *figure {
	f := &figure{
		File:  SecondMomentName,
		Title: "Tracking error second moment E[eᵀe]",
		Caption: "Measured E[eᵀe] (blue, shaded: its confidence interval) against the prediction " +
			"(orange, dashed) over the run; dashed grey lines mark where each phase starts, a solid red " +
			"line where the safety trip fired, if it did.",
	}
	hist := sortedHistory(d.History)
	var meas, pred segmenter
	var bandSegs [][2]plotter.XYs
	var lo, hi plotter.XYs
	xs, ys := newSpan(), newSpan()
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
		if m, ok := val(pt.Measured); ok {
			meas.add(x, m)
			xs.add(x)
			ys.add(m)
		} else {
			meas.gap()
		}
		l, okl := val(pt.CILow)
		h, okh := val(pt.CIHigh)
		if okl && okh && l <= h {
			lo = append(lo, plotter.XY{X: x, Y: l})
			hi = append(hi, plotter.XY{X: x, Y: h})
			xs.add(x)
			ys.add(l)
			ys.add(h)
		} else {
			flushBand()
		}
		if v, ok := val(pt.Predicted); ok {
			if havePrev && pt.Phase != prevPhase && v != prevY {
				pred.add(x, prevY) // step at the phase change
			}
			pred.add(x, v)
			xs.add(x)
			ys.add(v)
			havePrev, prevY, prevPhase = true, v, pt.Phase
		} else {
			pred.gap()
			havePrev = false
		}
	}
	flushBand()
	if xs.empty() {
		f.NoData = "no measured or predicted value in the history"
		return f
	}
	p := newPlot(f.Title, "time since start (s)", "E[eᵀe]")
	for i, b := range bandSegs {
		poly := make(plotter.XYs, 0, 2*len(b[0]))
		poly = append(poly, b[1]...)
		for j := len(b[0]) - 1; j >= 0; j-- {
			poly = append(poly, b[0][j])
		}
		pg, err := plotter.NewPolygon(poly)
		if err != nil {
			f.NoData = "drawing failed: " + err.Error()
			return f
		}
		pg.Color = bandColor
		pg.LineStyle.Width = 0
		p.Add(pg)
		if i == 0 {
			p.Legend.Add("confidence interval", pg)
		}
	}
	if len(lone.w) > 0 {
		p.Add(lone)
		if len(bandSegs) == 0 {
			p.Legend.Add("confidence interval", lone)
		}
	}
	if th, err := addSegments(p, meas.done(), measuredColor, nil); err != nil {
		f.NoData = "drawing failed: " + err.Error()
		return f
	} else if th != nil {
		p.Legend.Add("measured", th)
	}
	if th, err := addSegments(p, pred.done(), predictedColor, []vg.Length{vg.Points(6), vg.Points(3)}); err != nil {
		f.NoData = "drawing failed: " + err.Error()
		return f
	} else if th != nil {
		p.Legend.Add("predicted", th)
	}
	xlo, xhi := xs.widened()
	ylo, yhi := ys.widened()
	if ylo > 0 {
		ylo = 0 // a second moment: show it from zero
	}
	yhi += 0.3 * (yhi - ylo) // room for the phase names and the legend
	return finishTimePlot(f, p, d, hist, xlo, xhi, ylo, yhi)
}

// finishTimePlot adds the phase boundaries and the trip to a plot over
// time, fixes its axes and legend and renders it.
func finishTimePlot(f *figure, p *plot.Plot, d *Data, hist []Point, xlo, xhi, ylo, yhi float64) *figure {
	if err := addBoundaries(p, boundaries(d, hist, xlo, xhi), ylo, yhi); err != nil {
		f.NoData = "drawing failed: " + err.Error()
		return f
	}
	if err := addTrip(p, d.Trip, xlo, xhi, ylo, yhi); err != nil {
		f.NoData = "drawing failed: " + err.Error()
		return f
	}
	p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = xlo, xhi, ylo, yhi
	p.Legend.Top, p.Legend.Left = true, true
	p.Legend.YOffs = -vg.Points(14)
	return finish(f, p)
}

func ratioFigure(d *Data) *figure {
	f := &figure{
		File:  RatioName,
		Title: "Measured over predicted",
		Caption: "Measured E[eᵀe] divided by the predicted value over the run; " +
			"1 (grey, dotted) means the measurement matches the prediction.",
	}
	hist := sortedHistory(d.History)
	var seg segmenter
	xs, ys := newSpan(), newSpan()
	for _, pt := range hist {
		if r, ok := ratio(pt.Measured, pt.Predicted); ok {
			seg.add(pt.Elapsed, r)
			xs.add(pt.Elapsed)
			ys.add(r)
		} else {
			seg.gap()
		}
	}
	if xs.empty() {
		f.NoData = "no point has both a measured and a non-zero predicted value"
		return f
	}
	ys.add(1)
	p := newPlot(f.Title, "time since start (s)", "measured / predicted")
	xlo, xhi := xs.widened()
	ylo, yhi := ys.widened()
	if ylo > 0 {
		ylo = 0
	}
	yhi += 0.3 * (yhi - ylo)
	ref, err := plotter.NewLine(plotter.XYs{{X: xlo, Y: 1}, {X: xhi, Y: 1}})
	if err != nil {
		f.NoData = "drawing failed: " + err.Error()
		return f
	}
	ref.Color = boundaryColor
	ref.Width = vg.Points(1.2)
	ref.Dashes = []vg.Length{vg.Points(2), vg.Points(2)}
	p.Add(ref)
	p.Legend.Add("1 (as predicted)", ref)
	if th, err := addSegments(p, seg.done(), measuredColor, nil); err != nil {
		f.NoData = "drawing failed: " + err.Error()
		return f
	} else if th != nil {
		p.Legend.Add("measured / predicted", th)
	}
	return finishTimePlot(f, p, d, hist, xlo, xhi, ylo, yhi)
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
		Caption: "For each phase: measured E[eᵀe] (blue, whiskers: confidence interval) beside the " +
			"prediction (orange); the label below gives the phase's verdict.",
	}
	if len(d.Phases) == 0 {
		f.NoData = "no phases"
		return f
	}
	meas, pred := newRects(measuredColor), newRects(predictedColor)
	wh := &whiskers{line: draw.LineStyle{Color: color.Black, Width: vg.Points(1)}}
	ys := newSpan()
	ys.add(0)
	names := make([]string, len(d.Phases))
	any := false
	for i, ph := range d.Phases {
		x := float64(i)
		name := ph.Name
		if name == "" {
			name = fmt.Sprintf("phase %d", ph.Index)
		}
		v := strings.ToUpper(phaseVerdict(ph.Verdict))
		if v == "" {
			v = "NO VERDICT"
		}
		names[i] = shorten(name, 16) + "\n" + v
		if m, ok := val(ph.Measured); ok {
			meas.add(x-0.36, x-0.02, 0, m)
			ys.add(m)
			any = true
		}
		l, okl := val(ph.CILow)
		h, okh := val(ph.CIHigh)
		if okl && okh && l <= h {
			wh.w = append(wh.w, [3]float64{x - 0.19, l, h})
			ys.add(l)
			ys.add(h)
			any = true
		}
		if pv, ok := val(ph.Predicted); ok {
			pred.add(x+0.02, x+0.36, 0, pv)
			ys.add(pv)
			any = true
		}
	}
	if !any {
		f.NoData = "no phase has a measured or predicted value"
		return f
	}
	p := newPlot(f.Title, "", "E[eᵀe]")
	p.Add(meas, pred, wh)
	p.Legend.Add("measured", meas)
	p.Legend.Add("confidence interval", wh)
	p.Legend.Add("predicted", pred)
	p.NominalX(names...)
	if len(d.Phases) > 6 { // slant the names so they do not run into each other
		p.X.Tick.Label.Rotation = math.Pi / 6
		p.X.Tick.Label.XAlign = draw.XRight
		p.X.Tick.Label.YAlign = draw.YTop
	}
	p.X.Min, p.X.Max = -0.6, float64(len(d.Phases))-0.4
	ylo, yhi := ys.widened()
	p.Y.Min, p.Y.Max = ylo, yhi+0.25*(yhi-ylo)
	p.Legend.Top = true
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

func delayFigure(direction string, h Histogram) *figure {
	f := &figure{
		File:  DelayName(direction),
		Title: "Drawn delays, " + direction,
	}
	bs, total, note, reason := buckets(h, 1000)
	if reason != "" {
		f.NoData = reason
		return f
	}
	f.Caption = fmt.Sprintf("%sHow many of the %.0f delays drawn for %s fell in each bucket; "+
		"buckets are labelled in milliseconds (the run records seconds) and drawn equally wide "+
		"whatever their width.", note, total, direction)
	p := newPlot(f.Title, "delay bucket (ms)", "draws")
	in, over := newRects(measuredColor), newRects(overflowColor)
	labels := make([]string, len(bs))
	every := (len(bs) + 9) / 10 // at most about ten labels
	for i, b := range bs {
		x := float64(i)
		if b.overflow {
			over.add(x-0.4, x+0.4, 0, b.count)
			labels[i] = "> " + fmtMs(b.lo)
			continue
		}
		in.add(x-0.4, x+0.4, 0, b.count)
		switch {
		case i == 0 && b.lo == 0:
			labels[i] = "≤ " + fmtMs(b.hi)
		default:
			labels[i] = fmtMs(b.lo) + "–" + fmtMs(b.hi)
		}
		if i%every != 0 && i != len(bs)-1 {
			labels[i] = ""
		}
	}
	if len(in.r) > 0 {
		p.Add(in)
	}
	if len(over.r) > 0 {
		p.Add(over)
		last := bs[len(bs)-1]
		p.Legend.Add("above the last bound", over)
		f.Caption += fmt.Sprintf(" The grey bar counts the %.0f delays above %s ms.", last.count, fmtMs(last.lo))
	}
	p.NominalX(labels...)
	p.X.Min, p.X.Max = -0.6, float64(len(bs))-0.4
	p.Y.Min = 0
	p.Y.Max = 1.15 * maxCount(bs)
	p.Legend.Top = true
	return finish(f, p)
}

func fmtMs(v float64) string { return strconv.FormatFloat(v, 'g', 4, 64) }

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
	p.NominalX(labels...)
	p.X.Min, p.X.Max = -0.6, float64(len(ups))-0.4
	p.Y.Min = 0
	ymax := 1.0
	for _, s := range ss {
		ymax = math.Max(ymax, maxCount(s.bs))
	}
	p.Y.Max = 1.15 * ymax
	p.Legend.Top = true
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
