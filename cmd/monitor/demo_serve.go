package main

import (
	"context"
	"fmt"
	"io"
	"log/slog"
	"time"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/exitcode"
	"rigwire/emulate/trip"
	"rigwire/profiles"
)

// cmdServe is the relay and the monitor of one rig in one process: the
// relay engine impairs the rig's link with the profile and hands each
// sensor datagram, before impairment, to the monitor engine in process (no
// tap socket); one metrics endpoint serves both. It ends after --duration
// or on SIGINT/SIGTERM, draining the relay, and writes the monitor's JSON
// summary. A loop with a trip section arms the safety trip; the run then
// exits 8 when it fired.
func cmdServe(args []string, stdout, stderr io.Writer) error {
	fs := cli.NewFlags("monitor serve", serveHead, serveExits)
	cautions := cautionsFlag(fs)
	bf := addBenchFlags(fs, "loop `FILE` (YAML, with a decode section; its trip section arms the safety trip) (required)",
		"127.0.0.1:9472", time.Second)
	profilePath := fs.String("profile", "", "relay profile `FILE` (default: the loop's own profile)")
	tolerance := fs.Float64("tolerance", 0.1, "widen the measured interval by this fraction of its bounds for the verdict")
	var dur, warmup durationFlag
	fs.Var(&dur, "duration", "stop after `D` (default: run until SIGINT/SIGTERM)")
	fs.Var(&warmup, "warmup", "skip the samples of the first `D` in the measurement")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if err := bf.check(fs, false); err != nil {
		return err
	}
	if *tolerance < 0 || *tolerance > 10 {
		return cli.Usagef("--tolerance: want 0…10, got %g", *tolerance)
	}
	log := slog.New(slog.NewTextHandler(stderr, nil))
	loop, err := profiles.LoadLoop(*bf.loop)
	if err != nil {
		return cli.BadInput(err)
	}
	var prof *profiles.Profile
	if *profilePath != "" {
		if prof, err = profiles.Load(*profilePath); err != nil {
			return cli.BadInput(err)
		}
		l := *loop // predict for the network the relay applies
		l.Profile, l.ProfileFile = prof, prof.File
		loop = &l
	}
	b, err := openBench(benchConfig{loop: loop, listen: *bf.listen, controller: *bf.controller,
		actuator: *bf.actuator, metrics: *bf.metrics, tolerance: *tolerance,
		warmup: time.Duration(warmup.s * float64(time.Second)), seed: *bf.seed, seedSet: bf.seedSet(fs), log: log})
	if err != nil {
		return err
	}
	if _, err := b.armTrip(loop.Trip); err != nil {
		return err
	}
	fmt.Fprint(stderr, cautions(trip.RelayCaution))
	log.Info("relaying and monitoring", "loop", loop.File, "listen", b.Relay.ListenAddr().String(),
		"controller", *bf.controller, "metrics", b.url, "seed", b.Relay.Seed())
	ctx, cancel := cli.SignalContext()
	defer cancel()
	if dur.s > 0 {
		var stop context.CancelFunc
		ctx, stop = context.WithTimeout(ctx, time.Duration(dur.s*float64(time.Second)))
		defer stop()
	}
	if err := b.run(ctx, stderr, *bf.every); err != nil {
		return err
	}
	s := b.Monitor.Summary()
	s.Turnaround = reportTurnaround(b.Turnaround(), log)
	if err := writeSummary(stdout, *bf.summary, s); err != nil {
		return err
	}
	fmt.Fprintln(stderr, s.VerdictLine())
	for _, l := range s.FrequencyLines() {
		fmt.Fprintln(stderr, l)
	}
	if s.Trip != nil {
		return cli.Exit{Code: exitcode.OfTrip(s), Msg: fmt.Sprintf("safety trip: %s %.5g above the bound %.5g; relay action %s",
			s.Trip.Reason, s.Trip.Value, s.Trip.Bound, s.Trip.Action)}
	}
	return nil
}
