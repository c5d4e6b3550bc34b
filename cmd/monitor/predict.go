package main

import (
	"encoding/json"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"text/tabwriter"
	"time"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/exitcode"
	"rigwire/estimate"
	"rigwire/profiles"
	"rigwire/profiles/laws"
)

const predictHead = `usage: monitor predict LOOP.yaml [--json] [--strict] [--no-margin]
       monitor predict LOOP.yaml --vary loss=START:STOP:STEP | delay_scale=START:STOP:STEP [--plot FILE]
       monitor predict LOOP.yaml --step N [--step-to R1,R2,…] [--plot FILE]

Predicts what theory says of the loop over its network profile: whether it
is mean-square stable (the spectral radius of the second-moment operator,
with its numerical error, against 1), the steady mean and second moment of
the tracking error e = setpoint − y, the extra loss at which stability is
lost, and each joint network state's share and mode probabilities. A
spectral radius that cannot be told apart from 1 at the accuracy of the
computation is reported as marginal and treated as not stable.

--vary prints a CSV of the prediction over a grid of one parameter;
--step the expected error and its std for N periods after a setpoint step
from rest. Without --strict the command exits 0 whatever the verdict.

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
		exitcode.NotStable:    "with --strict: the loop is not mean-square stable",
	})

func cmdPredict(args []string, stdout, stderr io.Writer) error {
	fs := cli.NewFlags("monitor predict", predictHead, predictExits)
	asJSON := fs.Bool("json", false, "print one JSON object: mean_square_stable, stability, spectral_radius, spectral_radius_error, error_mean, error_second_moment, error_std, loss_margin, then the period, the actuator's policy and the network states")
	strict := fs.Bool("strict", false, "exit 6 when the loop is not mean-square stable, 5 when the computation cannot tell (marginal)")
	vary := fs.String("vary", "", "sweep a parameter and print CSV: loss=START:STOP:STEP or delay_scale=START:STOP:STEP")
	step := fs.Int("step", 0, "print the expected error and its std for the first `N` periods after a setpoint step from rest (CSV)")
	stepTo := fs.String("step-to", "", "setpoint of the step, comma-separated (default: the loop's setpoint)")
	plotFile := fs.String("plot", "", "with --vary or --step: also write a plot to `FILE` (.svg, .png or .pdf)")
	noMargin := fs.Bool("no-margin", false, "skip the loss margin (up to ~100 stability tests)")
	path, err := parseArgs(fs, args)
	if err != nil {
		return err
	}
	if *vary != "" && *step != 0 {
		return cli.Usagef("--vary and --step: want one of them, got both")
	}
	if *strict && (*vary != "" || *step != 0) {
		return cli.Usagef("--strict: only with the single prediction, not with --vary or --step")
	}
	if *step < 0 || *step > 1_000_000 {
		return cli.Usagef("--step: want a number of periods in [1, 1000000], got %d", *step)
	}
	if *plotFile != "" && *vary == "" && *step == 0 {
		return cli.Usagef("--plot: want --vary or --step with it")
	}
	if *plotFile != "" {
		if err := checkPlotName(*plotFile); err != nil {
			return err
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
	pr, err := estimate.Predict(loop, estimate.PredictOptions{SkipMargin: *noMargin,
		MarginProgress: marginProgress(stderr, time.Now())})
	if err != nil {
		return cli.BadInput(fmt.Errorf("%s: %w", path, err))
	}
	if *asJSON {
		if err := writeJSON(stdout, loop, pr); err != nil {
			return err
		}
	} else {
		writeSummary(stdout, path, loop, pr)
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

func parseFloats(s string) ([]float64, error) {
	var out []float64
	for _, f := range strings.Split(s, ",") {
		v, err := strconv.ParseFloat(strings.TrimSpace(f), 64)
		if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("want a number, got %q", f)
		}
		out = append(out, v)
	}
	return out, nil
}

// maxSweepPoints bounds a --vary grid.
const maxSweepPoints = 10000

// parseVary reads NAME=START:STOP:STEP.
func parseVary(s string) (string, []float64, error) {
	bad := func(why string) error {
		return cli.Usagef("--vary: want loss=START:STOP:STEP or delay_scale=START:STOP:STEP, got %q (%s)", s, why)
	}
	name, spec, ok := strings.Cut(s, "=")
	if !ok {
		return "", nil, bad("no =")
	}
	if name != estimate.SweepLoss && name != estimate.SweepDelayScale {
		return "", nil, bad("unknown parameter " + strconv.Quote(name))
	}
	parts := strings.Split(spec, ":")
	if len(parts) != 3 {
		return "", nil, bad("want three numbers")
	}
	v, err := parseFloats(strings.Join(parts, ","))
	if err != nil {
		return "", nil, bad(err.Error())
	}
	start, stop, step := v[0], v[1], v[2]
	switch {
	case !(step > 0):
		return "", nil, bad("step must be > 0")
	case stop < start:
		return "", nil, bad("stop below start")
	case name == estimate.SweepLoss && (start < 0 || stop > 1):
		return "", nil, bad("loss must lie in [0, 1]")
	case name == estimate.SweepDelayScale && !(start > 0):
		return "", nil, bad("delay_scale must be > 0")
	case stop > start && step > stop-start:
		// 0:0.01:0.3 read as START:STEP:STOP would give one point.
		return "", nil, bad(fmt.Sprintf("step %g is larger than the range %g to %g; the order is START:STOP:STEP", step, start, stop))
	}
	n := int(math.Floor((stop-start)/step+1e-9)) + 1
	if n > maxSweepPoints {
		return "", nil, bad(fmt.Sprintf("%d points, at most %d", n, maxSweepPoints))
	}
	values := make([]float64, n)
	for i := range values {
		values[i] = start + float64(i)*step
	}
	return name, values, nil
}

// jsonPrediction is the --json output: the verdict, ρ with its error, the
// error moments and the loss margin first, then the details.
type jsonPrediction struct {
	MeanSquareStable  bool        `json:"mean_square_stable"`
	Stability         string      `json:"stability"`
	SpectralRadius    float64     `json:"spectral_radius"`
	RadiusError       *float64    `json:"spectral_radius_error"`
	ErrorMean         []float64   `json:"error_mean"`
	ErrorSecondMoment *float64    `json:"error_second_moment"`
	ErrorStd          *float64    `json:"error_std"`
	LossMargin        *float64    `json:"loss_margin"`
	Period            float64     `json:"period_seconds"`
	Actuator          string      `json:"actuator_on_loss"`
	States            []jsonState `json:"states"`
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

func finite(v float64) *float64 {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return nil
	}
	return &v
}

func writeJSON(w io.Writer, loop *profiles.Loop, pr *estimate.Prediction) error {
	out := jsonPrediction{
		MeanSquareStable: pr.MeanSquareStable,
		Stability:        estimate.VerdictOf(pr),
		SpectralRadius:   pr.SpectralRadius,
		RadiusError:      finite(pr.RadiusError),
		LossMargin:       finite(pr.LossMargin),
		Period:           loop.Period,
		Actuator:         loop.Actuator.OnLoss.String(),
	}
	if pr.Error != nil {
		out.ErrorMean = pr.Error.Mean
		out.ErrorSecondMoment = finite(pr.Error.SecondMoment)
		out.ErrorStd = finite(pr.Error.Std)
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

// fmtDuration writes the times of the predict table: "0" for none, "-"
// for a mean delay that does not exist.
var fmtDuration = laws.Seconds{Zero: "0", Missing: "-"}.Format

func writeSummary(w io.Writer, path string, loop *profiles.Loop, pr *estimate.Prediction) {
	n, m, p, nc := loop.Dims()
	fmt.Fprintf(w, "loop      %s\n", path)
	fmt.Fprintf(w, "          period %s, compute delay %s, %d plant states, %d inputs, %d outputs, %d controller states\n",
		fmtDuration(loop.Period), fmtDuration(loop.ComputeDelay), n, m, p, nc)
	name := loop.Profile.Name
	if name == "" {
		name = "(unnamed)"
	}
	fmt.Fprintf(w, "network   %s, %d joint states; actuator %s on loss\n", name, len(pr.States), loop.Actuator.OnLoss)
	verdict := estimate.DescribeStability(pr)
	if estimate.VerdictOf(pr) == estimate.StabilityUnstable {
		verdict += ": the error's second moment grows without bound"
	}
	fmt.Fprintf(w, "verdict   %s\n", verdict)
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
	}
	fmt.Fprintln(w)
	tw := tabwriter.NewWriter(w, 2, 8, 2, ' ', 0)
	fmt.Fprintln(tw, "network state\tshare\tsample lost/stale\tcommand lost/late\tcommand in time\tmean delay in time")
	for _, s := range pr.States {
		fmt.Fprintf(tw, "%s\t%.4f\t%.4f\t%.4f\t%.4f\t%s\n", s.Name, s.Probability, s.P0, s.P1, s.P2, fmtDuration(s.MeanDelay))
	}
	tw.Flush()
}

func predictSweep(loop *profiles.Loop, param string, values []float64, plotFile string, stdout, stderr io.Writer) error {
	res, err := estimate.Sweep(loop, param, values)
	if err != nil {
		return cli.BadInput(fmt.Errorf("%s: %w", loop.File, err))
	}
	fmt.Fprintf(stdout, "%s,error_second_moment,spectral_radius,mean_square_stable,stability\n", param)
	for _, p := range res.Points {
		sm := ""
		if p.MeanSquareStable {
			sm = strconv.FormatFloat(p.SecondMoment, 'g', 8, 64)
		}
		fmt.Fprintf(stdout, "%s,%s,%s,%v,%s\n", strconv.FormatFloat(p.Value, 'g', 8, 64), sm,
			estimate.RhoText(p.SpectralRadius, 8), p.MeanSquareStable, pointStability(p))
	}
	switch {
	case res.LostFromStart:
		fmt.Fprintf(stderr, "monitor predict: not mean-square stable at %s = %g already\n", param, values[0])
	case !math.IsNaN(res.Boundary):
		fmt.Fprintf(stderr, "monitor predict: mean-square stability is lost at %s = %.4g\n", param, res.Boundary)
	}
	if plotFile != "" {
		return plotSweep(res, plotFile)
	}
	return nil
}

func predictStep(loop *profiles.Loop, steps int, plotFile string, stdout io.Writer) error {
	md, err := estimate.Build(loop, estimate.Options{})
	if err != nil {
		return cli.BadInput(fmt.Errorf("%s: %w", loop.File, err))
	}
	tr := md.Transient(steps)
	p := len(loop.Setpoint)
	hdr := []string{"k", "time_seconds"}
	for i := 0; i < p; i++ {
		hdr = append(hdr, fmt.Sprintf("error_mean_%d", i))
	}
	for i := 0; i < p; i++ {
		hdr = append(hdr, fmt.Sprintf("error_std_%d", i))
	}
	hdr = append(hdr, "error_second_moment")
	fmt.Fprintln(stdout, strings.Join(hdr, ","))
	for _, s := range tr {
		row := []string{strconv.Itoa(s.K), strconv.FormatFloat(s.Time, 'g', 8, 64)}
		for _, v := range s.Error.Mean {
			row = append(row, strconv.FormatFloat(v, 'g', 8, 64))
		}
		for _, v := range s.Error.OutputStd {
			row = append(row, strconv.FormatFloat(v, 'g', 8, 64))
		}
		row = append(row, strconv.FormatFloat(s.Error.SecondMoment, 'g', 8, 64))
		fmt.Fprintln(stdout, strings.Join(row, ","))
	}
	if plotFile != "" {
		return plotStep(tr, plotFile)
	}
	return nil
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
