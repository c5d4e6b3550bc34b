package report

import (
	"encoding/json"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"text/tabwriter"

	"rigwire/estimate"
	"rigwire/estimate/engine"
	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// The prediction as monitor predict and monitor simulate print it: the
// text summary, the JSON object, the CSV of a --vary sweep, of a --step
// response and of simulated paths.

// jsonPrediction is monitor predict's --json output: the verdict, ρ with its error, the
// error moments and the loss margin first, then the details.
type jsonPrediction struct {
	MeanSquareStable  bool        `json:"mean_square_stable"`
	Stability         string      `json:"stability"`
	SpectralRadius    *float64    `json:"spectral_radius"`
	RadiusError       *float64    `json:"spectral_radius_error"`
	ErrorMean         []float64   `json:"error_mean"`
	ErrorSecondMoment *float64    `json:"error_second_moment"`
	ErrorStd          *float64    `json:"error_std"`
	LossMargin        *float64    `json:"loss_margin"`
	Period            float64     `json:"period_seconds"`
	Actuator          string      `json:"actuator_on_loss"`
	Timing            *jsonTiming `json:"timing"`
	States            []jsonState `json:"states"`
	// The almost-sure stability (estimate/model.md §16), when computed.
	AlmostSure *jsonAlmostSure `json:"almost_sure,omitempty"`
}

// jsonAlmostSure is the top Lyapunov exponent per period with its
// interval (null: −∞, the product reaches zero), the verdict and the
// loss margin.
type jsonAlmostSure struct {
	Stability  string   `json:"stability"`
	Exponent   *float64 `json:"lyapunov_exponent"`
	Low        *float64 `json:"lyapunov_ci_low"`
	High       *float64 `json:"lyapunov_ci_high"`
	Settles    bool     `json:"settles_exactly"`
	LossMargin *float64 `json:"loss_margin"`
	Steps      int      `json:"periods_simulated"`
}

// jsonTiming is the timing policy's part of the prediction
// (estimate/model.md §13).
type jsonTiming struct {
	SampleHorizon  int       `json:"sample_horizon_periods"`
	CommandHorizon int       `json:"command_horizon_periods"`
	Method         string    `json:"method"`
	Reason         string    `json:"method_reason,omitempty"`
	CommandAge     []float64 `json:"command_age_shares"`
	Stale          float64   `json:"command_stale_share"`
	StdErr         *float64  `json:"error_second_moment_standard_error,omitempty"`
}

type jsonState struct {
	Name        string   `json:"name"`
	Probability float64  `json:"probability"`
	LossSC      float64  `json:"loss_sensor_to_controller"`
	LossCA      float64  `json:"loss_controller_to_actuator"`
	PHeld       float64  `json:"p_sample_lost_or_stale"`
	PLate       float64  `json:"p_command_lost_or_late"`
	PInTime     float64  `json:"p_command_in_time"`
	MeanDelay   *float64 `json:"mean_delay_in_time_seconds"`
}

// finite is &v, or nil when v is NaN or infinite (null in JSON).
func finite(v float64) *float64 {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return nil
	}
	return &v
}

// WritePredictionJSON writes the prediction as one indented JSON object
// (monitor predict --json): the verdict, ρ with its error, the error
// moments and the loss margin first, then the details; a value that is
// not a number is null.
func WritePredictionJSON(w io.Writer, loop *profiles.Loop, pr *estimate.Prediction) error {
	out := jsonPrediction{
		MeanSquareStable: pr.MeanSquareStable,
		Stability:        estimate.VerdictOf(pr),
		SpectralRadius:   finite(pr.SpectralRadius),
		RadiusError:      finite(pr.RadiusError),
		LossMargin:       finite(pr.LossMargin),
		Period:           loop.Period,
		Actuator:         loop.Actuator.OnLoss.String(),
	}
	if tr := pr.Timing; tr != nil {
		out.Timing = &jsonTiming{SampleHorizon: tr.SampleHorizon, CommandHorizon: tr.CommandHorizon, Method: tr.Method,
			Reason: tr.Reason, CommandAge: tr.CommandAge, Stale: tr.Stale}
		if tr.Method == estimate.MethodMonteCarlo {
			out.Timing.StdErr = finite(tr.SecondMomentStdErr)
		}
	}
	if pr.Error != nil {
		out.ErrorMean = pr.Error.Mean
		out.ErrorSecondMoment = finite(pr.Error.SecondMoment)
		out.ErrorStd = finite(pr.Error.Std)
	}
	if a := pr.AlmostSure; a != nil {
		out.AlmostSure = &jsonAlmostSure{Stability: a.Stability, Exponent: finite(a.Exponent), Low: finite(a.Low), High: finite(a.High),
			Settles: math.IsInf(a.Exponent, -1), LossMargin: finite(a.LossMargin), Steps: a.Steps}
	}
	for _, s := range pr.States {
		out.States = append(out.States, jsonState{
			Name: s.Name, Probability: s.Probability, LossSC: s.LossSC, LossCA: s.LossCA,
			PHeld: s.P0, PLate: s.P1, PInTime: s.P2, MeanDelay: finite(s.MeanDelay),
		})
	}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(out)
}

// fmtDuration writes the times of the prediction: "0" for none, "-"
// for a mean delay that does not exist.
var fmtDuration = laws.Terse.Format

// WritePrediction writes the prediction as monitor predict prints it: the
// loop, the network, the verdict, the loss margin and the error moments,
// then a table of the joint network states.
func WritePrediction(w io.Writer, path string, loop *profiles.Loop, pr *estimate.Prediction) {
	n, m, p, nc := loop.Dims()
	fmt.Fprintf(w, "loop      %s\n", path)
	fmt.Fprintf(w, "          period %s, compute delay %s, %d plant states, %d inputs, %d outputs, %d controller states\n",
		fmtDuration(loop.Period), loop.ComputeText(), n, m, p, nc)
	name := loop.Profile.Name
	if name == "" {
		name = "(unnamed)"
	}
	fmt.Fprintf(w, "network   %s, %d joint states; actuator %s on loss\n", name, len(pr.States), loop.Actuator.OnLoss)
	writeTiming(w, pr.Timing)
	verdict := estimate.DescribeStability(pr)
	if estimate.VerdictOf(pr) == estimate.StabilityUnstable {
		verdict += ": the error's second moment grows without bound"
	}
	fmt.Fprintf(w, "verdict   %s\n", verdict)
	writeAlmostSure(w, pr)
	switch {
	case math.IsNaN(pr.LossMargin):
	case pr.LossMargin >= 1:
		fmt.Fprintf(w, "margin    stays stable for any extra loss below 1\n")
	case pr.LossMargin == 0:
		fmt.Fprintf(w, "margin    0: not stable already\n")
	default:
		fmt.Fprintf(w, "margin    stability is lost at an extra loss of %.4f on every packet of both directions\n", pr.LossMargin)
	}
	if e := pr.Error; e != nil {
		parts := make([]string, len(e.Mean))
		for i, v := range e.Mean {
			parts[i] = fmt.Sprintf("%.4g", v)
		}
		fmt.Fprintf(w, "error     E[e] = [%s]   E[eᵀe] = %.4g   std = %.4g\n", strings.Join(parts, ", "), e.SecondMoment, e.Std)
		if tr := pr.Timing; tr != nil && tr.Method == estimate.MethodMonteCarlo {
			fmt.Fprintf(w, "          a Monte Carlo estimate: E[eᵀe] ± %.2g (standard error), not the exact moments\n", tr.SecondMomentStdErr)
		}
		if ref := loop.Reference; ref.Sinusoidal() {
			fmt.Fprintf(w, "          %s: E[eᵀe] is averaged over its phase and frequencies (estimate/model.md §15), the settling left out\n", referenceKind(ref))
		}
	}
	for _, h := range pr.Harmonics {
		var parts []string
		for i := range h.Reference {
			if h.Reference[i] == 0 {
				continue
			}
			g, ph := estimate.Gain(h.Output[i], h.Reference[i])
			out := ""
			if len(h.Reference) > 1 {
				out = fmt.Sprintf(" y%d", i)
			}
			parts = append(parts, fmt.Sprintf("gain%s %.4g phase %.1f°", out, g, ph))
			if h.Nominal.Stable {
				ng, nph := estimate.Gain(h.Nominal.Output[i], h.Reference[i])
				parts[len(parts)-1] += fmt.Sprintf(" (loss-free %.4g, %.1f°)", ng, nph)
			}
		}
		fmt.Fprintf(w, "at %-6s %s; spread %.4g (peak %.4g), E[eᵀe] %.4g\n", strconv.FormatFloat(h.Frequency, 'g', 4, 64)+" Hz",
			strings.Join(parts, ", "), h.Spread, h.SpreadPeak, h.SecondMoment)
	}
	if tr := pr.Timing; tr != nil && len(tr.CommandAge) > 0 {
		parts := make([]string, 0, len(tr.CommandAge)+1)
		for d, a := range tr.CommandAge {
			unit := "periods"
			if d == 1 {
				unit = "period"
			}
			parts = append(parts, fmt.Sprintf("%d %s %.1f %%", d, unit, 100*a))
		}
		fmt.Fprintf(w, "command   the actuator ends a period on a command %s old; holds a stale one %.1f %%\n", strings.Join(parts, ", "), 100*tr.Stale)
	}
	fmt.Fprintln(w)
	tw := tabwriter.NewWriter(w, 2, 8, 2, ' ', 0)
	fmt.Fprintln(tw, "network state\tshare\tsample lost/stale\tcommand lost/late\tcommand in time\tmean delay in time")
	for _, s := range pr.States {
		fmt.Fprintf(tw, "%s\t%.4f\t%.4f\t%.4f\t%.4f\t%s\n", s.Name, s.Probability, s.P0, s.P1, s.P2, fmtDuration(s.MeanDelay))
	}
	tw.Flush()
}

// WritePredictionLine writes the prediction in one line, as monitor run
// and the in-process commands print it before they measure: E[eᵀe], the
// stability and the loss margin, or why there is nothing to compare with.
func WritePredictionLine(w io.Writer, pr *estimate.Prediction) {
	if !pr.MeanSquareStable || pr.Error == nil {
		fmt.Fprintf(w, "predicted: %s; no predicted E[eᵀe] to compare with\n", estimate.DescribeStability(pr))
		return
	}
	fmt.Fprintf(w, "predicted: E[eᵀe] = %.6g, %s", pr.Error.SecondMoment, estimate.DescribeStability(pr))
	if !math.IsNaN(pr.LossMargin) {
		fmt.Fprintf(w, ", loss margin %.4f", pr.LossMargin)
	}
	fmt.Fprintln(w)
}

// WriteSweepCSV writes a --vary sweep as CSV: the parameter's value,
// E[eᵀe] (empty where not mean-square stable), ρ, whether stable and the
// verdict, one row per point.
func WriteSweepCSV(w io.Writer, res *estimate.SweepResult) {
	fmt.Fprintf(w, "%s,error_second_moment,spectral_radius,mean_square_stable,stability\n", res.Param)
	for _, p := range res.Points {
		sm := ""
		if p.MeanSquareStable {
			sm = strconv.FormatFloat(p.SecondMoment, 'g', 8, 64)
		}
		fmt.Fprintf(w, "%s,%s,%s,%v,%s\n", strconv.FormatFloat(p.Value, 'g', 8, 64), sm,
			estimate.RhoText(p.SpectralRadius, 8), p.MeanSquareStable, pointStability(p))
	}
}

// WriteStepCSV writes a --step response as CSV: k, its time, each
// output's expected error, each output's std, and E[eᵀe].
func WriteStepCSV(w io.Writer, tr []estimate.Step, outputs int) {
	p := outputs
	hdr := []string{"k", "time_seconds"}
	for i := 0; i < p; i++ {
		hdr = append(hdr, fmt.Sprintf("error_mean_%d", i))
	}
	for i := 0; i < p; i++ {
		hdr = append(hdr, fmt.Sprintf("error_std_%d", i))
	}
	hdr = append(hdr, "error_second_moment")
	fmt.Fprintln(w, strings.Join(hdr, ","))
	for _, s := range tr {
		row := []string{strconv.Itoa(s.K), strconv.FormatFloat(s.Time, 'g', 8, 64)}
		for _, v := range s.Error.Mean {
			row = append(row, strconv.FormatFloat(v, 'g', 8, 64))
		}
		for _, v := range s.Error.OutputStd {
			row = append(row, strconv.FormatFloat(v, 'g', 8, 64))
		}
		row = append(row, strconv.FormatFloat(s.Error.SecondMoment, 'g', 8, 64))
		fmt.Fprintln(w, strings.Join(row, ","))
	}
}

// pointStability is the verdict of one point of a sweep.
func pointStability(p estimate.SweepPoint) string {
	if p.Stability != "" {
		return p.Stability
	}
	if p.MeanSquareStable {
		return estimate.StabilityStable
	}
	return estimate.StabilityUnstable
}

// Simulation is a Monte-Carlo run of the loop's jump system beside its
// prediction, as monitor simulate prints it.
type Simulation struct {
	Result                *estimate.SimResult
	Prediction            *estimate.Prediction
	Runs, Periods, Warmup int
	Seed                  uint64
	// Frequencies are, with a sinusoidal reference, the simulated samples
	// fitted per frequency as the monitor fits a rig's, beside the
	// prediction.
	Frequencies []engine.FrequencyResult
}

// WriteJSON writes the simulation as one indented JSON object.
func (s Simulation) WriteJSON(w io.Writer) error {
	out := map[string]any{
		"error_second_moment": s.Result.SecondMoment,
		"standard_error":      finite(s.Result.StdErr),
		"runs":                s.Runs,
		"periods":             s.Periods,
		"warmup":              s.Warmup,
		"seed":                s.Seed,
		"mode_counts":         s.Result.ModeCounts,
		"command_age_shares":  s.Result.CommandAge,
		"command_stale_share": s.Result.Stale,
		"stability":           estimate.VerdictOf(s.Prediction),
		"predicted_second_moment": func() *float64 {
			if s.Prediction.Error == nil {
				return nil
			}
			return &s.Prediction.Error.SecondMoment
		}(),
	}
	if s.Frequencies != nil {
		out["frequency_response"] = s.Frequencies
	}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(out)
}

// WriteText writes the simulation as lines of text: the runs, the
// measured E[eᵀe] with its standard error, the prediction and the shares
// of the three modes.
func (s Simulation) WriteText(w io.Writer) {
	fmt.Fprintf(w, "simulated  %d runs × %d periods (first %d of each discarded), seed %d\n", s.Runs, s.Periods, s.Warmup, s.Seed)
	fmt.Fprintf(w, "E[eᵀe]     %.6g ± %.2g (standard error across runs)\n", s.Result.SecondMoment, s.Result.StdErr)
	if s.Prediction.Error != nil {
		z := (s.Result.SecondMoment - s.Prediction.Error.SecondMoment) / s.Result.StdErr
		fmt.Fprintf(w, "predicted  %.6g (difference %.2f standard errors)\n", s.Prediction.Error.SecondMoment, z)
	} else {
		fmt.Fprintf(w, "predicted  %s: a finite-length average means little\n", estimate.DescribeStability(s.Prediction))
	}
	if total := float64(s.Result.ModeCounts[0] + s.Result.ModeCounts[1] + s.Result.ModeCounts[2]); total > 0 {
		fmt.Fprintf(w, "modes      sample lost/stale %.4f, command lost/late %.4f, in time %.4f\n",
			float64(s.Result.ModeCounts[0])/total, float64(s.Result.ModeCounts[1])/total, float64(s.Result.ModeCounts[2])/total)
	}
	if len(s.Result.CommandAge) > 0 {
		parts := make([]string, len(s.Result.CommandAge))
		for d, a := range s.Result.CommandAge {
			parts[d] = fmt.Sprintf("%d: %.4f", d, a)
		}
		line := fmt.Sprintf("command    age at a period's end %s, stale %.4f", strings.Join(parts, ", "), s.Result.Stale)
		if tr := s.Prediction.Timing; tr != nil && len(tr.CommandAge) == len(s.Result.CommandAge) {
			pp := make([]string, len(tr.CommandAge))
			for d, a := range tr.CommandAge {
				pp[d] = fmt.Sprintf("%.4f", a)
			}
			line += fmt.Sprintf(" (predicted %s, stale %.4f)", strings.Join(pp, ", "), tr.Stale)
		}
		fmt.Fprintln(w, line)
	}
	for _, l := range engine.FrequencyLines(s.Frequencies) {
		fmt.Fprintln(w, l)
	}
}

// WritePathsCSV writes the simulated sample paths as CSV: run, k, time,
// mode, network state, the delay (empty when none) and each output's
// error.
func WritePathsCSV(w io.Writer, loop *profiles.Loop, res *estimate.SimResult) error {
	hdr := []string{"run", "k", "time_seconds", "mode", "state", "delay_seconds"}
	for i := range loop.Setpoint {
		hdr = append(hdr, fmt.Sprintf("error_%d", i))
	}
	fmt.Fprintln(w, strings.Join(hdr, ","))
	for r, path := range res.Paths {
		for _, pt := range path {
			row := []string{strconv.Itoa(r), strconv.Itoa(pt.K), strconv.FormatFloat(float64(pt.K)*loop.Period, 'g', 8, 64),
				strconv.Itoa(pt.Mode), strconv.Itoa(pt.State), ""}
			if !math.IsNaN(pt.Tau) {
				row[5] = strconv.FormatFloat(pt.Tau, 'g', 8, 64)
			}
			for _, v := range pt.Error {
				row = append(row, strconv.FormatFloat(v, 'g', 8, 64))
			}
			if _, err := fmt.Fprintln(w, strings.Join(row, ",")); err != nil {
				return err
			}
		}
	}
	return nil
}

// writeTiming writes the timing policy's lines: the horizons when they are
// not the one-period rule, and the method when it is not exact
// (estimate/model.md §13).
func writeTiming(w io.Writer, tr *estimate.TimingReport) {
	if tr == nil || (tr.SampleHorizon <= 1 && tr.CommandHorizon <= 1 && tr.Method == estimate.MethodExact) {
		return
	}
	fmt.Fprintf(w, "timing    the controller uses samples younger than %d period(s), the actuator applies commands younger than %d period(s), newest first\n",
		tr.SampleHorizon, tr.CommandHorizon)
	if tr.Method == estimate.MethodMonteCarlo {
		fmt.Fprintf(w, "method    MONTE CARLO from the same rules, not the exact jump linear system: %s\n", tr.Reason)
	}
}

// referenceKind names a moving reference.
func referenceKind(r profiles.Reference) string {
	if r.Kind == profiles.ReferenceSweep {
		return fmt.Sprintf("the reference sweeps %d frequencies, each as long", len(r.Frequencies))
	}
	return "the reference is a sine"
}

// writeAlmostSure says the almost-sure stability, and what it means for a
// measurement when the loop is almost surely but not mean-square stable.
func writeAlmostSure(w io.Writer, pr *estimate.Prediction) {
	a := pr.AlmostSure
	if a == nil {
		return
	}
	margin := ""
	switch {
	case math.IsNaN(a.LossMargin):
	case a.LossMargin >= 1:
		margin = "; stays so for any extra loss below 1"
	case a.LossMargin > 0:
		margin = fmt.Sprintf("; lost at an extra loss of about %.2f", a.LossMargin)
	}
	switch {
	case math.IsInf(a.Exponent, -1):
		fmt.Fprintf(w, "          almost surely stable: the product of the loop's matrices reaches zero (every run settles exactly)%s\n", margin)
	default:
		what := map[string]string{estimate.StabilityStable: "almost surely stable", estimate.StabilityUnstable: "almost surely unstable",
			estimate.StabilityMarginal: "almost-sure stability cannot be told"}[a.Stability]
		fmt.Fprintf(w, "          %s: top Lyapunov exponent %.4g per period [%.4g, %.4g] (%d periods simulated)%s\n",
			what, a.Exponent, a.Low, a.High, a.Steps, margin)
	}
	if a.Stability == estimate.StabilityStable && !pr.MeanSquareStable {
		fmt.Fprintf(w, "          almost every run settles, but rare long outages make E[eᵀe] infinite: a measured second moment\n")
		fmt.Fprintf(w, "          does not converge (its running estimate jumps at each outage and its interval never closes);\n")
		fmt.Fprintf(w, "          judge such a loop on what a run shows (the error's quantiles, the time to settle), not on E[eᵀe]\n")
	}
}
