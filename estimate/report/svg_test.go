package report

import (
	"bytes"
	"encoding/xml"
	"fmt"
	"math"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"unicode/utf8"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"
)

// The checks below read the plots as SVG: gonum's SVG canvas writes every
// path in the figure's own coordinates (points, y up, under one flip of
// the whole drawing) and every text as <text x y> under the transforms of
// the groups around it, so the geometry can be recovered exactly.

// affine is x' = a·x + c·y + e, y' = b·x + d·y + f.
type affine struct{ a, b, c, d, e, f float64 }

var identity = affine{a: 1, d: 1}

func (m affine) mul(n affine) affine { // m then n applied to a point: m·n
	return affine{
		a: m.a*n.a + m.c*n.b, b: m.b*n.a + m.d*n.b,
		c: m.a*n.c + m.c*n.d, d: m.b*n.c + m.d*n.d,
		e: m.a*n.e + m.c*n.f + m.e, f: m.b*n.e + m.d*n.f + m.f,
	}
}

func (m affine) apply(x, y float64) (float64, float64) {
	return m.a*x + m.c*y + m.e, m.b*x + m.d*y + m.f
}

var transformFn = regexp.MustCompile(`(translate|scale|rotate)\(([^)]*)\)`)

func parseTransform(t *testing.T, s string) affine {
	m := identity
	for _, fn := range transformFn.FindAllStringSubmatch(s, -1) {
		var args []float64
		for _, a := range strings.FieldsFunc(fn[2], func(r rune) bool { return r == ',' || r == ' ' }) {
			v, err := strconv.ParseFloat(a, 64)
			if err != nil {
				t.Fatalf("transform %q: %v", s, err)
			}
			args = append(args, v)
		}
		var n affine
		switch fn[1] {
		case "translate":
			n = affine{a: 1, d: 1, e: args[0]}
			if len(args) > 1 {
				n.f = args[1]
			}
		case "scale":
			sy := args[0]
			if len(args) > 1 {
				sy = args[1]
			}
			n = affine{a: args[0], d: sy}
		case "rotate":
			r := args[0] * math.Pi / 180
			n = affine{a: math.Cos(r), b: math.Sin(r), c: -math.Sin(r), d: math.Cos(r)}
		}
		m = m.mul(n)
	}
	return m
}

// svgText is one text of a figure with its box in page coordinates (four
// corners, a rotated rectangle).
type svgText struct {
	text string
	size float64
	box  [4][2]float64
}

// svgPath is one path with its style and points in page coordinates.
type svgPath struct {
	fill, stroke string
	pts          [][2]float64
}

// Estimated glyph metrics of the plots' font, in ems: the advance of an
// average character (digits and lowercase letters of the serif face gonum
// draws with are 0.44–0.5 em wide), the ascent and the descent.
const (
	charEm    = 0.5
	ascentEm  = 0.72
	descentEm = 0.2
)

var pathNum = regexp.MustCompile(`-?[0-9.]+(?:e-?[0-9]+)?`)

func styleOf(style, key string) string {
	for _, kv := range strings.Split(style, ";") {
		k, v, ok := strings.Cut(kv, ":")
		if ok && strings.TrimSpace(k) == key {
			return strings.TrimSpace(v)
		}
	}
	return ""
}

// parseSVG returns the texts and paths of an SVG figure.
func parseSVG(t *testing.T, svg []byte) (texts []svgText, paths []svgPath) {
	t.Helper()
	dec := xml.NewDecoder(bytes.NewReader(svg))
	stack := []affine{identity}
	var cur *svgText
	var curM affine
	var curX, curY float64
	for {
		tok, err := dec.Token()
		if err != nil {
			break
		}
		switch el := tok.(type) {
		case xml.StartElement:
			attr := map[string]string{}
			for _, a := range el.Attr {
				attr[a.Name.Local] = a.Value
			}
			m := stack[len(stack)-1].mul(parseTransform(t, attr["transform"]))
			stack = append(stack, m)
			switch el.Name.Local {
			case "text":
				size := 10.0
				if fs := styleOf(attr["style"], "font-size"); fs != "" {
					size, _ = strconv.ParseFloat(strings.TrimSuffix(fs, "px"), 64)
				}
				cur = &svgText{size: size}
				curM = m
				curX, _ = strconv.ParseFloat(attr["x"], 64)
				curY, _ = strconv.ParseFloat(attr["y"], 64)
			case "path":
				p := svgPath{fill: styleOf(attr["style"], "fill"), stroke: styleOf(attr["style"], "stroke")}
				if p.fill == "" {
					p.fill = "#000000"
				}
				nums := pathNum.FindAllString(attr["d"], -1)
				for i := 0; i+1 < len(nums); i += 2 {
					x, _ := strconv.ParseFloat(nums[i], 64)
					y, _ := strconv.ParseFloat(nums[i+1], 64)
					px, py := m.apply(x, y)
					p.pts = append(p.pts, [2]float64{px, py})
				}
				paths = append(paths, p)
			}
		case xml.CharData:
			if cur != nil {
				cur.text += string(el)
			}
		case xml.EndElement:
			stack = stack[:len(stack)-1]
			if el.Name.Local == "text" && cur != nil {
				w := charEm * cur.size * float64(utf8.RuneCountInString(cur.text))
				// In the text's own frame y points down (the element flips it back).
				corners := [4][2]float64{
					{curX, curY - ascentEm*cur.size}, {curX + w, curY - ascentEm*cur.size},
					{curX + w, curY + descentEm*cur.size}, {curX, curY + descentEm*cur.size},
				}
				for i, c := range corners {
					x, y := curM.apply(c[0], c[1])
					cur.box[i] = [2]float64{x, y}
				}
				texts = append(texts, *cur)
				cur = nil
			}
		}
	}
	return texts, paths
}

// overlap tells whether two convex quadrilaterals overlap by more than
// slack points (the separating axis theorem).
func overlap(p, q [4][2]float64, slack float64) bool {
	for _, poly := range [][4][2]float64{p, q} {
		for i := 0; i < 4; i++ {
			a, b := poly[i], poly[(i+1)%4]
			nx, ny := -(b[1] - a[1]), b[0]-a[0]
			l := math.Hypot(nx, ny)
			if l == 0 {
				continue
			}
			nx, ny = nx/l, ny/l
			pmin, pmax := math.Inf(1), math.Inf(-1)
			qmin, qmax := math.Inf(1), math.Inf(-1)
			for _, v := range p {
				d := v[0]*nx + v[1]*ny
				pmin, pmax = math.Min(pmin, d), math.Max(pmax, d)
			}
			for _, v := range q {
				d := v[0]*nx + v[1]*ny
				qmin, qmax = math.Min(qmin, d), math.Max(qmax, d)
			}
			if pmax-slack <= qmin || qmax-slack <= pmin {
				return false
			}
		}
	}
	return true
}

// figureSVG renders a report figure as SVG, laid out as its PNG (the
// tests read the SVG's coordinates).
func figureSVG(t *testing.T, f *figure) []byte {
	t.Helper()
	if f.plot == nil {
		t.Fatalf("%s: not drawn (%s)", f.Title, f.NoData)
	}
	b, err := renderFigure("svg", f.plot)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// floorY is the page y (down from the top, as the parsed SVG gives it)
// of the plot's axis floor (its Y.Min: zero on a
// linear axis of a second moment, the clip floor on a log axis), laid out
// as drawFigure lays it out.
func floorY(t *testing.T, p *plot.Plot) float64 {
	t.Helper()
	c := vgsvg.New(plotWidth, plotHeight+legendHeight(p))
	dc := draw.New(c)
	dc.Min.Y += legendHeight(p)
	leg := p.Legend
	p.Legend = plot.NewLegend()
	da := p.DataCanvas(dc)
	p.Legend = leg
	_, trY := p.Transforms(&da)
	// The SVG flips the canvas: page y runs down from the top.
	return float64((plotHeight + legendHeight(p) - trY(p.Y.Min)) / vg.Points(1))
}

// Every text of every plot keeps clear of every other: tick labels, phase
// names along the top, verdicts over the bars, legend entries. Widths are
// estimated from the font size and the number of characters (charEm).
func TestPlotTextsDoNotOverlap(t *testing.T) {
	cases := map[string]*Data{
		"pump soak":       pumpSoak(300),
		"many phases":     manyPhases(14),
		"tripped":         trippedSoak(),
		"relay histogram": relayDelays(),
	}
	const slack = 0.5 // points
	for name, d := range cases {
		t.Run(name, func(t *testing.T) {
			for _, f := range buildFigures(d) {
				if f.plot == nil {
					continue
				}
				texts, _ := parseSVG(t, figureSVG(t, f))
				if len(texts) < 5 {
					t.Fatalf("%s: %d texts read from the SVG", f.Title, len(texts))
				}
				for i := range texts {
					for j := i + 1; j < len(texts); j++ {
						if overlap(texts[i].box, texts[j].box, slack) {
							t.Errorf("%s: %q and %q overlap", f.Title, texts[i].text, texts[j].text)
						}
					}
				}
			}
		})
	}
}

// No band, bar or whisker reaches below the plot's floor: the interval is
// positive (built on the log scale) and is clipped where the axis starts.
func TestNoBandBelowFloor(t *testing.T) {
	d := pumpSoak(300)
	for i := range d.History { // intervals reaching far below zero
		if d.History[i].CILow != nil {
			v := *d.History[i].CILow - 0.05
			d.History[i].CILow = &v
		}
	}
	d.Phases[0].CILow = f64(-0.02)
	spread := pumpSoak(300) // values spanning decades: a log axis
	for i := range spread.History {
		pt := &spread.History[i]
		if pt.CILow != nil {
			pt.CILow = f64(*pt.Measured * 1e-4)
		}
	}
	spread.Phases[1].CILow = f64(1e-7)
	const tol = 0.01 // points
	teal, ink := colorHex(Teal), colorHex(Ink)
	for name, data := range map[string]*Data{"linear": d, "log": spread} {
		t.Run(name, func(t *testing.T) {
			for _, f := range []*figure{secondMomentFigure(data), phasesFigure(data)} {
				svg := figureSVG(t, f)
				floor := floorY(t, f.plot)
				strip := float64((plotHeight) / vg.Points(1)) // the legend's strip starts below the plot
				_, paths := parseSVG(t, svg)
				checked := 0
				for _, p := range paths {
					if !nearColor(p.fill, teal) && !nearColor(p.stroke, ink) {
						continue
					}
					if inStrip(p, strip) {
						continue // the legend's sample of the series, below the plot
					}
					checked++
					for _, pt := range p.pts {
						if pt[1] > floor+tol {
							t.Errorf("%s: a %s path reaches y=%.2f below the floor %.2f", f.Title,
								map[bool]string{true: "band or bar", false: "whisker"}[nearColor(p.fill, teal)], pt[1], floor)
							break
						}
					}
				}
				if checked == 0 {
					t.Errorf("%s: no band, bar or whisker found in the SVG", f.Title)
				}
			}
		})
	}
	if ax := chooseY(span{1e-6, 0.2}, 1e-6, 0.2); !ax.Log {
		t.Errorf("values over five decades: want a log axis, got %+v", ax)
	}
}

// inStrip tells whether a path lies wholly in the legend's strip below
// the plot (page y from strip down).
func inStrip(p svgPath, strip float64) bool {
	for _, pt := range p.pts {
		if pt[1] < strip {
			return false
		}
	}
	return len(p.pts) > 0
}

// nearColor tells whether an SVG colour #RRGGBB is within 2 per channel of
// want (a translucent fill comes back with its channels rounded).
func nearColor(got, want string) bool {
	if len(got) != 7 || len(want) != 7 {
		return false
	}
	for i := 1; i < 7; i += 2 {
		a, err1 := strconv.ParseUint(got[i:i+2], 16, 8)
		b, err2 := strconv.ParseUint(want[i:i+2], 16, 8)
		if err1 != nil || err2 != nil || math.Abs(float64(a)-float64(b)) > 2 {
			return false
		}
	}
	return true
}

func colorHex(c interface{ RGBA() (r, g, b, a uint32) }) string {
	r, g, b, _ := c.RGBA()
	return fmt.Sprintf("#%02X%02X%02X", r>>8, g>>8, b>>8)
}

// A log axis labels every decade, and 2× and 5× as well when the range
// spans fewer than two decades.
func TestLogTicks(t *testing.T) {
	cases := []struct {
		name   string
		lo, hi float64
		want   []string
	}{
		{"four decades", 2e-5, 0.3, []string{"0.0001", "0.001", "0.01", "0.1"}},
		{"one and a half decades", 0.002, 0.08, []string{"0.002", "0.005", "0.01", "0.02", "0.05"}},
		{"below a decade", 0.0012, 0.008, []string{"0.002", "0.003", "0.005", "0.007"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var got []string
			for _, tk := range (LogTicks{}).Ticks(c.lo, c.hi) {
				if tk.Label != "" {
					got = append(got, tk.Label)
				}
			}
			if strings.Join(got, " ") != strings.Join(c.want, " ") {
				t.Errorf("labels %v, want %v", got, c.want)
			}
		})
	}
}

// manyPhases is a soak of n short phases of our own (a pick arm's cell
// stepping through its network conditions), whose names would collide if
// written on one line.
func manyPhases(n int) *Data {
	d := pumpSoak(200)
	d.Phases = nil
	for i := 0; i < n; i++ {
		s := 300 * float64(i) / float64(n)
		d.Phases = append(d.Phases, Phase{Index: i, Name: fmt.Sprintf("step-%02d-cell-handover", i), Start: s,
			End: s + 300/float64(n), Samples: 500, Measured: f64(0.02 + 0.001*float64(i)), CILow: f64(0.018),
			CIHigh: f64(0.03), Predicted: f64(0.021), Verdict: []string{"pass", "inconclusive", "fail"}[i%3]})
	}
	return d
}

// trippedSoak is the pump soak tripped on its ratio, with the trip's own
// window sampled.
func trippedSoak() *Data {
	d := pumpSoak(300)
	d.TimeScale = 0.3
	d.Verdict = "tripped"
	d.Trip = &Trip{Reason: "ratio", Value: 20.49, Bound: 20, Elapsed: 262, Phase: "outage", Action: "clean"}
	w := &TripWindow{Quantity: "ratio", Seconds: 1, Bound: 20, Every: 0.5}
	for x := 0.0; x <= 262; x += 0.5 {
		v := 1 + 0.4*math.Sin(x/3)
		if x > 250 {
			v = 1 + 19.49*(x-250)/12
		}
		w.Points = append(w.Points, TripPoint{Elapsed: x, Value: v})
	}
	d.TripWindow = w
	return d
}

// relayDelays has the relay's own delay buckets (24 exponential bounds
// from 50 µs to 2 s) filled over two decades.
func relayDelays() *Data {
	d := pumpSoak(100)
	var h Histogram
	for i := 0; i < 24; i++ {
		u := 50e-6 * math.Pow(2/50e-6, float64(i)/23)
		h.Upper = append(h.Upper, u)
		c := 0.0
		if u > 2e-4 && u < 0.5 {
			c = 1000 * math.Exp(-math.Pow(math.Log(u/0.004), 2))
		}
		h.Counts = append(h.Counts, math.Round(c))
	}
	h.Upper = append(h.Upper, math.Inf(1))
	h.Counts = append(h.Counts, 3)
	d.Delays = map[string]Histogram{"sensor_to_controller": h, "controller_to_actuator": h}
	return d
}
