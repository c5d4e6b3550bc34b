package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"os"
	"os/signal"
	"syscall"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/collectors"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/metricsrv"
	"rigwire/emulate/links"
	"rigwire/emulate/trip"
)

// runLinks opens every link (emulate/links), serves the metrics, and
// relays until SIGINT or SIGTERM (a second one abandons what is in
// flight), or until every scenario has ended with --exit-after-scenario;
// SIGHUP re-reads the profiles. A link whose files do not load is a
// cli.InputError; a relay that fails while running is logged and ends the
// command with status 1.
func runLinks(specs []links.Spec, opts runOpts, stderr io.Writer, log *slog.Logger) error {
	reg := prometheus.NewRegistry()
	reg.MustRegister(collectors.NewGoCollector(), collectors.NewProcessCollector(collectors.ProcessCollectorOpts{}))
	run, err := links.Open(specs, opts.links, reg, log)
	if ie := (*links.InputError)(nil); errors.As(err, &ie) {
		return cli.BadInput(err)
	} else if err != nil {
		return err
	}
	// Signals are caught before anything is announced, so that a signal
	// right after the metrics endpoint is up finds the handler.
	sigs := make(chan os.Signal, 4)
	signal.Notify(sigs, syscall.SIGINT, syscall.SIGTERM, syscall.SIGHUP)
	defer signal.Stop(sigs)
	srv, err := metricsrv.Start(opts.metricsAddr, reg, log)
	if err != nil {
		run.Close()
		return fmt.Errorf("--metrics %s: %w", opts.metricsAddr, err)
	}
	defer srv.Close()
	// Everything is up: the records take their paths' places.
	if err := run.Commit(); err != nil {
		return err
	}
	if opts.cautionsRead {
		fmt.Fprint(stderr, trip.Reminder)
	} else {
		fmt.Fprint(stderr, trip.RelayCaution)
	}
	run.Describe(stderr)

	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	abort := make(chan struct{})
	go func() {
		stopping := false
		done := ctx.Done()
		for {
			var s os.Signal
			select {
			case s = <-sigs:
			case <-done:
				// Stopped (a signal, or the scenarios ended): a signal
				// now abandons the drain.
				done, stopping = nil, true
				continue
			}
			switch {
			case s == syscall.SIGHUP:
				// Reloads run on each link's reloader, never here: a
				// reload that blocks must not keep SIGTERM waiting.
				run.Reload()
			case !stopping:
				stopping = true
				log.Info("stopping: releasing what is in flight on time (signal again to abandon it)", "signal", s.String())
				cancel()
			default:
				close(abort)
				return
			}
		}
	}()
	err = run.Relay(ctx, cancel, abort)
	srv.Close()
	if err != nil {
		return cli.Exit{Code: 1} // the reasons are logged
	}
	log.Info("stopped")
	return nil
}
