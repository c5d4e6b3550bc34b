package bench

import (
	"fmt"
	"io"
	"math"
	"sort"
	"strings"

	"rigwire/emulate"
	"rigwire/estimate/engine"
)

// WriteReport writes predicted and measured side by side, the verdict with
// its reason, and the relay's counts per direction (forwarded and dropped
// always, the other outcomes when they happened), from the monitor's
// summary s and the relay's Stats.
func (b *Bench) WriteReport(w io.Writer, s *engine.Summary) {
	val := func(p *float64) string {
		if p == nil || math.IsNaN(*p) {
			return "-"
		}
		return fmt.Sprintf("%.5g", *p)
	}
	fmt.Fprintf(w, "\n%-26s %-14s %s\n", "", "predicted", fmt.Sprintf("measured (%g %% CI)", 100*s.Level))
	ci := "-"
	if s.CILow != nil && s.CIHigh != nil {
		ci = fmt.Sprintf("[%.5g, %.5g]", *s.CILow, *s.CIHigh)
	}
	fmt.Fprintf(w, "%-26s %-14s %s  %s\n", "E[eᵀe]", val(s.PredictedSecondMoment), val(s.ErrorSecondMoment), ci)
	var pstd *float64
	if b.Prediction.Error != nil {
		pstd = &b.Prediction.Error.Std
	}
	fmt.Fprintf(w, "%-26s %-14s %s\n", "error std", val(pstd), val(s.ErrorStd))
	fmt.Fprintf(w, "%-26s %-14s %s\n", "samples", "", fmt.Sprint(s.Samples))
	if s.Effective != nil {
		fmt.Fprintf(w, "%-26s %-14s %.0f (%d batches of %d)\n", "effective samples", "", *s.Effective, s.Batches, s.BatchSize)
	}
	fmt.Fprintf(w, "%-26s %-14s %s\n", "measured / predicted", "", val(s.Ratio))
	fmt.Fprintf(w, "\nverdict: %s (prediction against the measured interval widened by %g of its bounds): %s\n",
		s.Verdict, s.Tolerance, s.VerdictReason)
	dirs := b.Stats().Directions()
	sort.Slice(dirs, func(i, j int) bool { return dirs[i].Direction < dirs[j].Direction })
	fmt.Fprintln(w, "\nrelay:")
	for _, d := range dirs {
		outcomes := d.Outcomes()
		sort.Slice(outcomes, func(i, j int) bool { return outcomes[i].Outcome < outcomes[j].Outcome })
		var parts []string
		for _, o := range outcomes {
			if o.Count > 0 || o.Outcome == emulate.OutcomeForwarded || o.Outcome == emulate.OutcomeDropped {
				parts = append(parts, fmt.Sprintf("%s %d", o.Outcome, o.Count))
			}
		}
		fmt.Fprintf(w, "  %-24s %s\n", d.Direction, strings.Join(parts, ", "))
	}
}
