package main

import (
	"context"
	"fmt"
	"io"
	"log/slog"
	"os"
	"path/filepath"
	"sync"
	"time"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/exitcode"
	"rigwire/emulate/rig"
	"rigwire/emulate/trip"
	"rigwire/estimate/engine"
	"rigwire/profiles"
	"rigwire/profiles/examples"
)

// demoCaution is printed before the demo starts.
const demoCaution = "SAFETY: the demo is a simulation — nothing moves. Before you put a real rig\nbehind the relay:\n" + trip.Cautions

const demoHead = `usage: monitor demo [--duration 60s] [--loop LOOP --profile FILE] [--metrics HOST:PORT]
                   [--tolerance X] [--seed S] [--warmup D] [--progress D]

Runs the simulated rig node, the relay, the rig controller and the monitor
on loopback UDP sockets (no hardware, no root), shows the progress, serves
the metrics and ends with the measured E[eᵀe] beside the prediction. The
built-in loop is a parcel diverter over a warehouse Wi-Fi profile; --loop
runs another (it needs a decode section).
`

// demoExits are the statuses of monitor demo: the verdict's, as run
// --strict gives them.
var demoExits = exitcode.Help(
	[]int{exitcode.OK, exitcode.Failure, exitcode.BadInput, exitcode.Above, exitcode.Below,
		exitcode.Inconclusive, exitcode.NotStable},
	map[int]string{
		exitcode.OK:           "the measured E[eᵀe] agrees with the prediction",
		exitcode.Failure:      "error while running (a socket)",
		exitcode.BadInput:     "bad usage, or a loop or profile file that does not load or validate (the message names file, line and key)",
		exitcode.Inconclusive: "the data cannot tell (too few samples, batches short for the loop's correlation time, or an interval too wide to confirm); a longer --duration helps",
		exitcode.NotStable:    "the prediction is not mean-square stable (or marginal), so there is nothing to compare with",
	})

// cmdDemo runs the simulated rig node, the relay (emulate engine, in
// process), the rig controller and the monitor (engine, fed in process by
// the relay's tap) on loopback UDP sockets, shows the progress once a
// second, serves the metrics and ends with predicted against measured.
func cmdDemo(args []string, stdout, stderr io.Writer) error {
	fs := cli.NewFlags("monitor demo", demoHead, demoExits)
	cautions := cautionsFlag(fs)
	var dur durationFlag
	dur.s = 60
	fs.Var(&dur, "duration", "how long the rig runs")
	loopPath := fs.String("loop", "", "loop `FILE` to run instead of the built-in diverter demo (it needs a decode section)")
	profilePath := fs.String("profile", "", "relay profile `FILE` (default: the loop's own profile)")
	metrics := fs.String("metrics", "127.0.0.1:9474", "serve the relay's and the monitor's metrics on `HOST:PORT` (\"off\": none)")
	tolerance := fs.Float64("tolerance", 0.1, "widen the measured interval by this fraction of its bounds for the verdict")
	seed := fs.Uint64("seed", 7, "seed of the plant and sensor noise (the relay's decisions follow the profile's seed)")
	var warmup durationFlag
	fs.Var(&warmup, "warmup", "skip the first samples of this long in the measurement (default 0: the rig starts at the predicted steady mean)")
	every := fs.Duration("progress", time.Second, "print a progress line this often (0: never)")
	if err := fs.Parse(args); err != nil {
		return err
	}
	switch {
	case fs.NArg() > 0:
		return cli.Usagef("unexpected argument %q", fs.Arg(0))
	case dur.s <= 0:
		return cli.Usagef("--duration: want > 0, got %gs", dur.s)
	case *tolerance < 0 || *tolerance > 10:
		return cli.Usagef("--tolerance: want 0…10, got %g", *tolerance)
	case *every < 0:
		return cli.Usagef("--progress: want ≥ 0, got %s", *every)
	case cli.CheckMetricsAddr(*metrics) != nil:
		return cli.CheckMetricsAddr(*metrics)
	}
	log := slog.New(slog.NewTextHandler(stderr, &slog.HandlerOptions{Level: slog.LevelWarn}))

	path := *loopPath
	if path == "" {
		dir, err := os.MkdirTemp("", "rigwire-demo")
		if err != nil {
			return err
		}
		defer os.RemoveAll(dir)
		for _, name := range []string{"diverter.yaml", "diverter-wifi.yaml"} {
			b, _ := examples.Demo.ReadFile("demo/" + name)
			if err := os.WriteFile(filepath.Join(dir, name), b, 0o644); err != nil {
				return err
			}
		}
		path = filepath.Join(dir, "diverter.yaml")
	}
	loop, err := profiles.LoadLoop(path)
	if err != nil {
		return cli.BadInput(err)
	}
	var prof *profiles.Profile
	if *profilePath != "" {
		if prof, err = profiles.Load(*profilePath); err != nil {
			return cli.BadInput(err)
		}
	}
	if prof == nil {
		prof = loop.Profile
	}
	if prof != loop.Profile {
		// The prediction must be for the network the relay applies.
		l := *loop
		l.Profile, l.ProfileFile = prof, prof.File
		loop = &l
	}
	st, err := rigStart(loop, "steady", log)
	if err != nil {
		return err
	}
	ctl, err := rig.NewController(rig.ControllerConfig{Loop: loop, Start: st, Logger: log})
	if err != nil {
		return err
	}
	b, err := openBench(benchConfig{loop: loop, listen: "127.0.0.1:0",
		controller: ctl.LocalAddr().String(), metrics: *metrics, tolerance: *tolerance,
		warmup: time.Duration(warmup.s * float64(time.Second)), log: log, metricsNote: stdout})
	if err != nil {
		ctl.Run(canceled())
		return err
	}
	periods := max(1, int(dur.s/loop.Period+0.5))
	node, err := rig.NewNode(rig.NodeConfig{Loop: loop, Relay: b.Addrs().Listen, Periods: periods,
		Seed: *seed, Start: st, Logger: log})
	if err != nil {
		ctl.Run(canceled())
		return err
	}

	fmt.Fprint(stdout, cautions(demoCaution))
	loopName := filepath.Base(loop.File)
	if *loopPath == "" {
		loopName = "built-in diverter.yaml (profiles/examples/demo)"
	}
	fmt.Fprintf(stdout, "\nloop      %s, period %s, setpoint %v\n", loopName, fmtDuration(loop.Period), loop.Setpoint)
	fmt.Fprintf(stdout, "network   %s (relay seed %d)\n", prof.Name, b.Relay.Seed())
	fmt.Fprintf(stdout, "sockets   rig node %s → relay %s → controller %s, and back; the monitor taps the relay\n",
		node.LocalAddr(), b.Addrs().Listen, ctl.LocalAddr())
	if b.url != "" {
		fmt.Fprintf(stdout, "metrics   %s (relay and monitor)\n", b.url)
	}
	if b.Prediction.MeanSquareStable && b.Prediction.Error != nil {
		fmt.Fprintf(stdout, "predicted E[eᵀe] %.5g (mean-square stable, spectral radius %.4f, loss margin %.4f)\n",
			b.Prediction.Error.SecondMoment, b.Prediction.SpectralRadius, b.Prediction.LossMargin)
	} else {
		fmt.Fprintf(stdout, "predicted: not mean-square stable (spectral radius %.4f)\n", b.Prediction.SpectralRadius)
	}
	fmt.Fprintf(stdout, "running for %s…\n\n", fmtDuration(dur.s))

	// Shutdown order: the node stops after its last period (or on a
	// signal), then the relay drains and the progress stops, then the
	// controller.
	sigCtx, stopSignals := cli.SignalContext()
	defer stopSignals()
	relayCtx, stopRelay := context.WithCancel(context.Background())
	ctlCtx, stopCtl := context.WithCancel(context.Background())
	var wg sync.WaitGroup
	var ctlErr, benchErr error
	wg.Add(2)
	go func() { defer wg.Done(); ctlErr = ctl.Run(ctlCtx) }()
	go func() { defer wg.Done(); benchErr = b.run(relayCtx, stdout, *every) }()
	nodeErr := node.Run(sigCtx)
	time.Sleep(2 * time.Duration(loop.Period*float64(time.Second))) // the last command's round trip
	stopRelay()
	stopCtl()
	wg.Wait()
	for _, err := range []error{nodeErr, benchErr, ctlErr} {
		if err != nil {
			return err
		}
	}
	s := b.Monitor.Summary()
	b.WriteReport(stdout, s)
	ns, cs := node.Stats(), ctl.Stats()
	fmt.Fprintf(stdout, "rig:\n  %-24s samples %d, commands applied %d, late %d, sent late by the host (overruns) %d\n", "node", ns.Samples, ns.Applied, ns.Late, ns.Overruns)
	fmt.Fprintf(stdout, "  %-24s samples used %d, stale %d\n", "controller", cs.Used, cs.Stale)
	switch code := exitcode.OfRun(s, true); s.Verdict {
	case engine.VerdictAgree:
		return nil
	case engine.VerdictInconclusive:
		return cli.Exit{Code: code, Msg: "verdict inconclusive: " + s.VerdictReason +
			" (a longer --duration gives the estimate more to go on)"}
	default:
		return cli.Exit{Code: code, Msg: fmt.Sprintf("verdict %s: %s", s.Verdict, s.VerdictReason)}
	}
}

// canceled is a context that has ended (to close what was opened).
func canceled() context.Context {
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	return ctx
}
