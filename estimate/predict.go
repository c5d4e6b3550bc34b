package estimate

import (
	"errors"
	"math"

	"rigwire/profiles"
)

// Prediction is what theory says of a loop over its network (package
// doc, "What a prediction reports"). An unstable loop is a result: MeanSquareStable false, Error nil.
type Prediction struct {
	// MeanSquareStable is Stability == StabilityStable: the loop is
	// certified mean-square stable.
	MeanSquareStable bool
	// Stability is the verdict: StabilityStable, StabilityMarginal (ρ is
	// within its numerical error of 1: the computation cannot tell) or
	// StabilityUnstable.
	Stability string
	// SpectralRadius is ρ of the second-moment operator; the true value
	// lies within SpectralRadius ± RadiusError.
	SpectralRadius float64
	RadiusError    float64
	// Error holds the steady error moments; nil when not mean-square
	// stable.
	Error *ErrorStats
	// LossMargin is the extra loss at which stability is lost, in [0, 1];
	// NaN when not computed.
	LossMargin float64
	// States describes each joint network state (stationary probability,
	// losses, mode probabilities).
	States []StateReport
	// Moments are the steady state moments; nil when not stable.
	Moments *Moments
	// Timing is what the loop's timing policy does (estimate/model.md
	// §13): the horizons, how the prediction was computed and how old the
	// command the actuator runs on is. Never nil.
	Timing *TimingReport
}

// Prediction methods (TimingReport.Method).
const (
	// MethodExact: the moments of the jump linear system, exact up to
	// quadrature (estimate/model.md §4, §13).
	MethodExact = "exact"
	// MethodMonteCarlo: the exact chain is too large (estimate/model.md
	// §13); the moments are a seeded Monte Carlo estimate from the same
	// rules, with their standard error, and stability is not certified.
	MethodMonteCarlo = "monte_carlo"
)

// TimingReport is what the timing policy does to the loop
// (estimate/model.md §13).
type TimingReport struct {
	// SampleHorizon and CommandHorizon are the policy's horizons in
	// periods (1 and 1 for the rule of estimate/model.md §1).
	SampleHorizon, CommandHorizon int
	// Method is MethodExact or MethodMonteCarlo.
	Method string
	// Reason says why the method is Monte Carlo ("" when exact).
	Reason string
	// CommandAge[d], d = 0 … CommandHorizon−1, is the stationary share of
	// periods that end with the actuator running on a command whose
	// sample was taken d periods before the period began (0: this
	// period's own sample).
	CommandAge []float64
	// Stale is the share of periods that end with the actuator holding a
	// command CommandHorizon periods old or more (no fresher one arrived
	// within the horizon). Stale + Σ CommandAge = 1.
	Stale float64
	// SecondMomentStdErr is the Monte Carlo standard error of
	// Error.SecondMoment (0 when the method is exact).
	SecondMomentStdErr float64
}

// StateReport describes one joint network state of the prediction.
type StateReport struct {
	Name        string  // "sensor-state/command-state"
	Probability float64 // stationary probability
	LossSC      float64 // loss probability, sensor direction (extra loss included)
	LossCA      float64 // loss probability, command direction
	// Mode probabilities: sample lost or stale, command lost or late,
	// delivered in time (estimate/model.md §1).
	P0, P1, P2 float64
	// MeanDelay is E[τ | m2] in seconds (total delay of a delivered
	// command), NaN when P2 = 0.
	MeanDelay float64
}

// Stability verdicts.
const (
	// StabilityStable: ρ < 1, certified (a positive definite solution of
	// the Lyapunov-type equation at 1 was found and checked).
	StabilityStable = "stable"
	// StabilityMarginal: ρ is within its numerical error of 1; the loop
	// is not called stable.
	StabilityMarginal = "marginal"
	// StabilityUnstable: ρ ≥ 1.
	StabilityUnstable = "unstable"
)

// PredictOptions selects what Predict computes beyond stability and the
// steady moments.
type PredictOptions struct {
	Options
	// SkipMargin leaves LossMargin NaN (the margin costs up to about a
	// hundred stability tests).
	SkipMargin bool
	// MarginProgress, when set, is called as the loss margin's scan
	// advances (see Model.LossMarginProgress).
	MarginProgress func(q float64)
}

// Predict computes the prediction of estimate/model.md §7 for a validated loop:
// it builds the jump linear system, decides mean-square stability,
// computes ρ, the steady error moments when stable, and the loss margin.
// This is what the monitor calls.
func Predict(loop *profiles.Loop, opts PredictOptions) (*Prediction, error) {
	md, err := Build(loop, opts.Options)
	if err != nil {
		return nil, err
	}
	md.marginProgress = opts.MarginProgress
	return md.Predict(!opts.SkipMargin)
}

// Predict is Predict for a model already built.
func (md *Model) Predict(margin bool) (*Prediction, error) {
	pr := &Prediction{LossMargin: math.NaN(), Timing: md.timingReport()}
	rad := md.Radius()
	pr.SpectralRadius, pr.RadiusError, pr.Stability = rad.Value, rad.Error, rad.Stability
	pr.MeanSquareStable = rad.Stability == StabilityStable
	for i, js := range md.States {
		pr.States = append(pr.States, StateReport{
			Name: js.Name, Probability: md.stateProb(i), LossSC: js.LossSC, LossCA: js.LossCA,
			P0: js.P0, P1: js.P1, P2: js.P2, MeanDelay: js.MeanDelayM2,
		})
	}
	if pr.MeanSquareStable {
		mo, err := md.Steady()
		switch {
		case errors.Is(err, ErrNotStable):
			// The radius said stable, the test at 1 on its own could not
			// confirm it: call it marginal rather than contradict.
			pr.MeanSquareStable, pr.Stability = false, StabilityMarginal
		case err != nil:
			return nil, err
		default:
			st := md.Error(mo)
			pr.Error, pr.Moments = &st, mo
		}
	}
	if margin {
		pr.LossMargin = md.LossMarginProgress(md.marginProgress)
	}
	return pr, nil
}
