package exitcode

import (
	"testing"

	"rigwire/emulate/trip"
	"rigwire/estimate/engine"
)

// The soak's exit status: the trip before a failed phase before an
// inconclusive or not-run one.
func TestSoakExitCode(t *testing.T) {
	ph := func(vs ...string) []engine.PhaseResult {
		var out []engine.PhaseResult
		for _, v := range vs {
			out = append(out, engine.PhaseResult{Verdict: v})
		}
		return out
	}
	cases := []struct {
		name   string
		phases []engine.PhaseResult
		trip   bool
		want   int
	}{
		{"all passed", ph(engine.PhasePass, engine.PhasePass), false, OK},
		{"inconclusive", ph(engine.PhasePass, engine.PhaseInconclusive), false, Inconclusive},
		{"not run", ph(engine.PhasePass, engine.PhaseNotRun), false, Inconclusive},
		{"failed beats inconclusive", ph(engine.PhaseInconclusive, engine.PhaseFail, engine.PhaseNotRun), false, PhaseFailed},
		{"trip beats all", ph(engine.PhaseFail, engine.PhaseNotRun), true, Tripped},
		{"no phases", nil, false, OK},
	}
	for _, c := range cases {
		s := &engine.Summary{Phases: c.phases}
		if c.trip {
			s.Trip = &trip.Event{}
		}
		if got := OfSoak(s); got != c.want {
			t.Errorf("%s: %d, want %d", c.name, got, c.want)
		}
	}
}
