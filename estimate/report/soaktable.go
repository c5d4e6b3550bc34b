package report

import (
	"fmt"
	"io"
	"math"
	"strings"
	"time"
	"unicode/utf8"

	"rigwire/estimate/engine"
	"rigwire/profiles"
)

// The soak's text on stderr: the status line while it runs and the
// per-phase table at its end.

// SoakProgress is a soak's status line: phase, scenario time and the measurement.
func SoakProgress(sc *profiles.Scenario, mon *engine.Monitor, elapsed time.Duration) string {
	phases := mon.Phases()
	cur := "-"
	if n := len(phases); n > 0 {
		p := phases[n-1]
		cur = fmt.Sprintf("phase %d/%d %s", p.Index+1, len(sc.Phases), p.Name)
		if p.ErrorSecondMoment != nil && p.PredictedSecondMoment != nil {
			cur += fmt.Sprintf(" (phase E[eᵀe] %.4g, predicted %.4g)", *p.ErrorSecondMoment, *p.PredictedSecondMoment)
		}
	}
	total := sc.Total()
	pct := 100 * math.Min(1, elapsed.Seconds()/total.Seconds())
	return fmt.Sprintf("soak %s: %s of %s (%.0f %%), %s | %s", sc.Name, elapsed.Round(time.Second), total, pct, cur,
		strings.TrimSpace(mon.Progress().String()))
}

// PhaseTable prints one line per phase: verdict, samples, measured with
// its interval, predicted, a note (cut short by the trip, the prediction
// outside the interval of a bound-only check) and the reason; then the
// trip and what "inconclusive" means.
func PhaseTable(w io.Writer, s *engine.Summary) {
	val := func(p *float64) string {
		if p == nil {
			return "-"
		}
		return fmt.Sprintf("%.4g", *p)
	}
	noteWidth := len("note")
	for _, p := range s.Phases {
		noteWidth = max(noteWidth, utf8.RuneCountInString(PhaseNote(p)))
	}
	fmt.Fprintf(w, "\n%-16s %-12s %8s %-12s %-22s %-12s %-*s %s\n", "phase", "verdict", "samples", "E[eᵀe]",
		fmt.Sprintf("%g %% CI", 100*s.Level), "predicted", noteWidth, "note", "reason")
	inconclusive := false
	for _, p := range s.Phases {
		ci := "-"
		if p.CILow != nil && p.CIHigh != nil {
			ci = fmt.Sprintf("[%.4g, %.4g]", *p.CILow, *p.CIHigh)
		}
		fmt.Fprintf(w, "%-16s %-12s %8d %-12s %-22s %-12s %-*s %s\n", p.Name, PhaseVerdictText(p.Verdict), p.Samples,
			val(p.ErrorSecondMoment), ci, val(p.PredictedSecondMoment), noteWidth, PhaseNote(p), p.Reason)
		inconclusive = inconclusive || p.Verdict == engine.PhaseInconclusive
	}
	if s.Trip != nil {
		fmt.Fprintf(w, "\nsafety trip: %s %.5g above %.5g in phase %q after %s; relay action %s; %d later samples not judged\n",
			s.Trip.Reason, s.Trip.Value, s.Trip.Bound, s.Trip.Phase, tripAtSec.Format(s.Trip.Elapsed), s.Trip.Action, s.AfterTripSamples)
	}
	if inconclusive {
		fmt.Fprintf(w, "\ninconclusive: the data could not tell agreement from disagreement; the rule: %s\n", engine.VerdictRule)
	}
}

// PhaseVerdictText is a verdict as a reader reads it, in the table, the
// report's page and its plots: "not run" for not_run.
func PhaseVerdictText(v string) string {
	if v == engine.PhaseNotRun {
		return "not run"
	}
	return v
}

// PhaseNote is the table's note for a phase: how it was cut short, and a
// prediction outside the measured interval of a check on the bound only.
func PhaseNote(p engine.PhaseResult) string {
	var notes []string
	switch p.CutShort {
	case engine.CutByTrip:
		notes = append(notes, fmt.Sprintf("cut by trip (%d after it)", p.AfterTripSamples))
	case engine.CutInterrupt:
		notes = append(notes, "cut short (interrupted)")
	}
	if p.PredictionOutside {
		notes = append(notes, "prediction outside interval")
	}
	if len(notes) == 0 {
		return "-"
	}
	return strings.Join(notes, "; ")
}
