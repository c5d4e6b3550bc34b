package estimate

import (
	"errors"
	"fmt"
	"math"

	"rigwire/profiles"
	"rigwire/profiles/laws"
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
	// Harmonics are the periodic steady states at each frequency of a
	// sinusoidal reference (estimate/model.md §15), in the order of the
	// reference's frequencies; nil with a constant reference, when not
	// stable, or with a Monte Carlo prediction. With them, Error is the
	// average over the phase and over the frequencies (each dwell of a
	// sweep lasts as long): what a run that leaves out each dwell's
	// settling measures.
	Harmonics []Harmonic
	// AlmostSure is the almost-sure stability (estimate/model.md §16);
	// nil unless PredictOptions.AlmostSure asked for it, and for a Monte
	// Carlo prediction.
	AlmostSure *AlmostSure
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
	// hundred stability tests), and AlmostSure's too.
	SkipMargin bool
	// AlmostSure also estimates the top Lyapunov exponent
	// (estimate/model.md §16): a product of 200 000 periods, and a
	// hundred shorter ones for its margin.
	AlmostSure bool
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
	if errors.Is(err, ErrNoExactChain) {
		return predictByMonteCarlo(loop, opts.Options, err)
	}
	if err != nil {
		return nil, err
	}
	md.marginProgress = opts.MarginProgress
	pr, err := md.Predict(!opts.SkipMargin)
	if err != nil || !opts.AlmostSure {
		return pr, err
	}
	as, err := md.AlmostSure(!opts.SkipMargin)
	if err != nil {
		return nil, fmt.Errorf("almost-sure stability: %w", err)
	}
	pr.AlmostSure = &as
	return pr, nil
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
			if ref := md.Loop.Reference; ref.Sinusoidal() {
				hs, err := md.FrequencyResponse(ref, ref.Frequencies)
				if err != nil {
					return nil, fmt.Errorf("sinusoidal reference: %w", err)
				}
				pr.Harmonics = hs
				avg := averageHarmonics(hs)
				pr.Error = &avg
			}
		}
	}
	if margin {
		pr.LossMargin = md.LossMarginProgress(md.marginProgress)
	}
	return pr, nil
}

// The Monte Carlo a prediction falls back to (estimate/model.md §13): runs
// of mcPeriods periods after a warm-up of mcWarmup, seeded, so that the
// same loop always gets the same answer.
const (
	mcRuns, mcPeriods, mcWarmup = 10, 40000, 4000
	mcSeed                      = 1
	// mcSettled is the largest standard error, relative to the estimate,
	// at which the second moment counts as settled (stable by
	// simulation); beyond it the simulation cannot tell (marginal).
	mcSettled = 0.1
	// mcDiverged is the size of E[eᵀe] taken as growth without bound.
	mcDiverged = 1e100
)

// predictByMonteCarlo answers a loop that has no exact chain by simulating
// the same rules (Simulate): the steady error moments are the runs'
// averages, the stability verdict is the simulation's (not certified), and
// the spectral radius and the loss margin are not computed (NaN).
func predictByMonteCarlo(loop *profiles.Loop, opts Options, why error) (*Prediction, error) {
	ns, na := loop.Horizons()
	sim, err := Simulate(loop, SimOptions{Options: opts, Periods: mcPeriods, Warmup: mcWarmup, Runs: mcRuns, Seed: mcSeed})
	if err != nil {
		return nil, err
	}
	pr := &Prediction{LossMargin: math.NaN(), SpectralRadius: math.NaN(), RadiusError: math.NaN(),
		Timing: &TimingReport{SampleHorizon: ns, CommandHorizon: na, Method: MethodMonteCarlo, Reason: why.Error(),
			CommandAge: sim.CommandAge, Stale: sim.Stale, SecondMomentStdErr: sim.StdErr}}
	md, err := buildBase(loop, opts)
	if err != nil {
		return nil, err
	}
	for i, st := range md.baseStates() {
		st.Probability = md.Pi[i]
		pr.States = append(pr.States, st)
	}
	m, se := sim.SecondMoment, sim.StdErr
	switch {
	case math.IsNaN(m) || math.IsInf(m, 0) || m > mcDiverged || math.IsNaN(se):
		pr.Stability = StabilityUnstable
	case se > mcSettled*m:
		pr.Stability = StabilityMarginal
	default:
		pr.Stability, pr.MeanSquareStable = StabilityStable, true
		st := ErrorStats{Mean: sim.ErrorMean, SecondMoment: m, OutputStd: make([]float64, len(sim.ErrorMean))}
		sq := 0.0
		for j, e := range sim.ErrorMean {
			sq += e * e
			st.OutputStd[j] = math.Sqrt(math.Max(0, sim.ErrorSquare[j]-e*e))
		}
		st.Std = math.Sqrt(math.Max(0, m-sq))
		pr.Error = &st
	}
	return pr, nil
}

// baseStates describes each joint network state without the modes: its
// losses, P(m0) (the sample lost or too old for the controller), P(m2) (a
// used sample's command arriving within the command horizon, taking the
// sample's delay below the sample horizon; samples overtaken before the
// controller are not discounted) and the rest as P(m1).
func (md *Model) baseStates() []StateReport {
	loop, q := md.Loop, md.opts.ExtraLoss
	ns, na := loop.Horizons()
	h := loop.Period
	sc, ca := loop.Profile.SensorToController, loop.Profile.ControllerToActuator
	var out []StateReport
	for i, s := range sc.States {
		for j, a := range ca.States {
			dsc := scaleDelay(s.Delay, md.opts.DelayScale)
			st := StateReport{Name: stateName(sc, i) + "/" + stateName(ca, j), MeanDelay: math.NaN()}
			dca, cerr := md.commandLaw(j, a.Delay, float64(na)*h)
			st.LossSC, st.LossCA = s.Loss+(1-s.Loss)*q, a.Loss+(1-a.Loss)*q
			onTime := laws.ProbBelow(dsc, float64(ns)*h)
			st.P0 = 1 - (1-st.LossSC)*onTime
			if psc, err := splitLaw(dsc); err == nil && cerr == nil {
				if pca, err := splitLaw(dca); err == nil {
					tl := &totalLaw{sc: psc, ca: pca, h: float64(ns) * h, c: loop.ComputeFloor(), top: float64(na) * h, onTime: onTime, q: newTauIntegrator(1)}
					st.P2 = (1 - st.P0) * (1 - st.LossCA) * tl.cdf(float64(na)*h, true)
				}
			}
			st.P1 = math.Max(0, 1-st.P0-st.P2)
			out = append(out, st)
		}
	}
	return out
}

// averageHarmonics is the error's moments averaged over the phase and
// over the frequencies: E[e] the constant part, E[eᵀe] and the per-output
// variances their means.
func averageHarmonics(hs []Harmonic) ErrorStats {
	p := len(hs[0].ErrorOffset)
	st := ErrorStats{Mean: make([]float64, p), OutputStd: make([]float64, p)}
	n := float64(len(hs))
	sq := 0.0
	for _, h := range hs {
		st.SecondMoment += h.SecondMoment / n
		for i := 0; i < p; i++ {
			st.Mean[i] += h.ErrorOffset[i] / n
			st.OutputStd[i] += h.Variance[i] / n
		}
	}
	for i := 0; i < p; i++ {
		st.OutputStd[i] = math.Sqrt(st.OutputStd[i])
		sq += st.Mean[i] * st.Mean[i]
	}
	st.Std = math.Sqrt(math.Max(0, st.SecondMoment-sq))
	return st
}
