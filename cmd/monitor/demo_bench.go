package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"time"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/metricsrv"
	ebench "rigwire/emulate/bench"
	"rigwire/emulate/endpoint"
	"rigwire/emulate/trip"
	"rigwire/estimate/engine"
	"rigwire/profiles"
)

// bench is the in-process relay and monitor of one rig (emulate/bench) as
// serve, soak and demo run it: opened from flag values, with the metrics
// endpoint the command serves its registry on.
type bench struct {
	*ebench.Bench
	srv *metricsrv.Server
	url string // "" without an endpoint
}

type benchConfig struct {
	loop        *profiles.Loop // its profile is the relay's, and the prediction is for it
	listen      string         // the relay's sensor-side socket
	controller  string
	actuator    string // "": the latest sensor source
	metrics     string // "off": no endpoint
	tolerance   float64
	warmup      time.Duration
	seed        uint64
	seedSet     bool
	log         *slog.Logger
	metricsNote io.Writer // told when the metrics port falls back to an ephemeral one
}

// openBench resolves the addresses, opens the bench (prediction, monitor,
// relay) and starts the metrics endpoint. Nothing is relayed until run.
func openBench(cfg benchConfig) (*bench, error) {
	bc := ebench.Config{Loop: cfg.loop, Tolerance: cfg.tolerance, Warmup: cfg.warmup,
		Seed: cfg.seed, SeedSet: cfg.seedSet, Logger: cfg.log}
	var err error
	if bc.Listen, err = endpoint.Resolve(cfg.listen); err != nil {
		return nil, cli.Usagef("--listen: %v", err)
	}
	if bc.Controller, err = endpoint.Resolve(cfg.controller); err != nil {
		return nil, cli.Usagef("--controller: %v", err)
	}
	if cfg.actuator != "" {
		if bc.Actuator, err = endpoint.Resolve(cfg.actuator); err != nil {
			return nil, cli.Usagef("--actuator: %v", err)
		}
	}
	eb, err := ebench.Open(bc)
	if err != nil {
		return nil, badInput(err)
	}
	b := &bench{Bench: eb}
	if cfg.metrics != "off" {
		b.srv, err = metricsrv.Start(cfg.metrics, eb.Registry, cfg.log)
		if err != nil && cfg.metricsNote != nil {
			fmt.Fprintf(cfg.metricsNote, "metrics: %s is taken (%v); using an ephemeral port\n", cfg.metrics, err)
			b.srv, err = metricsrv.Start("127.0.0.1:0", eb.Registry, cfg.log)
		}
		if err != nil {
			return nil, fmt.Errorf("--metrics %s: %w", cfg.metrics, err)
		}
		b.url = b.srv.URL
	}
	return b, nil
}

// reportTurnaround logs the controller's turnaround the relay measured
// beside the compute law the prediction assumes (engine.Turnaround), as a
// warning when the two differ, and returns it for the summary; nothing
// when the relay did not pair commands with samples.
func reportTurnaround(r *engine.Turnaround, log *slog.Logger) *engine.Turnaround {
	switch {
	case r == nil:
	case r.Agree:
		log.Info(r.String())
	default:
		log.Warn(r.String() + ": the prediction assumes another timing than the rig has; measure it with monitor calibrate and point compute_delay at the file it writes")
	}
	return r
}

// badInput makes the bench's input errors (the loop, the profile, the
// trip rule) bad input; other errors stay failures of the run.
func badInput(err error) error {
	if ie := (*ebench.InputError)(nil); errors.As(err, &ie) {
		return cli.BadInput(err)
	}
	return err
}

// armTrip arms the loop's safety trip (ebench.Bench.ArmTrip).
func (b *bench) armTrip(rule trip.Rule) (<-chan struct{}, error) {
	ch, err := b.ArmTrip(rule)
	return ch, badInput(err)
}

// run relays until ctx ends, printing the monitor's progress line to out
// every period (0: never); then drains the relay and stops the endpoint.
func (b *bench) run(ctx context.Context, out io.Writer, every time.Duration) error {
	err := b.Run(ctx, out, every)
	b.srv.Close()
	return err
}
