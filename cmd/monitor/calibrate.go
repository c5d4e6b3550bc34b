package main

import (
	"context"
	"fmt"
	"io"
	"log/slog"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"sync"
	"time"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/exitcode"
	"rigwire/emulate"
	"rigwire/emulate/links"
	"rigwire/emulate/trip"
	"rigwire/estimate"
	"rigwire/estimate/fit"
	"rigwire/profiles"
	"rigwire/profiles/laws"
)

const calibrateHead = `usage: monitor calibrate --loop LOOP --listen HOST:PORT --controller HOST:PORT
                        [--duration D] [--write FILE] [--every D]

Measures the rig's own timing: relays the rig's link for --duration
without loss or added delay, pairs every command with the sample it
answers (the loop's decode.sequence and command_decode) and collects the
controller's turnaround (the relay's release of a sample to the
controller → the arrival of its command: the controller's computing time
and both hops to it). Fits a delay law to it (every kind of impair fit,
chosen by AIC, with its Kolmogorov–Smirnov goodness of fit), writes it
as a rig timing file (--write; default LOOP's name with .timing.yaml)
and prints the prediction with the loop's compute_delay and with the
measured law. Point the loop's compute_delay at the file to use it.

The rig runs for real during the calibration: its commands reach it
without impairment, but everything the safety cautions say holds.
`

var calibrateExits = exitcode.Help(
	[]int{exitcode.OK, exitcode.Failure, exitcode.BadInput},
	map[int]string{
		exitcode.OK:       "measured, fitted and written",
		exitcode.Failure:  "error while running, or too few commands paired with their samples to fit (the message says what the relay saw)",
		exitcode.BadInput: "bad usage, or a loop file that does not load, or has no decode.sequence or command_decode",
	})

// maxCalibration bounds the turnarounds kept (a day at 10 ms is 8.6
// million); beyond it the calibration keeps the first ones and says so.
const maxCalibration = 2_000_000

func cmdCalibrate(args []string, stdout, stderr io.Writer) error {
	fs := cli.NewFlags("monitor calibrate", calibrateHead, calibrateExits)
	cautions := cautionsFlag(fs)
	loopPath := fs.String("loop", "", "loop `FILE` (YAML) with decode.sequence and command_decode (required)")
	var listen, controller cli.AddrFlag
	fs.Var(&listen, "listen", "`HOST:PORT` where the rig's sensor node sends (required)")
	fs.Var(&controller, "controller", "`HOST:PORT` of the rig's controller (required)")
	dur := durationFlag{s: 60}
	fs.Var(&dur, "duration", "measure for `D`")
	write := fs.String("write", "", "write the rig timing file to `FILE` (default: the loop file's name with .timing.yaml)")
	every := fs.Duration("every", 5*time.Second, "log progress every `D`")
	clock := fs.String("sample-clock", "none", "the clock of the sample times the sensor datagrams carry (decode.sample_time): monotonic (the node on this host), realtime (clocks synchronised) or none; with one, the sensor side's latency is measured and added")
	if err := fs.Parse(args); err != nil {
		return err
	}
	switch {
	case fs.NArg() > 0:
		return cli.Usagef("unexpected argument %q", fs.Arg(0))
	case *loopPath == "":
		return cli.Usagef("--loop: required")
	case !listen.Given:
		return cli.Usagef("--listen: required")
	case !controller.Given:
		return cli.Usagef("--controller: required")
	case dur.s <= 0 || dur.s > 7*24*3600:
		return cli.Usagef("--duration: want more than 0 and at most a week, got %gs", dur.s)
	case *every <= 0:
		return cli.Usagef("--every: want a duration > 0, got %s", *every)
	}
	loop, err := profiles.LoadLoop(*loopPath)
	if err != nil {
		return cli.BadInput(err)
	}
	pairing, err := links.PairingFromLoop(*loopPath)
	if err != nil {
		return cli.BadInput(err)
	}
	out := *write
	if out == "" {
		out = strings.TrimSuffix(*loopPath, filepath.Ext(*loopPath)) + ".timing.yaml"
	}
	if !profiles.IsTimingPath(out) {
		return cli.Usagef("--write: want a file ending in .yaml or .yml (a loop's compute_delay names it so), got %q", out)
	}
	log := slog.New(slog.NewTextHandler(stderr, nil))

	var mu sync.Mutex
	turns := make([]float64, 0, 4096)
	dropped := 0
	var ok bool
	if pairing.Clock, ok = emulate.ParseSampleClock(*clock); !ok {
		return cli.Usagef("--sample-clock: want none, monotonic or realtime, got %q", *clock)
	}
	if pairing.Clock != emulate.SampleClockNone && loop.Decode.SampleTime == nil {
		return cli.BadInput(fmt.Errorf("--sample-clock %s: loop %s has no decode.sample_time to read the sample times from", *clock, loop.File))
	}
	withLat := 0
	pairing.Observe = func(_ uint64, turn, lat int64) {
		mu.Lock()
		if len(turns) < maxCalibration {
			// With the sensor side measured, the rig's own time is that
			// and the turnaround, command by command.
			if lat >= 0 {
				turn += lat
				withLat++
			}
			turns = append(turns, float64(turn)/1e9)
		} else {
			dropped++
		}
		mu.Unlock()
	}
	clean := &profiles.Profile{Name: "calibration (clean link)", SensorToController: profiles.Clean(), ControllerToActuator: profiles.Clean()}
	relay, err := emulate.New(emulate.Config{Profile: clean, Listen: listen.Addr, Controller: controller.Addr,
		Pairing: pairing, Logger: log})
	if err != nil {
		return err
	}
	fmt.Fprint(stderr, cautions(trip.RelayCaution))
	log.Info("calibrating: relaying without impairment and pairing commands with samples",
		"loop", loop.File, "listen", relay.ListenAddr().String(), "controller", controller.Addr.String(), "duration", time.Duration(dur.s*float64(time.Second)))
	ctx, cancel := cli.SignalContext()
	defer cancel()
	total := time.Duration(dur.s * float64(time.Second))
	ctx, stop := context.WithTimeout(ctx, total)
	defer stop()
	start := time.Now()
	done := make(chan error, 1)
	go func() { done <- relay.Run(ctx, nil) }()
	tick := time.NewTicker(*every)
	defer tick.Stop()
	progress := func() {
		s := relay.Stats()
		mu.Lock()
		n := len(turns)
		mu.Unlock()
		log.Info("calibrating", "elapsed", time.Since(start).Round(time.Second), "of", total,
			"samples", s.SensorToController.Forwarded, "commands", s.ControllerToActuator.Forwarded, "paired", n,
			"unpaired", s.PairingFailures)
	}
wait:
	for {
		select {
		case err := <-done:
			if err != nil {
				return err
			}
			break wait
		case <-tick.C:
			progress()
		}
	}
	progress()
	s := relay.Stats()
	mu.Lock()
	xs := slices.Clone(turns)
	mu.Unlock()
	if dropped > 0 {
		log.Warn("calibration: kept the first turnarounds only", "kept", len(xs), "not kept", dropped)
	}
	if pairing.Clock != emulate.SampleClockNone {
		log.Info("calibration: sensor-side latency added to the turnaround", "commands", len(xs), "with a sample time", withLat)
	}
	if len(xs) < fit.MinFitSamples {
		return cli.Exit{Code: exitcode.Failure, Msg: "calibration: " + links.PairingShortfall(s, len(xs), fit.MinFitSamples)}
	}
	return finishCalibration(stdout, loop, xs, out)
}

// finishCalibration fits the turnarounds, prints the fits and the
// prediction before and after, and writes the rig timing file.
func finishCalibration(w io.Writer, loop *profiles.Loop, xs []float64, out string) error {
	c, err := fit.Calibrate(xs, filepath.Base(loop.File), time.Now())
	if err != nil {
		return cli.Exit{Code: exitcode.Failure, Msg: fmt.Sprintf("calibration: %v", err)}
	}
	c.WriteText(w)
	if lo, _ := c.Best.Law.Support(); lo >= loop.Period {
		return cli.Exit{Code: exitcode.Failure, Msg: fmt.Sprintf("calibration: the controller's turnaround is never below the period (%s at least, period %s): every command would be late",
			laws.FormatSeconds(lo), laws.FormatSeconds(loop.Period))}
	}
	if err := os.WriteFile(out, []byte(c.TimingFile()), 0o644); err != nil {
		return fmt.Errorf("--write: %w", err)
	}
	// Read back as a loop would: the file is what the loop will use.
	law, err := profiles.LoadTiming(out, loop.Period)
	if err != nil {
		return fmt.Errorf("calibration: the file written does not read back: %w", err)
	}
	after := *loop
	after.Compute = law
	fmt.Fprintf(w, "\nprediction with the loop's compute_delay (%s):\n  ", loop.ComputeText())
	if err := predictLine(w, loop); err != nil {
		return err
	}
	fmt.Fprintf(w, "prediction with the measured turnaround (%s):\n  ", after.ComputeText())
	if err := predictLine(w, &after); err != nil {
		return err
	}
	fmt.Fprintf(w, "\nwrote %s; to use it, set in %s:\n  compute_delay: %s\n", out, loop.File, relativeTo(loop.File, out))
	return nil
}

// predictLine prints a prediction in one line, or why there is none.
func predictLine(w io.Writer, loop *profiles.Loop) error {
	pr, err := estimate.Predict(loop, estimate.PredictOptions{SkipMargin: true})
	if err != nil {
		return fmt.Errorf("prediction: %w", err)
	}
	if !pr.MeanSquareStable || pr.Error == nil {
		fmt.Fprintf(w, "%s; no E[eᵀe]\n", estimate.DescribeStability(pr))
		return nil
	}
	fmt.Fprintf(w, "E[eᵀe] = %.6g, %s", pr.Error.SecondMoment, estimate.DescribeStability(pr))
	if !math.IsNaN(pr.SpectralRadius) {
		fmt.Fprintf(w, ", ρ = %.6f", pr.SpectralRadius)
	}
	fmt.Fprintln(w)
	return nil
}

// relativeTo spells target relative to the directory of base where it can.
func relativeTo(base, target string) string {
	if r, err := filepath.Rel(filepath.Dir(base), target); err == nil && !strings.HasPrefix(r, "..") {
		return r
	}
	if a, err := filepath.Abs(target); err == nil {
		return a
	}
	return target
}
