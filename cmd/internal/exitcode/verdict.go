package exitcode

import "rigwire/estimate/engine"

// The exit status of a monitor run or soak from its summary.

// OfRun is the process exit status for the verdict: 0 unless strict;
// with strict 0 agree, 3 above, 4 below, 5 inconclusive, 6 a prediction
// not certified stable (Above, Below, Inconclusive, NotStable).
func OfRun(s *engine.Summary, strict bool) int {
	if !strict {
		return OK
	}
	switch s.Verdict {
	case engine.VerdictAgree:
		return OK
	case engine.VerdictAbove:
		return Above
	case engine.VerdictBelow:
		return Below
	case engine.VerdictUnstable:
		return NotStable
	}
	return Inconclusive
}

// OfTrip is Tripped (8) when the safety trip fired, else 0.
func OfTrip(s *engine.Summary) int {
	if s.Trip != nil {
		return Tripped
	}
	return OK
}

// OfSoak is the exit status of a soak, the first that applies:
// Tripped (8) when the safety trip fired, PhaseFailed
// (7) when a phase failed its check, Inconclusive (5) when a
// phase was inconclusive or not run, else 0.
func OfSoak(s *engine.Summary) int {
	if s.Trip != nil {
		return Tripped
	}
	code := OK
	for _, p := range s.Phases {
		switch p.Verdict {
		case engine.PhaseFail:
			return PhaseFailed
		case engine.PhaseInconclusive, engine.PhaseNotRun:
			code = Inconclusive
		}
	}
	return code
}
