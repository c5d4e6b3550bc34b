package main

import (
	"context"
	"fmt"
	"io"
	"log/slog"
	"strings"
	"time"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/exitcode"
	"rigwire/emulate/trip"
	"rigwire/estimate/engine"
	"rigwire/estimate/report"
	"rigwire/profiles"
)

// soakCaution is printed before a soak relays the rig's datagrams.
const soakCaution = "SAFETY: the relay will delay and drop the commands that move your rig, following the\n" +
	"scenario's phases (outages included). The loop file's trip section is a software guard only.\n" +
	trip.Cautions

// Exit statuses of `monitor soak` beyond 0, 1 and 2.
const (
	soakExitFailed  = exitcode.PhaseFailed // a phase failed its check
	soakExitTripped = exitcode.Tripped     // the safety trip fired
)

const soakHead = `usage: monitor soak --loop LOOP --scenario FILE --listen HOST:PORT --controller HOST:PORT
                   [--time-scale F] [--report DIR] [--summary FILE] [--after-trip D]
       monitor soak --loop LOOP --scenario FILE --simulated-rig [--time-scale F] [--report DIR] …

Plays a scenario's phases on the relay (in process, with the monitor),
predicts every phase (and every ramp step) before it starts, judges each
phase against its own prediction after its settling time, prints progress
and a per-phase table, and writes a JSON summary; --report DIR writes
report.html and the plots as PNG files. A trip section in the loop file
arms the safety trip: the run then ends --after-trip later. The trip is no
emergency stop: keep one that does not depend on the link or on rigwire.

The relay binds --listen and relays (on the first phase's profile) before
the phases are predicted, so a rig that already sends is not refused; the
scenario starts once every phase is predicted. --simulated-rig runs the
simulated rig's node and controller in this process on loopback (no
hardware, no root): a whole soak in one command.
`

// soakExits are the statuses of monitor soak, in their order of
// precedence after 1 and 2.
var soakExits = exitcode.Help(
	[]int{exitcode.OK, exitcode.Failure, exitcode.BadInput, exitcode.Tripped, exitcode.PhaseFailed, exitcode.Inconclusive},
	map[int]string{
		exitcode.OK:           "every phase passed",
		exitcode.Failure:      "error while running (a socket, the summary or the report)",
		exitcode.BadInput:     "bad usage, or a loop, profile or scenario file that does not load or validate (the message names file, line and key)",
		exitcode.Tripped:      "the safety trip fired (before any phase verdict)",
		exitcode.PhaseFailed:  "a phase failed its check (the message names it)",
		exitcode.Inconclusive: "no phase failed, but one could not be judged (the data could not tell) or did not run (the soak was interrupted)",
	})

// cmdSoak plays a scenario on the relay (in process, like serve) while the
// monitor engine judges each phase against its own prediction, shows the
// progress, and ends with a per-phase verdict, a JSON summary, an exit
// status for lab scripts and, with --report, an HTML report and its plots
// as PNG files.
func cmdSoak(args []string, stdout, stderr io.Writer) error {
	fs := cli.NewFlags("monitor soak", soakHead, soakExits)
	cautions := cautionsFlag(fs)
	bf := addBenchFlags(fs, "loop `FILE` (YAML, with a decode section; its trip section arms the safety trip) (required)",
		"127.0.0.1:9475", 5*time.Second)
	scenarioPath := fs.String("scenario", "", "scenario `FILE`: the phases the relay applies (required)")
	reportDir := fs.String("report", "", "write report.html and the plots as PNG into `DIR`")
	timeScale := fs.Float64("time-scale", 1, "multiply every phase duration and settling time by `F` (0 < F ≤ 100)")
	afterTrip := fs.Duration("after-trip", 5*time.Second, "keep relaying (as the trip action says) this long after a trip before ending")
	simulated := fs.Bool("simulated-rig", false, "run the simulated rig (node and controller) in this process on loopback instead of a real one")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if err := bf.check(fs, *simulated); err != nil {
		return err
	}
	switch {
	case *scenarioPath == "":
		return cli.Usagef("--scenario: required")
	case !(*timeScale > 0 && *timeScale <= 100):
		return cli.Usagef("--time-scale: want 0 < F ≤ 100, got %g", *timeScale)
	case *afterTrip < 0 || *afterTrip > time.Hour:
		return cli.Usagef("--after-trip: want 0…1h, got %s", *afterTrip)
	}
	log := slog.New(slog.NewTextHandler(stderr, nil))

	loop, err := profiles.LoadLoop(*bf.loop)
	if err != nil {
		return cli.BadInput(err)
	}
	sc, err := profiles.LoadScenario(*scenarioPath)
	if err != nil {
		return cli.BadInput(err)
	}
	if err := sc.CheckFrequencies(loop); err != nil {
		return cli.BadInput(err)
	}
	written := sc // as the file says, for the report's scenario times
	if *timeScale != 1 {
		sc = sc.Scale(*timeScale)
	}
	steps, err := sc.Steps()
	if err != nil {
		return cli.BadInput(fmt.Errorf("%s: %w", sc.File, err))
	}
	first := *loop
	first.Profile, first.ProfileFile = steps[0].Profile, ""
	var sim *simRig
	if *simulated {
		if sim, err = newSimRig(&first, log); err != nil {
			return err
		}
		defer sim.stop()
		*bf.listen, *bf.controller = "127.0.0.1:0", sim.ctl.LocalAddr().String()
	}
	b, err := openBench(benchConfig{loop: &first, listen: *bf.listen, controller: *bf.controller,
		actuator: *bf.actuator, metrics: *bf.metrics, seed: *bf.seed, seedSet: bf.seedSet(fs), log: log, metricsNote: stderr})
	if err != nil {
		return err
	}
	fmt.Fprint(stderr, cautions(soakCaution))
	names := make([]string, len(sc.Phases))
	for i, p := range sc.Phases {
		names[i] = p.Name
	}
	b.Monitor.PlanPhases(names)
	log.Info("soak", "scenario", sc.File, "phases", strings.Join(names, ","), "duration", sc.Total().String(),
		"loop", loop.File, "listen", b.Relay.ListenAddr().String(), "controller", *bf.controller, "metrics", b.url,
		"seed", b.Relay.Seed())

	ctx, cancel := cli.SignalContext()
	defer cancel()
	relayCtx, stopRelay := context.WithCancel(ctx)
	defer stopRelay()
	tripped, err := b.armTrip(loop.Trip)
	if err != nil {
		return err
	}
	// The report's per-phase counts: the relay's counters at each phase
	// start, at the trip and at the end, and the trip's own window.
	rec := report.NewRecorder(b.Monitor, b.Relay.Stats)
	benchDone := make(chan error, 1)
	// The relay runs from here, on the first phase's profile, while the
	// phases are predicted: a rig that already sends finds it listening.
	go func() { benchDone <- b.run(relayCtx, stderr, 0) }()
	log.Info("relaying on the first phase's profile while the scenario's steps are predicted; the scenario starts when they are ready",
		"steps", len(steps))
	preds, err := engine.PredictSteps(loop, steps, stderr)
	if err != nil {
		stopRelay()
		<-benchDone
		return cli.BadInput(err)
	}
	if sim != nil {
		if err := sim.startNode(b.Relay.ListenAddr(), sc.Total(), *bf.seed, log); err != nil {
			stopRelay()
			<-benchDone
			return err
		}
	}

	onStep := b.Monitor.StepFunc(sc, preds, func(k int) {
		rec.PhaseStart(k)
		ph := sc.Phases[k]
		log.Info("phase", "index", k+1, "of", len(sc.Phases), "name", ph.Name, "duration", ph.Duration.String())
	})
	playDone := make(chan error, 1)
	started := time.Now()
	go func() { playDone <- b.Relay.Play(ctx, names, steps, sc.Total(), onStep) }()

	var tick <-chan time.Time
	if *bf.every > 0 {
		t := time.NewTicker(*bf.every)
		defer t.Stop()
		tick = t.C
	}
	twTick := time.NewTicker(report.TripWindowEvery)
	defer twTick.Stop()
	var playErr error
	var afterTripC <-chan time.Time
	finished := false // the scenario played to its end
wait:
	for {
		select {
		case playErr = <-playDone:
			finished = playErr == nil
			break wait
		case <-tripped:
			rec.Tripped()
			tripped = nil
			afterTripC = time.After(*afterTrip)
		case <-afterTripC:
			break wait
		case <-tick:
			fmt.Fprintln(stderr, report.SoakProgress(sc, b.Monitor, time.Since(started)))
		case <-twTick.C:
			rec.SampleTripWindow()
		}
	}
	if sim != nil {
		sim.stopNode(loop.Period)
	}
	stopRelay()
	if err := <-benchDone; err != nil {
		return err
	}
	rec.SampleTripWindow()
	rec.Finish()
	b.Monitor.EndPhases(!finished)
	s := b.Monitor.Summary()
	s.Turnaround = reportTurnaround(b.Turnaround(), log)
	code := exitcode.OfSoak(s)
	if !finished && s.Trip == nil {
		// Interrupted before the end: the phases not played are not run.
		log.Warn("soak interrupted before the scenario's end", "elapsed", time.Since(started).Round(time.Millisecond).String())
		if code == exitcode.OK {
			code = exitcode.Inconclusive
		}
	}
	run := &report.Soak{Loop: loop, Written: written, Played: sc, Steps: steps, TimeScale: *timeScale,
		Started: started, Ended: time.Now(), Seed: b.Relay.Seed(), Monitor: b.Monitor, Recorder: rec}
	return finishSoak(run, s, code, playErr, *bf.summary, *reportDir, stdout, stderr, log)
}
