package report

import (
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"rigwire/estimate"
)

// sweepOfOurs is an invented sweep of extra loss whose E[eᵀe] grows over
// three decades (from 0.0025) before stability is lost at q = 0.42.
func sweepOfOurs() *estimate.SweepResult {
	res := &estimate.SweepResult{Param: estimate.SweepLoss, Boundary: 0.42}
	for i := 0; i <= 25; i++ {
		q := 0.02 * float64(i)
		rho := 0.8 + 0.2*q/0.42
		pt := estimate.SweepPoint{Value: q, SpectralRadius: rho, SecondMoment: math.NaN(), Stability: estimate.StabilityUnstable}
		if rho < 1 {
			pt.MeanSquareStable, pt.Stability = true, estimate.StabilityStable
			pt.SecondMoment = 1e-4 / math.Pow(1-rho, 2)
		}
		res.Points = append(res.Points, pt)
	}
	return res
}

var svgLabel = regexp.MustCompile(`<text[^>]*>([^<]*)</text>`)

func svgTexts(t *testing.T, path string) []string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var out []string
	for _, m := range svgLabel.FindAllStringSubmatch(string(b), -1) {
		out = append(out, m[1])
	}
	return out
}

func has(texts []string, s string) bool {
	for _, x := range texts {
		if strings.Contains(x, s) {
			return true
		}
	}
	return false
}

// The --vary plot: the x axis says it is the extra loss added to both
// directions, E[eᵀe] carries its unit and a label at every decade, the
// spectral radius has its own panel with the line ρ = 1, and neither
// curve touches the frame.
func TestVaryPlot(t *testing.T) {
	res := sweepOfOurs()
	file := filepath.Join(t.TempDir(), "vary.svg")
	if err := WriteSweepPlot(res, file); err != nil {
		t.Fatal(err)
	}
	texts := svgTexts(t, file)
	for _, want := range []string{"extra loss q added to both directions", "E[eᵀe] ((output units)²)",
		"spectral radius ρ", "ρ = 1", "stability lost at extra loss q = 0.42", "0.01", "0.1", "1", "10"} {
		if !has(texts, want) {
			t.Errorf("vary plot lacks %q; texts %q", want, texts)
		}
	}
	if has(texts, "against loss") {
		t.Errorf("the axis calls the extra loss plain loss")
	}
	top, bottom, err := sweepPlots(res)
	if err != nil {
		t.Fatal(err)
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, p := range res.Points {
		if p.MeanSquareStable {
			lo, hi = math.Min(lo, p.SecondMoment), math.Max(hi, p.SecondMoment)
		}
	}
	first, last := res.Points[0].Value, res.Points[len(res.Points)-1].Value
	if !(top.Y.Min < lo && top.Y.Max > hi && top.X.Min < first && top.X.Max > last) {
		t.Errorf("E[eᵀe] panel [%g, %g]×[%g, %g] clips the curve [%g, %g]×[%g, %g]", top.X.Min, top.X.Max, top.Y.Min, top.Y.Max, first, last, lo, hi)
	}
	rhoMax := res.Points[len(res.Points)-1].SpectralRadius
	if !(bottom.Y.Min < 0.8 && bottom.Y.Max > rhoMax && bottom.X.Min == top.X.Min && bottom.X.Max == top.X.Max) {
		t.Errorf("ρ panel [%g, %g]×[%g, %g]: want it to hold ρ from 0.8 to its largest value over the same x range", bottom.X.Min, bottom.X.Max, bottom.Y.Min, bottom.Y.Max)
	}
	for _, want := range []string{"delay scale", "a factor on every network delay"} {
		if !strings.Contains(sweepAxisLabel(estimate.SweepDelayScale), want) {
			t.Errorf("delay_scale axis label lacks %q", want)
		}
	}
}

// The --step plot: the ±1 std band is in the legend and the error axis
// has its unit.
func TestStepPlot(t *testing.T) {
	var tr []estimate.Step
	for k := 0; k <= 100; k++ {
		s := estimate.Step{K: k, Time: 0.01 * float64(k)}
		e := math.Exp(-0.05 * float64(k))
		s.Error.Mean = []float64{e, -0.5 * e}
		s.Error.OutputStd = []float64{0.1 * (1 - e), 0.05}
		tr = append(tr, s)
	}
	file := filepath.Join(t.TempDir(), "step.svg")
	if err := WriteStepPlot(tr, file); err != nil {
		t.Fatal(err)
	}
	texts := svgTexts(t, file)
	for _, want := range []string{"E[e] ± 1 std of output 0 (band)", "E[e] ± 1 std of output 1 (band)", "(output units)"} {
		if !has(texts, want) {
			t.Errorf("step plot lacks %q; texts %q", want, texts)
		}
	}
}
