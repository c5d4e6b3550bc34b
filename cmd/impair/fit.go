package main

import (
	"bytes"
	"fmt"
	"io"
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
	case profiles.SensorToController, profiles.ControllerToActuator, fit.BothDirections:
	default:
		return cli.Usagef("--direction: want sensor_to_controller, controller_to_actuator or both, got %q", f.direction)
	}
	tr, err := trace.LoadTrace(paths[0])
	if err != nil {
		return cli.BadInput(err)
	}
	which := fit.RoundTrip
	switch {
	case f.oneWay && !tr.ClocksSynced:
		return cli.Usagef("%s: --one-way: the trace does not declare synchronised clocks (clocks_synced: true); use --halve-rtt or --round-trip", tr.File)
	case f.oneWay:
		which = fit.OneWay
	case f.halve:
		which = fit.HalfRTT
	}
	res, err := fit.Trace(tr, which)
	if err != nil {
		return cli.BadInput(err)
	}
	name := f.name
	if name == "" {
		name = "fitted-" + strings.TrimSuffix(filepath.Base(tr.File), filepath.Ext(tr.File))
	}
	var yaml bytes.Buffer
	if err := profiles.Write(&yaml, res.Draft(name, f.direction)); err != nil {
		return fmt.Errorf("the fitted profile cannot be written (a bug): %w", err)
	}
	fitted, err := profiles.Parse(yaml.Bytes(), "fitted profile", "")
	if err != nil {
		return fmt.Errorf("the fitted profile does not load (a bug): %w", err)
	}
	res.WriteReport(stdout)
	if f.out != "" {
		if err := os.WriteFile(f.out, yaml.Bytes(), 0o644); err != nil {
			return fmt.Errorf("writing profile: %w", err)
		}
		fmt.Fprintf(stdout, "\nprofile written to %s\n", f.out)
	} else {
		fmt.Fprintf(stdout, "\n%s", yaml.String())
	}
	if f.loop != "" {
		return printLoopPrediction(stdout, f.loop, fitted)
	}
	return nil
}

// printLoopPrediction prints the loop's prediction under its own profile
// and under the fitted one. The loop file and the predictions are input:
// their errors are bad input (cli.InputError).
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
			m = strconv.FormatFloat(x.p.Error.SecondMoment, 'g', 6, 64)
		}
		v := estimate.VerdictOf(x.p)
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\n", x.name, v, estimate.RadiusText(x.p.SpectralRadius, x.p.RadiusError, v), m)
	}
	return tw.Flush()
}
