package main

import (
	"fmt"
	"io"
	"math"
	"time"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/exitcode"
	"rigwire/estimate"
	"rigwire/estimate/report"
	"rigwire/profiles"
)

const predictHead = `usage: monitor predict LOOP.yaml [--json] [--strict] [--no-margin]
       monitor predict LOOP.yaml --vary loss=START:STOP:STEP | delay_scale=START:STOP:STEP [--plot FILE]
       monitor predict LOOP.yaml --step N [--step-to R1,R2,…] [--plot FILE]
       monitor predict LOOP.yaml --frequency F1,F2,… | FROM:TO:N | reference [--amplitude A1,…] [--json] [--plot FILE]
       monitor predict LOOP.yaml --gain NAME=START:STOP:N [--gain NAME=START:STOP:N] [--plot FILE]

Predicts what theory says of the loop over its network profile: whether it
is mean-square stable (the spectral radius of the second-moment operator,
with its numerical error, against 1), the steady mean and second moment of
the tracking error e = setpoint − y, the extra loss at which stability is
lost, and each joint network state's share and mode probabilities. A
spectral radius that cannot be told apart from 1 at the accuracy of the
computation is reported as marginal and treated as not stable.

--vary prints a CSV of the prediction over a grid of one parameter;
--step the expected error and its std for N periods after a setpoint step
from rest; --frequency, for a sinusoidal reference at each frequency, the
mean response's gain and phase (setpoint to output and to error) and the
error's variance averaged over the phase and at its peak, beside the
loss-free, delay-free loop's (estimate/model.md §15); --gain the
spectral radius and E[eᵀe] over a grid of one or two controller gains
(scale, a factor on the controller's output, an entry such as d[0][0], or
a PID gain kp, ki, kd, filter),
with the mean-square stable interval of one gain beside the loss-free
one and the best point (§17). Also printed: the top Lyapunov exponent,
almost-sure stability and its loss margin (§16). Without --strict
the command exits 0 whatever the verdict.

The model is estimate/model.md: the rig's timing and the three modes §1, the
network §2, the jump system §3, moments and stability §4 and §6, what is
reported §7, the loss margin §8. The loop file's keys: profiles/formats.md.
`

// predictExits are the statuses predict returns.
var predictExits = exitcode.Help(
	[]int{exitcode.OK, exitcode.Failure, exitcode.BadInput, exitcode.Inconclusive, exitcode.NotStable},
	map[int]string{
		exitcode.OK:           "the prediction was printed (with --strict: and the loop is mean-square stable)",
		exitcode.Failure:      "error while running (a plot that could not be written)",
		exitcode.BadInput:     "bad usage, a loop or profile file that does not load or validate (the message names file, line and key), or a loop the prediction cannot use",
		exitcode.Inconclusive: "with --strict: marginal, the spectral radius cannot be told apart from 1",
		exitcode.NotStable:    "with --strict, or --frequency: the loop is not mean-square stable (--frequency: it has no periodic steady state to give)",
	})

func cmdPredict(args []string, stdout, stderr io.Writer) error {
	fs := cli.NewFlags("monitor predict", predictHead, predictExits)
	asJSON := fs.Bool("json", false, "print one JSON object: mean_square_stable, stability, spectral_radius, spectral_radius_error, error_mean, error_second_moment, error_std, loss_margin, then the period, the actuator's policy and the network states")
	strict := fs.Bool("strict", false, "exit 6 when the loop is not mean-square stable, 5 when the computation cannot tell (marginal)")
	vary := fs.String("vary", "", "sweep a parameter and print CSV: loss=START:STOP:STEP or delay_scale=START:STOP:STEP")
	step := fs.Int("step", 0, "print the expected error and its std for the first `N` periods after a setpoint step from rest (CSV)")
	stepTo := fs.String("step-to", "", "setpoint of the step, comma-separated (default: the loop's setpoint)")
	plotFile := fs.String("plot", "", "with --vary, --step, --frequency or --gain: also write a plot to `FILE` (.svg, .png or .pdf)")
	noMargin := fs.Bool("no-margin", false, "skip the loss margin (up to ~100 stability tests)")
	freq := fs.String("frequency", "", "print the response to a sinusoidal reference (CSV, or JSON with --json) at `F1,F2,…` Hz, at N log-spaced frequencies FROM:TO:N, or at the loop's own reference frequencies (reference)")
	var gains gainFlags
	fs.Var(&gains, "gain", "print CSV of the prediction over a grid of a controller gain `NAME=START:STOP:N` (scale, an entry a[i][j], b[i][j], c[i][j], d[i][j] of the controller, or a PID gain kp, ki, kd, filter); give it twice for a 2-D map")
	amp := fs.String("amplitude", "", "with --frequency: the sine's amplitude per output, comma-separated (default: the loop's reference, else 1 on every output)")
	path, err := parseArgs(fs, args)
	if err != nil {
		return err
	}
	if modes := btoi(*vary != "") + btoi(*step != 0) + btoi(*freq != "") + btoi(len(gains) > 0); modes > 1 {
		return cli.Usagef("--vary, --step, --frequency and --gain: want one of them, got %d", modes)
	}
	if *strict && (*vary != "" || *step != 0 || *freq != "" || len(gains) > 0) {
		return cli.Usagef("--strict: only with the single prediction, not with --vary, --step, --frequency or --gain")
	}
	if len(gains) > 2 {
		return cli.Usagef("--gain: want one or two, got %d", len(gains))
	}
	if *amp != "" && *freq == "" {
		return cli.Usagef("--amplitude: want --frequency with it")
	}
	if *step < 0 || *step > 1_000_000 {
		return cli.Usagef("--step: want a number of periods in [1, 1000000], got %d", *step)
	}
	if *plotFile != "" && *vary == "" && *step == 0 && *freq == "" && len(gains) == 0 {
		return cli.Usagef("--plot: want --vary, --step, --frequency or --gain with it")
	}
	if *plotFile != "" {
		if err := report.CheckPlotName(*plotFile); err != nil {
			return cli.Usagef("--plot: %v", err)
		}
	}
	var param string
	var values []float64
	if *vary != "" {
		if param, values, err = parseVary(*vary); err != nil {
			return err
		}
	}
	loop, err := profiles.LoadLoop(path)
	if err != nil {
		return cli.BadInput(err)
	}
	switch {
	case len(gains) > 0:
		return predictGains(loop, gains, *plotFile, stdout, stderr)
	case *freq != "":
		return predictFrequency(loop, *freq, *amp, *asJSON, *plotFile, stdout, stderr)
	case *vary != "":
		return predictSweep(loop, param, values, *plotFile, stdout, stderr)
	case *step != 0:
		if *stepTo != "" {
			sp, err := parseFloats(*stepTo)
			if err != nil || len(sp) != len(loop.Setpoint) {
				return cli.Usagef("--step-to: want %d comma-separated numbers (one per output), got %q", len(loop.Setpoint), *stepTo)
			}
			loop.Setpoint = sp
		}
		return predictStep(loop, *step, *plotFile, stdout)
	}
	pr, err := estimate.Predict(loop, estimate.PredictOptions{SkipMargin: *noMargin, AlmostSure: true,
		MarginProgress: marginProgress(stderr, time.Now())})
	if err != nil {
		return cli.BadInput(fmt.Errorf("%s: %w", path, err))
	}
	if *asJSON {
		if err := report.WritePredictionJSON(stdout, loop, pr); err != nil {
			return err
		}
	} else {
		report.WritePrediction(stdout, path, loop, pr)
	}
	if *strict {
		return strictStatus(pr)
	}
	return nil
}

// Progress of a slow loss margin.
const (
	progressAfter = 2 * time.Second // quiet for predictions faster than this
	progressEvery = 2 * time.Second
)

// marginProgress returns the loss margin's progress callback: a line on
// stderr every progressEvery once the prediction has run progressAfter
// (a large loop's scan factorises its operator a hundred times).
func marginProgress(stderr io.Writer, start time.Time) func(q float64) {
	last := start
	return func(q float64) {
		now := time.Now()
		if now.Sub(start) < progressAfter || now.Sub(last) < progressEvery {
			return
		}
		last = now
		fmt.Fprintf(stderr, "monitor predict: loss margin: extra loss %.2f scanned of 1 (%.0f %%), %s so far\n",
			q, 100*q, now.Sub(start).Round(time.Second))
	}
}

// strictStatus is the --strict verdict: nil when the loop is certified
// mean-square stable, else an cli.Exit (6 not stable, 5 marginal).
func strictStatus(pr *estimate.Prediction) error {
	switch estimate.VerdictOf(pr) {
	case estimate.StabilityStable:
		return nil
	case estimate.StabilityMarginal:
		return cli.Exit{Code: exitcode.Inconclusive, Msg: "--strict: " + estimate.DescribeStability(pr)}
	}
	return cli.Exit{Code: exitcode.NotStable, Msg: "--strict: " + estimate.DescribeStability(pr)}
}

func predictSweep(loop *profiles.Loop, param string, values []float64, plotFile string, stdout, stderr io.Writer) error {
	res, err := estimate.Sweep(loop, param, values)
	if err != nil {
		return cli.BadInput(fmt.Errorf("%s: %w", loop.File, err))
	}
	report.WriteSweepCSV(stdout, res)
	switch {
	case res.LostFromStart:
		fmt.Fprintf(stderr, "monitor predict: not mean-square stable at %s = %g already\n", param, values[0])
	case !math.IsNaN(res.Boundary):
		fmt.Fprintf(stderr, "monitor predict: mean-square stability is lost at %s = %.4g\n", param, res.Boundary)
		if param == estimate.SweepDelayScale {
			_, na := loop.Horizons()
			fmt.Fprintf(stderr, "monitor predict: there a command's mean age on arrival (τsc + c + τca) is %.2f periods; the actuator's horizon is %d\n",
				estimate.MeanCommandAge(loop, res.Boundary)/loop.Period, na)
		}
	}
	if plotFile != "" {
		return report.WriteSweepPlot(res, plotFile)
	}
	return nil
}

func predictStep(loop *profiles.Loop, steps int, plotFile string, stdout io.Writer) error {
	md, err := estimate.Build(loop, estimate.Options{})
	if err != nil {
		return cli.BadInput(fmt.Errorf("%s: %w", loop.File, err))
	}
	tr := md.Transient(steps)
	report.WriteStepCSV(stdout, tr, len(loop.Setpoint))
	if plotFile != "" {
		return report.WriteStepPlot(tr, plotFile)
	}
	return nil
}
