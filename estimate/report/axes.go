package report

import (
	"math"
	"strconv"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// NiceTicks puts about six labelled ticks on steps of 1, 2 or 5 times a
// power of ten, labelled without trailing zeros, with unlabelled minor
// ticks between them.
type NiceTicks struct{}

func (NiceTicks) Ticks(lo, hi float64) []plot.Tick {
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

// LogTicks labels a log axis at every power of ten in range; when the
// range spans fewer than two decades it labels 2× and 5× each power as
// well (and 3× and 7× below one decade), so that a log axis always shows
// at least three labels where it can. A range too narrow for that falls
// back to NiceTicks. Unlabelled minor ticks mark 1…9 × each power.
type LogTicks struct{}

func (LogTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(lo > 0) || !(hi > lo) || math.IsInf(hi, 0) {
		return plot.DefaultTicks{}.Ticks(math.Max(lo, 1e-300), math.Max(hi, 1e-300))
	}
	decades := math.Log10(hi / lo)
	labelled := map[int]bool{1: true}
	switch {
	case decades < 1:
		labelled = map[int]bool{1: true, 2: true, 3: true, 5: true, 7: true}
	case decades < 2:
		labelled = map[int]bool{1: true, 2: true, 5: true}
	}
	var ticks []plot.Tick
	n := 0
	for e := math.Floor(math.Log10(lo)); e <= math.Ceil(math.Log10(hi)); e++ {
		p := math.Pow(10, e)
		for m := 1; m <= 9; m++ {
			v := float64(m) * p
			if v < lo*(1-1e-12) || v > hi*(1+1e-12) {
				continue
			}
			t := plot.Tick{Value: v}
			if labelled[m] {
				t.Label = strconv.FormatFloat(v, 'g', 3, 64)
				n++
			}
			ticks = append(ticks, t)
		}
	}
	if n < 2 {
		var out []plot.Tick
		for _, t := range (NiceTicks{}).Ticks(lo, hi) {
			if t.Value > 0 {
				out = append(out, t)
			}
		}
		return out
	}
	return ticks
}

// LogPad widens a positive range [lo, hi] by frac of its width in
// decades on each side (a degenerate range by a factor 2), so that a
// curve is never drawn on the frame.
func LogPad(lo, hi, frac float64) (float64, float64) {
	if !(lo > 0) || !(hi >= lo) {
		return 1e-3, 1
	}
	if hi == lo {
		return lo / 2, hi * 2
	}
	f := math.Pow(hi/lo, frac)
	return lo / f, hi * f
}

// LinPad widens [lo, hi] by frac of its width on each side.
func LinPad(lo, hi, frac float64) (float64, float64) {
	if hi == lo {
		d := math.Abs(lo) / 2
		if d == 0 {
			d = 1
		}
		return lo - d, hi + d
	}
	d := (hi - lo) * frac
	return lo - d, hi + d
}

// FitCategoryLabels sets the X axis of p to the categories 0…n−1 labelled
// by labels, slanting and then thinning the labels until neighbouring
// labels cannot run into each other across the data width dataWidth:
// level labels need a slot wider than the widest; slanted ones (45°) a
// slot wider than the text's height over sin 45°. It returns how many
// labels it kept (every k-th, the last always).
func FitCategoryLabels(p *plot.Plot, labels []string, dataWidth vg.Length) int {
	n := len(labels)
	if n == 0 {
		return 0
	}
	sty := p.X.Tick.Label
	widest := vg.Length(0)
	for _, l := range labels {
		widest = max(widest, textWidth(sty, l))
	}
	slot := dataWidth / vg.Length(n)
	height := sty.Height("0")
	gap := vg.Points(4)
	every := 1
	if widest+gap > slot {
		p.X.Tick.Label.Rotation = math.Pi / 4
		p.X.Tick.Label.XAlign = draw.XRight
		p.X.Tick.Label.YAlign = draw.YTop
		need := (height + gap) / vg.Length(math.Sin(math.Pi/4))
		for vg.Length(every)*slot < need {
			every++
		}
	}
	ticks := make([]plot.Tick, n)
	kept := 0
	for i, l := range labels {
		ticks[i] = plot.Tick{Value: float64(i)}
		if i%every == 0 && (i == n-1 || n-1-i >= every || every == 1) {
			ticks[i].Label = l
			kept++
		} else if i == n-1 {
			ticks[i].Label = l
			kept++
		}
	}
	p.X.Tick.Marker = plot.ConstantTicks(ticks)
	p.X.Tick.Width = 0
	p.X.Tick.Length = 0
	p.X.Width = 0
	p.X.Min, p.X.Max = -0.6, float64(n)-0.4
	return kept
}
