package emulate

import (
	"context"
	"fmt"
	"strconv"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"rigwire/profiles"
)

// Play plays a scenario's steps: at step.At after the call it applies
// step.Profile to both directions (as Reload does: datagrams already held
// keep their release times, none is lost) and then calls onStep(step)
// (onStep may be nil). names[i] is the name of phase i, for the metrics.
// Play returns nil once total has elapsed since the call, or ctx.Err() if
// ctx ends first. Once the safety trip has fired it applies no more steps
// but still returns at total.
//
// Steps must be in time order, each with a profile and a phase in names;
// otherwise Play returns an error before applying any. It waits on Go
// timers (so testing/synctest can drive it). Scenario steps are not
// counted as profile reloads.
func (r *Relay) Play(ctx context.Context, names []string, steps []profiles.ScenarioStep, total time.Duration, onStep func(profiles.ScenarioStep)) error {
	for i, st := range steps {
		switch {
		case st.Profile == nil:
			return fmt.Errorf("scenario step %d (at %v): no profile", i, st.At)
		case st.Phase < 0 || st.Phase >= len(names):
			return fmt.Errorf("scenario step %d (at %v): phase %d, want 0 to %d", i, st.At, st.Phase, len(names)-1)
		case st.At < 0 || i > 0 && st.At < steps[i-1].At:
			return fmt.Errorf("scenario step %d: at %v, want a time ≥ 0 and ≥ the previous step's", i, st.At)
		case st.At > total:
			return fmt.Errorf("scenario step %d: at %v, after the scenario's end %v", i, st.At, total)
		}
	}
	start := time.Now()
	r.m.scenario.begin(start)
	defer func() { r.m.scenario.end(time.Now()) }()
	timer := time.NewTimer(time.Hour)
	defer timer.Stop()
	waitUntil := func(at time.Duration) error {
		timer.Reset(time.Until(start.Add(at)))
		select {
		case <-ctx.Done():
			return ctx.Err()
		case <-timer.C:
			return nil
		}
	}
	var shown prometheus.Gauge
	phase := -1
	for i, st := range steps {
		if err := waitUntil(st.At); err != nil {
			return err
		}
		if r.Tripped() {
			r.log.Warn("scenario steps ignored: the safety trip has fired", "step", i, "of", len(steps))
			break
		}
		if !r.apply(st.Profile, "scenario step") {
			break
		}
		if st.Phase != phase {
			if shown != nil {
				shown.Set(0)
			}
			phase = st.Phase
			shown = r.m.ScenarioPhase.WithLabelValues(strconv.Itoa(phase), names[phase])
			shown.Set(1)
			r.log.Info("scenario phase", "index", phase, "phase", names[phase], "at", st.At)
		}
		r.m.ScenarioSteps.Inc()
		if onStep != nil {
			onStep(st)
		}
	}
	return waitUntil(total)
}
