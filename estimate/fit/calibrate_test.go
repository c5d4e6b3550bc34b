package fit

import (
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// TestCalibrateWritesWhatALoopReads: turnarounds of a jittery controller
// (a gamma of shape 4 and scale 0.5 ms after 0.15 ms) give a timing file
// that a loop reads back (profiles.LoadTiming) as a law with the sample's
// mean and spread (within 3 % and 5 %), and whose Kolmogorov–Smirnov
// distance to the true law is small (0.03 at n = 4000: the 1 % critical
// value is 1.63/√n ≈ 0.026 for a known law, common practice).
func TestCalibrateWritesWhatALoopReads(t *testing.T) {
	truth, err := laws.NewGamma(4, 0.0005, 0.00015)
	if err != nil {
		t.Fatal(err)
	}
	r := rand.New(rand.NewPCG(5, 6))
	xs := make([]float64, 4000)
	for i := range xs {
		xs[i] = truth.Sample(r)
	}
	c, err := Calibrate(xs, "pump.yaml", time.Date(2026, 12, 5, 3, 0, 0, 0, time.UTC))
	if err != nil {
		t.Fatal(err)
	}
	var b strings.Builder
	c.WriteText(&b)
	if !strings.Contains(b.String(), "chosen (least AIC)") || c.N != len(xs) {
		t.Errorf("report:\n%s", b.String())
	}
	path := filepath.Join(t.TempDir(), "pump.timing.yaml")
	if err := os.WriteFile(path, []byte(c.TimingFile()), 0o644); err != nil {
		t.Fatal(err)
	}
	law, err := profiles.LoadTiming(path, 0.01)
	if err != nil {
		t.Fatalf("%v\n%s", err, c.TimingFile())
	}
	if m := law.Mean(); math.Abs(m/c.Mean-1) > 0.03 {
		t.Errorf("law read back: mean %g, the sample's %g", m, c.Mean)
	}
	sd := 0.0
	for _, x := range xs {
		sd += (x - c.Mean) * (x - c.Mean)
	}
	sd = math.Sqrt(sd / float64(len(xs)-1))
	if s := math.Sqrt(law.Variance()); math.Abs(s/sd-1) > 0.05 {
		t.Errorf("law read back: sd %g, the sample's %g", s, sd)
	}
	draws := make([]float64, 0, len(xs))
	for range xs {
		draws = append(draws, law.Sample(r))
	}
	slices.Sort(draws)
	d := laws.KSStatistic(draws, truth.CDF)
	if d > 0.03 {
		t.Errorf("draws of the fitted law against the true one: KS D = %.4f", d)
	}
}
