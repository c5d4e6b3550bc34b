package fit

import (
	"fmt"
	"io"
	"slices"
	"text/tabwriter"
	"time"

	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// Calibration is the rig's own timing as monitor calibrate measured it:
// the controller's turnarounds over a clean link (the relay's release of
// a sample to the controller → the arrival of its command), summarised
// and fitted with every kind of Delays.
type Calibration struct {
	N                   int
	Mean, P50, P99, Max float64 // seconds
	Fits                []DelayFit
	Best                DelayFit // least AIC
	BestYAML            string   // Best.Law as a one-line law of the profile format
	Loop                string   // the loop file's name, for the timing file's comment
	Measured            time.Time
	PoorFit             bool // even the best kind has KS p < CalibrationAlpha
}

// CalibrationAlpha is the level below which the best kind's
// Kolmogorov–Smirnov p-value marks a poor fit.
const CalibrationAlpha = 0.001

// Calibrate summarises and fits the turnarounds xs (seconds) measured
// for the loop file named loop.
func Calibrate(xs []float64, loop string, at time.Time) (*Calibration, error) {
	fits, err := Delays(xs)
	if err != nil {
		return nil, err
	}
	sorted := slices.Clone(xs)
	slices.Sort(sorted)
	q := func(p float64) float64 { return sorted[min(len(sorted)-1, int(p*float64(len(sorted))))] }
	c := &Calibration{N: len(xs), P50: q(0.5), P99: q(0.99), Max: sorted[len(sorted)-1], Fits: fits, Best: fits[0],
		Loop: loop, Measured: at.UTC()}
	for _, x := range xs {
		c.Mean += x
	}
	c.Mean /= float64(len(xs))
	c.PoorFit = c.Best.KSP < CalibrationAlpha
	if c.BestYAML, err = profiles.DelayFlowYAML(c.Best.Kind, c.Best.Names, c.Best.Params); err != nil {
		return nil, err
	}
	return c, nil
}

// WriteText prints the summary, the table of fits and the choice.
func (c *Calibration) WriteText(w io.Writer) {
	fmt.Fprintf(w, "controller turnaround: %d commands paired; mean %s, median %s, p99 %s, max %s\n", c.N,
		laws.FormatSeconds(c.Mean), laws.FormatSeconds(c.P50), laws.FormatSeconds(c.P99), laws.FormatSeconds(c.Max))
	tw := tabwriter.NewWriter(w, 0, 4, 2, ' ', 0)
	fmt.Fprintln(tw, "law\tAIC\tKS D\tKS p\t")
	for _, f := range c.Fits {
		fmt.Fprintf(tw, "%s\t%.1f\t%.4f\t%.3g\t\n", laws.Describe(f.Law), f.AIC, f.KS, f.KSP)
	}
	tw.Flush()
	fmt.Fprintf(w, "chosen (least AIC): %s; Kolmogorov–Smirnov D = %.4f, p = %.3g over n = %d (conservative: the parameters come from the same sample)\n",
		laws.Describe(c.Best.Law), c.Best.KS, c.Best.KSP, c.N)
	if c.PoorFit {
		fmt.Fprintf(w, "note: no kind describes the turnaround well (p < %g at n = %d); a prediction with it is approximate\n", CalibrationAlpha, c.N)
	}
}

// TimingFile is the rig timing file (profiles/formats.md): comments on
// what was measured, then the fitted law as compute_delay.
func (c *Calibration) TimingFile() string {
	return fmt.Sprintf("# rig timing of %s, measured by monitor calibrate on %s\n"+
		"# the controller's turnaround over a clean link: %d commands, mean %s, p99 %s\n"+
		"# fitted %s by maximum likelihood (least AIC of %d kinds); KS D = %.4f, p = %.3g\n"+
		"compute_delay: %s\n",
		c.Loop, c.Measured.Format(time.RFC3339), c.N, laws.FormatSeconds(c.Mean), laws.FormatSeconds(c.P99),
		c.Best.Kind, len(c.Fits), c.Best.KS, c.Best.KSP, c.BestYAML)
}
