package main

import (
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"text/tabwriter"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/exitcode"
	"rigwire/estimate"
	"rigwire/estimate/fit"
	"rigwire/profiles"
	"rigwire/profiles/trace"
)

const fitUsage = `usage: impair fit TRACE (--one-way | --halve-rtt | --round-trip)
                  [--direction sensor_to_controller|controller_to_actuator|both]
                  [--out PROFILE.yaml] [--name NAME] [--loop LOOP.yaml]

Fits a network profile to a probe trace (as written by impair probe) and
prints the fit.

Delays: each of exponential, gamma, lognormal, weibull (with a shift) and
normal is fitted by maximum likelihood (the shift by profile likelihood,
just below the smallest delay at most); the kind with the smallest AIC is
chosen. Each candidate is shown with its Kolmogorov–Smirnov statistic and
p-value; the parameters were estimated from the same sample, so these
p-values are conservative (too large: the Lilliefors effect). Standard
errors come from the observed Fisher information.

Losses: i.i.d. loss against the simplified Gilbert channel (a good state
that delivers, a bad state that loses; p = P(lost | previous delivered),
r = P(delivered | previous lost), from the transition counts), chosen by
AIC, with the likelihood-ratio test, the mean burst length and the long-run
loss. A burst channel becomes a two-state states: profile whose mean dwells
reproduce p and r exactly at the trace's probe interval.

Which delay is fitted must be said: --one-way uses one_way_s (the probe
and the echo had synchronised clocks), --halve-rtt uses half of each round
trip (assumes symmetric paths), --round-trip the whole round trip as one
direction's delay. The fitted channel goes to --direction (default
sensor_to_controller; the other direction is left clean; both puts it on
both). Losses are those of the whole round trip unless --one-way.

--out writes the profile (default: print it). --loop also prints the
prediction (monitor predict's figures) of that loop under the fitted
profile, beside the one under the loop's own profile.
`

var fitExits = exitcode.Help(cli.PlainStatuses, map[int]string{
	exitcode.OK:       "fitted (the profile was printed or written)",
	exitcode.Failure:  "error while running (the profile file could not be written)",
	exitcode.BadInput: "bad usage, a trace or loop file that does not load or validate (the message names file, line and key), or a trace that cannot be fitted (too few delivered probes)",
})

type fitFlags struct {
	oneWay, halve, roundTrip bool
	direction                string
	out, name, loop          string
}

// cmdFit is `impair fit`.
func cmdFit(args []string, stdout, stderr io.Writer) error {
	fs := cli.NewFlags("impair fit", fitUsage, fitExits)
	var f fitFlags
	fs.BoolVar(&f.oneWay, "one-way", false, "fit the one-way delays (one_way_s)")
	fs.BoolVar(&f.halve, "halve-rtt", false, "fit half of each round trip")
	fs.BoolVar(&f.roundTrip, "round-trip", false, "fit the whole round trip as one direction's delay")
	fs.StringVar(&f.direction, "direction", profiles.SensorToController, "direction the fitted channel goes to")
	fs.StringVar(&f.out, "out", "", "write the profile to `FILE`")
	fs.StringVar(&f.name, "name", "", "the profile's name (default: fitted-<trace>)")
	fs.StringVar(&f.loop, "loop", "", "also predict the loop `FILE` under the fitted profile")
	paths, err := fs.ParseInterspersed(args)
	if err != nil {
		return err
	}
	if len(paths) != 1 {
		return cli.Usagef("want one trace file, got %d", len(paths))
	}
	n := 0
	for _, b := range []bool{f.oneWay, f.halve, f.roundTrip} {
		if b {
			n++
		}
	}
	if n != 1 {
		return cli.Usagef("want exactly one of --one-way, --halve-rtt, --round-trip (a round trip is halved only when you say so), got %d", n)
	}
	switch f.direction {
	case profiles.SensorToController, profiles.ControllerToActuator, "both":
	default:
		return cli.Usagef("--direction: want sensor_to_controller, controller_to_actuator or both, got %q", f.direction)
	}
	tr, err := trace.LoadTrace(paths[0])
	if err != nil {
		return cli.BadInput(err)
	}
	res, err := fitTrace(tr, f)
	if err != nil {
		return err
	}
	printFit(stdout, res)
	if f.out != "" {
		if err := os.WriteFile(f.out, []byte(res.yaml), 0o644); err != nil {
			return fmt.Errorf("writing profile: %w", err)
		}
		fmt.Fprintf(stdout, "\nprofile written to %s\n", f.out)
	} else {
		fmt.Fprintf(stdout, "\n%s", res.yaml)
	}
	if f.loop != "" {
		return printLoopPrediction(stdout, f.loop, res.profile)
	}
	return nil
}

// fitResult is what fitTrace found.
type fitResult struct {
	trace    *trace.Trace
	column   string
	what     string // what the delays are
	interval float64
	delays   []fit.DelayFit
	loss     fit.LossFit
	dwellOK  bool
	good     float64 // mean dwells of the burst channel, seconds
	bad      float64
	yaml     string
	profile  *profiles.Profile
}

// fitTrace fits the trace; an error is of the input (cli.UsageError,
// cli.InputError: a trace that cannot be fitted) unless the fitted profile
// does not load, which is a bug.
func fitTrace(tr *trace.Trace, f fitFlags) (*fitResult, error) {
	r := &fitResult{trace: tr}
	scale := 1.0
	switch {
	case f.oneWay:
		r.column, r.what = "one_way_s", "one-way delay"
		if !tr.ClocksSynced {
			return nil, cli.Usagef("%s: --one-way: the trace does not declare synchronised clocks (clocks_synced: true); use --halve-rtt or --round-trip", tr.File)
		}
	case f.halve:
		r.column, r.what, scale = "rtt_s", "half the round trip", 0.5
	default:
		r.column, r.what = "rtt_s", "round trip"
	}
	delays, lost, err := tr.Fates(r.column)
	if err != nil {
		return nil, cli.BadInput(err)
	}
	var kept []float64
	for i, l := range lost {
		if !l {
			kept = append(kept, scale*delays[i])
		}
	}
	if len(kept) < fit.MinFitSamples {
		return nil, cli.BadInput(fmt.Errorf("%s: %d delivered probes, want at least %d to fit delays", tr.File, len(kept), fit.MinFitSamples))
	}
	if r.delays, err = fit.Delays(kept); err != nil {
		return nil, cli.BadInput(fmt.Errorf("%s: %w", tr.File, err))
	}
	if r.loss, err = fit.Loss(lost); err != nil {
		return nil, cli.BadInput(fmt.Errorf("%s: %w", tr.File, err))
	}
	r.interval = tr.ProbeInterval()
	if r.loss.Burst && r.interval > 0 {
		if r.good, r.bad, err = r.loss.Dwell(r.interval); err == nil {
			r.dwellOK = true
		}
	}
	name := f.name
	if name == "" {
		name = "fitted-" + strings.TrimSuffix(filepath.Base(tr.File), filepath.Ext(tr.File))
	}
	r.yaml = r.profileYAML(name, f.direction)
	r.profile, err = profiles.Parse([]byte(r.yaml), "fitted profile", "")
	if err != nil {
		return nil, fmt.Errorf("the fitted profile does not load (a bug): %w", err)
	}
	return r, nil
}

// num writes a number with 6 significant digits.
func num(x float64) string { return strconv.FormatFloat(x, 'g', 6, 64) }

// delayYAML is a fitted law as a profile delay mapping (times in
// seconds).
func delayYAML(d fit.DelayFit) string {
	var b strings.Builder
	fmt.Fprintf(&b, "{kind: %s", d.Kind)
	for i, n := range d.Names {
		fmt.Fprintf(&b, ", %s: %s", n, num(d.Params[i]))
	}
	b.WriteString("}")
	return b.String()
}

func (r *fitResult) profileYAML(name, direction string) string {
	var b strings.Builder
	best := r.delays[0]
	fmt.Fprintf(&b, "# fitted by impair fit from %s: %d probes, %s, probe interval %s s\n", filepath.Base(r.trace.File), r.loss.N, r.what, num(r.interval))
	fmt.Fprintf(&b, "# delay: %s chosen by AIC; KS D = %.4f, p = %.3g (conservative: parameters estimated)\n", best.Kind, best.KS, best.KSP)
	if r.dwellOK {
		fmt.Fprintf(&b, "# loss: simplified Gilbert channel, p = %.4g, r = %.4g per probe; long-run loss %.4g, mean burst %.3g probes\n", r.loss.P, r.loss.R, r.loss.LongRunLoss, r.loss.MeanBurst)
	} else {
		fmt.Fprintf(&b, "# loss: i.i.d., %.4g\n", r.loss.Loss)
	}
	b.WriteString("# times in seconds\n")
	fmt.Fprintf(&b, "name: %s\n", strconv.Quote(name))
	var ch strings.Builder
	if r.dwellOK {
		ch.WriteString("  states:\n")
		fmt.Fprintf(&ch, "    - {name: good, mean_dwell: %s, loss: 0, delay: %s}\n", num(r.good), delayYAML(best))
		fmt.Fprintf(&ch, "    - {name: burst, mean_dwell: %s, loss: 1, delay: %s}\n", num(r.bad), delayYAML(best))
	} else {
		fmt.Fprintf(&ch, "  loss: %s\n  delay: %s\n", num(r.loss.Loss), delayYAML(best))
	}
	for _, dir := range []string{profiles.SensorToController, profiles.ControllerToActuator} {
		if direction == dir || direction == "both" {
			fmt.Fprintf(&b, "%s:\n%s", dir, ch.String())
		}
	}
	return b.String()
}

func printFit(w io.Writer, r *fitResult) {
	fmt.Fprintf(w, "trace %s: %d probes, %d lost, probe interval %s s\n", r.trace.File, r.loss.N, r.loss.Lost, num(r.interval))
	fmt.Fprintf(w, "\ndelays: %s (%s), %d samples; maximum likelihood, chosen by AIC = 2k − 2 ln L\n", r.what, r.column, r.loss.N-r.loss.Lost)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "kind\tparameters (± standard error)\tln L\tAIC\tΔAIC\tKS D\tKS p")
	for _, d := range r.delays {
		var ps []string
		for i, n := range d.Names {
			s := n + " " + num(d.Params[i])
			if !math.IsNaN(d.StdErr[i]) {
				s += " ± " + strconv.FormatFloat(d.StdErr[i], 'g', 2, 64)
			} else if n == "shift" {
				s += " (at its bound)"
			}
			ps = append(ps, s)
		}
		fmt.Fprintf(tw, "%s\t%s\t%.1f\t%.1f\t%.1f\t%.4f\t%.3g\n", d.Kind, strings.Join(ps, ", "), d.LogLik, d.AIC, d.AIC-r.delays[0].AIC, d.KS, d.KSP)
	}
	tw.Flush()
	fmt.Fprintln(w, "(KS p-values are conservative: the parameters were estimated from the same sample — Lilliefors)")
	l := r.loss
	fmt.Fprintf(w, "\nlosses: %d of %d probes in %d runs\n", l.Lost, l.N, l.Runs)
	if l.Lost == 0 {
		// A binomial standard error is 0 with no losses, which claims too
		// much: give the one-sided 95 % upper bound instead, −ln(0.05)/N ≈
		// 3/N (the "rule of three", Hanley and Lippman-Hand, JAMA 249(13),
		// 1983, from memory).
		fmt.Fprintf(w, "  i.i.d.:                 loss 0 (none in %d probes; 95 %% upper bound %.2g, the rule of three)   AIC %.1f\n", l.N, -math.Log(0.05)/float64(l.N), l.AICIID)
		fmt.Fprintf(w, "  simplified Gilbert:     p 0, r not identifiable (no losses)   AIC %.1f\n", l.AICBurst)
		fmt.Fprintln(w, "  chosen: i.i.d.; no losses in the trace (long-run loss 0)")
		return
	}
	fmt.Fprintf(w, "  i.i.d.:                 loss %s                          AIC %.1f\n", plusMinus(l.Loss, l.LossSE), l.AICIID)
	// r = P(delivered | previous lost) needs a lost probe followed by
	// another probe; without one (no losses, or only the last probe lost)
	// the trace says nothing about it.
	rs := "r " + plusMinus(l.R, l.RSE)
	if math.IsNaN(l.RSE) {
		rs = "r not identifiable (no lost probe is followed by another)"
	}
	fmt.Fprintf(w, "  simplified Gilbert:     p %s, %s   AIC %.1f\n", plusMinus(l.P, l.PSE), rs, l.AICBurst)
	fmt.Fprintf(w, "  likelihood ratio %.2f, p-value %.3g (χ², 1 degree of freedom)\n", l.LR, l.LRP)
	if l.Burst {
		fmt.Fprintf(w, "  chosen: burst channel; long-run loss %.4g, mean burst %.3g probes", l.LongRunLoss, l.MeanBurst)
		if r.dwellOK {
			fmt.Fprintf(w, "; mean dwell good %s s, burst %s s", num(r.good), num(r.bad))
		}
		fmt.Fprintln(w)
	} else {
		fmt.Fprintf(w, "  chosen: i.i.d.; long-run loss %.4g, mean burst %.3g probes\n", l.LongRunLoss, l.MeanBurst)
	}
}

// plusMinus writes an estimate with its standard error, or the estimate
// alone when the error is not defined.
func plusMinus(v, se float64) string {
	if math.IsNaN(se) || math.IsInf(se, 0) {
		return strconv.FormatFloat(v, 'g', 4, 64) + " (no standard error)"
	}
	return strconv.FormatFloat(v, 'g', 4, 64) + " ± " + strconv.FormatFloat(se, 'g', 2, 64)
}

// printLoopPrediction prints the loop's prediction under its own profile
// and under the fitted one. The loop file and the predictions are input:
// their errors are inputErrors.
func printLoopPrediction(w io.Writer, path string, fitted *profiles.Profile) error {
	loop, err := profiles.LoadLoop(path)
	if err != nil {
		return cli.BadInput(err)
	}
	own, err := estimate.Predict(loop, estimate.PredictOptions{SkipMargin: true})
	if err != nil {
		return cli.BadInput(fmt.Errorf("%s: predicting: %w", path, err))
	}
	fl := *loop
	fl.Profile = fitted
	underFit, err := estimate.Predict(&fl, estimate.PredictOptions{SkipMargin: true})
	if err != nil {
		return cli.BadInput(fmt.Errorf("%s: predicting under the fitted profile: %w", path, err))
	}
	fmt.Fprintf(w, "\nprediction for %s\n", path)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "profile\tmean-square stability\tspectral radius\tE[eᵀe]")
	for _, x := range []struct {
		name string
		p    *estimate.Prediction
	}{{"the loop's own", own}, {"fitted", underFit}} {
		m := "—"
		if x.p.Error != nil {
			m = num(x.p.Error.SecondMoment)
		}
		v := estimate.VerdictOf(x.p)
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\n", x.name, v, estimate.RadiusText(x.p.SpectralRadius, x.p.RadiusError, v), m)
	}
	return tw.Flush()
}
