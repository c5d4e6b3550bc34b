package profiles

import (
	"fmt"
	"time"
)

// Scenario is a validated scenario file: a base profile and a sequence of
// phases the relay applies one after the other (LoadScenario builds it).
type Scenario struct {
	// File is the path the scenario was read from.
	File string
	Name string
	// Base is the profile phases without their own profile start from.
	Base *Profile
	// Settle is the default time after each phase change that the monitor
	// does not judge (key settle; default 0).
	Settle time.Duration
	// RampStep is how often a ramp's value is re-applied (key ramp_step;
	// default 1s).
	RampStep time.Duration
	Phases   []Phase

	src []phaseSource // per phase: its profile's tree and overrides
}

// Phase is one phase of a scenario.
type Phase struct {
	Index    int // 0-based position in Scenario.Phases
	Name     string
	Line     int // line of the phase in the scenario file
	Duration time.Duration
	// Settle is this phase's settling time (the scenario's unless set).
	Settle time.Duration
	// Ramps change numeric profile parameters linearly from From (at the
	// phase start) to To (at its end).
	Ramps []Ramp
	Check Check
	// HasPredictWith is true when the phase predicts with a profile other
	// than the one the relay applies (key predict_with).
	HasPredictWith bool
	// FrequencyLine is the line of the phase's key frequency
	// (Check.Frequency).
	FrequencyLine int
}

// ReferenceSegment returns the index of f among the loop's reference
// frequencies (to 1e-9 relative), or −1.
func (l *Loop) ReferenceSegment(f float64) int {
	if !l.Reference.Sinusoidal() {
		return -1
	}
	for i, g := range l.Reference.Frequencies {
		if d := f - g; d <= 1e-9*g && d >= -1e-9*g {
			return i
		}
	}
	return -1
}

// CheckFrequencies checks that every phase's frequency is one of the
// loop's reference frequencies; the error names the scenario file, the
// line and the key.
func (s *Scenario) CheckFrequencies(l *Loop) error {
	for _, ph := range s.Phases {
		if ph.Check.Frequency == 0 || l.ReferenceSegment(ph.Check.Frequency) >= 0 {
			continue
		}
		if !l.Reference.Sinusoidal() {
			return fmt.Errorf("%s:%d: phases[%d].frequency: the loop %s has no sinusoidal reference (key reference) to judge a frequency of, got %g Hz",
				s.File, ph.FrequencyLine, ph.Index, l.File, ph.Check.Frequency)
		}
		return fmt.Errorf("%s:%d: phases[%d].frequency: want one of the loop's reference frequencies %v Hz, got %g Hz",
			s.File, ph.FrequencyLine, ph.Index, l.Reference.Frequencies, ph.Check.Frequency)
	}
	return nil
}

// Ramp is one linearly ramped parameter: Key is its dotted path in the
// profile ("sensor_to_controller.loss",
// "controller_to_actuator.states.fading.mean_dwell",
// "sensor_to_controller.delay.median"); values are seconds for durations.
type Ramp struct {
	Key      string
	From, To float64
	Line     int
}

// Check is a phase's criterion, judged by the monitor on the phase's
// samples after its settling time. With Tolerance set the phase passes
// when the prediction lies in the measured interval widened by Tolerance
// of its bounds (the monitor's verdict "agree") and fails when it lies
// outside; with MaxSecondMoment set it passes when the whole measured
// interval of E[eᵀe] lies at or below the bound and fails when the whole
// interval lies above it; with both, both must pass. Whenever the data
// cannot tell — fewer than MinSamples judged samples (default
// DefaultMinSamples, 400), batch means still correlated, an interval too
// wide to confirm agreement or straddling the bound — the phase is
// inconclusive rather than passed. A phase with neither criterion is not
// judged (it passes). A bound met while the prediction lies outside the
// measured interval passes with a warning.
type Check struct {
	Tolerance       *float64
	MaxSecondMoment *float64
	MinSamples      int
	// Frequency (Hz; the phase's key frequency, 0: none) makes the phase
	// judge only the samples taken while the loop's sinusoidal reference
	// is at that frequency, against the prediction at it
	// (estimate/model.md §15), and adds the gain, phase and spread at it
	// to the tolerance's rule; it must be one of the reference's
	// frequencies (Scenario.CheckFrequencies).
	Frequency float64
}

// ScenarioStep is one change the relay makes while playing a scenario:
// at At after the scenario's start it applies Profile; the monitor
// predicts with Predict (Profile unless the phase says predict_with).
// Steps are in time order; each phase starts with a step with Frac 0, and
// a ramp adds one step every RampStep with Frac the fraction of the phase
// elapsed. The last step of the list is followed by the end of the
// scenario at Scenario.Total().
type ScenarioStep struct {
	At      time.Duration
	Phase   int
	Frac    float64
	Profile *Profile
	Predict *Profile
}
