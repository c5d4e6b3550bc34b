package main

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"log/slog"
	"math"
	"os"
	"path/filepath"
	"strings"
	"time"
	"unicode/utf8"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/exitcode"
	"rigwire/emulate/trip"
	"rigwire/estimate"
	"rigwire/estimate/engine"
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
		return parseErr(err)
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
	b, err := openBench(benchConfig{loop: &first, profile: steps[0].Profile, listen: *bf.listen, controller: *bf.controller,
		actuator: *bf.actuator, metrics: *bf.metrics, seed: *bf.seed, seedSet: bf.seedSet(fs), log: log, metricsNote: stderr})
	if err != nil {
		return err
	}
	fmt.Fprint(stderr, cautions(soakCaution))
	names := make([]string, len(sc.Phases))
	for i, p := range sc.Phases {
		names[i] = p.Name
	}
	b.mon.PlanPhases(names)
	log.Info("soak", "scenario", sc.File, "phases", strings.Join(names, ","), "duration", sc.Total().String(),
		"loop", loop.File, "listen", b.relay.ListenAddr().String(), "controller", *bf.controller, "metrics", b.url,
		"seed", b.relay.Seed())

	ctx, cancel := signalContext()
	defer cancel()
	relayCtx, stopRelay := context.WithCancel(ctx)
	defer stopRelay()
	tripped, err := b.armTrip(loop.Trip)
	if err != nil {
		return err
	}
	// The report's per-phase counts: the relay's counters at each phase
	// start, at the trip and at the end, and the trip's own window.
	rec := newSoakRecorder(b)
	benchDone := make(chan error, 1)
	// The relay runs from here, on the first phase's profile, while the
	// phases are predicted: a rig that already sends finds it listening.
	go func() { benchDone <- b.run(relayCtx, stderr, 0) }()
	log.Info("relaying on the first phase's profile while the scenario's steps are predicted; the scenario starts when they are ready",
		"steps", len(steps))
	preds, err := predictSteps(loop, steps, stderr)
	if err != nil {
		stopRelay()
		<-benchDone
		return cli.BadInput(err)
	}
	if sim != nil {
		if err := sim.startNode(b.relay.ListenAddr(), sc.Total(), *bf.seed, log); err != nil {
			stopRelay()
			<-benchDone
			return err
		}
	}

	onStep := func(st profiles.ScenarioStep) {
		ph := sc.Phases[st.Phase]
		if st.Frac == 0 {
			rec.phaseStart(st.Phase)
			b.mon.StartPhase(st.Phase, ph.Name, preds[st.Predict], ph.Settle, ph.Check)
			log.Info("phase", "index", st.Phase+1, "of", len(sc.Phases), "name", ph.Name, "duration", ph.Duration.String())
			return
		}
		b.mon.UpdatePrediction(preds[st.Predict])
	}
	playDone := make(chan error, 1)
	started := time.Now()
	go func() { playDone <- b.relay.Play(ctx, names, steps, sc.Total(), onStep) }()

	var tick <-chan time.Time
	if *bf.every > 0 {
		t := time.NewTicker(*bf.every)
		defer t.Stop()
		tick = t.C
	}
	twTick := time.NewTicker(tripWindowEvery)
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
			rec.tripped()
			tripped = nil
			afterTripC = time.After(*afterTrip)
		case <-afterTripC:
			break wait
		case <-tick:
			fmt.Fprintln(stderr, soakProgress(sc, b.mon, time.Since(started)))
		case <-twTick.C:
			rec.sampleTripWindow()
		}
	}
	if sim != nil {
		sim.stopNode(loop.Period)
	}
	stopRelay()
	if err := <-benchDone; err != nil {
		return err
	}
	rec.sampleTripWindow()
	rec.finish()
	b.mon.EndPhases(!finished)
	s := b.mon.Summary()
	code := exitcode.OfSoak(s)
	if !finished && s.Trip == nil {
		// Interrupted before the end: the phases not played are not run.
		log.Warn("soak interrupted before the scenario's end", "elapsed", time.Since(started).Round(time.Millisecond).String())
		if code == exitcode.OK {
			code = exitcode.Inconclusive
		}
	}
	run := &soakRun{b: b, loop: loop, written: written, played: sc, steps: steps, timeScale: *timeScale,
		started: started, ended: time.Now(), rec: rec}
	prov := soakProvenance(run)
	out, err := json.MarshalIndent(soakSummary{Summary: s, Provenance: prov}, "", "  ")
	if err != nil {
		return err
	}
	out = append(out, '\n')
	if *bf.summary == "" {
		if _, err := stdout.Write(out); err != nil {
			return err
		}
	} else if err := os.WriteFile(*bf.summary, out, 0o644); err != nil {
		return fmt.Errorf("--summary: %w", err)
	}
	soakTable(stderr, s)
	if *reportDir != "" {
		files, err := writeSoakReport(*reportDir, run, s, prov, code)
		if err != nil {
			return fmt.Errorf("--report: %w", err)
		}
		fmt.Fprintf(stderr, "report: %s\n", filepath.Join(*reportDir, "report.html"))
		log.Debug("report files", "files", files)
	}
	return soakExit(s, code, playErr)
}

// soakExit is the soak's exit: nil for 0, else the status with a message
// naming the trip, the failed phases, or the phases that could not be
// judged.
func soakExit(s *engine.Summary, code int, playErr error) error {
	list := func(verdicts ...string) string {
		var out []string
		for _, p := range s.Phases {
			for _, v := range verdicts {
				if p.Verdict == v {
					out = append(out, fmt.Sprintf("%q (%s)", p.Name, p.Reason))
				}
			}
		}
		return strings.Join(out, ", ")
	}
	switch code {
	case exitcode.OK:
		return nil
	case soakExitTripped:
		return cli.Exit{Code: code, Msg: fmt.Sprintf("safety trip in phase %q: %s %.5g above the bound %.5g",
			s.Trip.Phase, s.Trip.Reason, s.Trip.Value, s.Trip.Bound)}
	case soakExitFailed:
		return cli.Exit{Code: code, Msg: "failed phase " + list(engine.PhaseFail)}
	case exitcode.Inconclusive:
		msg := ""
		if l := list(engine.PhaseInconclusive, engine.PhaseNotRun); l != "" {
			msg = "no phase failed, but these could not be judged: " + l
		}
		if playErr != nil {
			if msg != "" {
				msg += "; "
			}
			msg += "interrupted before the scenario's end: " + playErr.Error()
		}
		return cli.Exit{Code: code, Msg: msg}
	}
	return cli.Exit{Code: code}
}

// predictSteps computes the prediction for each distinct profile the steps
// predict with, showing how far it is.
func predictSteps(loop *profiles.Loop, steps []profiles.ScenarioStep, progress io.Writer) (map[*profiles.Profile]*estimate.Prediction, error) {
	preds := map[*profiles.Profile]*estimate.Prediction{}
	var todo []*profiles.Profile
	for _, st := range steps {
		if _, ok := preds[st.Predict]; !ok {
			preds[st.Predict] = nil
			todo = append(todo, st.Predict)
		}
	}
	last := time.Now()
	for i, p := range todo {
		l := *loop
		l.Profile, l.ProfileFile = p, ""
		pr, err := estimate.Predict(&l, estimate.PredictOptions{SkipMargin: true})
		if err != nil {
			return nil, fmt.Errorf("%s: prediction for step %d of the scenario: %w", loop.File, i+1, err)
		}
		preds[p] = pr
		if time.Since(last) > time.Second || i+1 == len(todo) && len(todo) > 20 {
			fmt.Fprintf(progress, "predicting: %d of %d scenario steps\n", i+1, len(todo))
			last = time.Now()
		}
	}
	return preds, nil
}

// soakProgress is the status line: phase, scenario time and the measurement.
func soakProgress(sc *profiles.Scenario, mon *engine.Monitor, elapsed time.Duration) string {
	phases := mon.Phases()
	cur := "-"
	if n := len(phases); n > 0 {
		p := phases[n-1]
		cur = fmt.Sprintf("phase %d/%d %s", p.Index+1, len(sc.Phases), p.Name)
		if p.ErrorSecondMoment != nil && p.PredictedSecondMoment != nil {
			cur += fmt.Sprintf(" (phase E[eᵀe] %.4g, predicted %.4g)", *p.ErrorSecondMoment, *p.PredictedSecondMoment)
		}
	}
	total := sc.Total()
	pct := 100 * math.Min(1, elapsed.Seconds()/total.Seconds())
	return fmt.Sprintf("soak %s: %s of %s (%.0f %%), %s | %s", sc.Name, elapsed.Round(time.Second), total, pct, cur,
		strings.TrimSpace(mon.Progress().String()))
}

// soakTable prints one line per phase: verdict, samples, measured with
// its interval, predicted, a note (cut short by the trip, the prediction
// outside the interval of a bound-only check) and the reason; then the
// trip and what "inconclusive" means.
func soakTable(w io.Writer, s *engine.Summary) {
	val := func(p *float64) string {
		if p == nil {
			return "-"
		}
		return fmt.Sprintf("%.4g", *p)
	}
	noteWidth := len("note")
	for _, p := range s.Phases {
		noteWidth = max(noteWidth, utf8.RuneCountInString(phaseNote(p)))
	}
	fmt.Fprintf(w, "\n%-16s %-12s %8s %-12s %-22s %-12s %-*s %s\n", "phase", "verdict", "samples", "E[eᵀe]",
		fmt.Sprintf("%g %% CI", 100*s.Level), "predicted", noteWidth, "note", "reason")
	inconclusive := false
	for _, p := range s.Phases {
		ci := "-"
		if p.CILow != nil && p.CIHigh != nil {
			ci = fmt.Sprintf("[%.4g, %.4g]", *p.CILow, *p.CIHigh)
		}
		fmt.Fprintf(w, "%-16s %-12s %8d %-12s %-22s %-12s %-*s %s\n", p.Name, phaseVerdictText(p.Verdict), p.Samples,
			val(p.ErrorSecondMoment), ci, val(p.PredictedSecondMoment), noteWidth, phaseNote(p), p.Reason)
		inconclusive = inconclusive || p.Verdict == engine.PhaseInconclusive
	}
	if s.Trip != nil {
		fmt.Fprintf(w, "\nsafety trip: %s %.5g above %.5g in phase %q after %.3fs; relay action %s; %d later samples not judged\n",
			s.Trip.Reason, s.Trip.Value, s.Trip.Bound, s.Trip.Phase, s.Trip.Elapsed, s.Trip.Action, s.AfterTripSamples)
	}
	if inconclusive {
		fmt.Fprintf(w, "\ninconclusive: the data could not tell agreement from disagreement; the rule: %s\n", engine.VerdictRule)
	}
}

// phaseVerdictText is a phase's verdict as the table and the report show
// it ("not run" for not_run).
func phaseVerdictText(v string) string {
	if v == engine.PhaseNotRun {
		return "not run"
	}
	return v
}

// phaseNote is the table's note for a phase: how it was cut short, and a
// prediction outside the measured interval of a check on the bound only.
func phaseNote(p engine.PhaseResult) string {
	var notes []string
	switch p.CutShort {
	case engine.CutByTrip:
		notes = append(notes, fmt.Sprintf("cut by trip (%d after it)", p.AfterTripSamples))
	case engine.CutInterrupt:
		notes = append(notes, "cut short (interrupted)")
	}
	if p.PredictionOutside {
		notes = append(notes, "prediction outside interval")
	}
	if len(notes) == 0 {
		return "-"
	}
	return strings.Join(notes, "; ")
}
