package engine

import (
	"fmt"
	"io"
	"time"

	"rigwire/estimate"
	"rigwire/profiles"
)

// PredictSteps computes the prediction each step of a scenario judges
// against: one per distinct profile the steps predict with (the relayed
// profile, or the phase's predict_with), without the loss margin. It
// writes how far it is to progress (at most once a second, and at the
// end of a long list), for a soak that predicts before it plays.
func PredictSteps(loop *profiles.Loop, steps []profiles.ScenarioStep, progress io.Writer) (map[*profiles.Profile]*estimate.Prediction, error) {
	preds := map[*profiles.Profile]*estimate.Prediction{}
	var todo []*profiles.Profile
	for _, st := range steps {
		if _, ok := preds[st.Predict]; !ok {
			preds[st.Predict] = nil
			todo = append(todo, st.Predict)
		}
	}
	last := time.Now()
	for i, p := range todo {
		l := *loop
		l.Profile, l.ProfileFile = p, ""
		pr, err := estimate.Predict(&l, estimate.PredictOptions{SkipMargin: true})
		if err != nil {
			return nil, fmt.Errorf("%s: prediction for step %d of the scenario: %w", loop.File, i+1, err)
		}
		preds[p] = pr
		if time.Since(last) > time.Second || i+1 == len(todo) && len(todo) > 20 {
			fmt.Fprintf(progress, "predicting: %d of %d scenario steps\n", i+1, len(todo))
			last = time.Now()
		}
	}
	return preds, nil
}

// StepFunc is the callback a relay playing sc calls at each of its steps
// (emulate.Relay.Play): at a phase's first step it calls atPhase (when
// not nil) with the phase's index, then closes the running phase and
// starts that one with its prediction from preds, its settling time and
// its check; at a later step of a ramp it puts the step's prediction in
// force.
func (m *Monitor) StepFunc(sc *profiles.Scenario, preds map[*profiles.Profile]*estimate.Prediction, atPhase func(k int)) func(profiles.ScenarioStep) {
	return func(st profiles.ScenarioStep) {
		if st.Frac != 0 {
			m.UpdatePrediction(preds[st.Predict])
			return
		}
		ph := sc.Phases[st.Phase]
		if atPhase != nil {
			atPhase(st.Phase)
		}
		m.StartPhase(st.Phase, ph.Name, preds[st.Predict], ph.Settle, ph.Check)
	}
}
