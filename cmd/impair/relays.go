package main

import (
	"context"
	"fmt"
	"io"
	"log/slog"
	"net/netip"
	"os"
	"os/signal"
	"sync"
	"syscall"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/collectors"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/metricsrv"
	"rigwire/emulate"
	"rigwire/emulate/trip"
	"rigwire/profiles"
)

// link is one running link of `impair run`: its relay and what plays on it.
type link struct {
	spec    linkSpec
	log     *slog.Logger
	metrics *emulate.Metrics
	relay   *emulate.Relay
	record  *recordFile // nil without a record
	// committed: the record has taken its path's place (runLinks, once
	// everything is up).
	committed bool
	// reloads asks the link's reloader to re-read its profile (SIGHUP);
	// a request while one is pending is merged with it.
	reloads chan struct{}
	prof    *profiles.Profile // the profile (nil with a scenario)
	scen    *playingScenario  // nil with a profile
	trip    *trip.Listener    // nil without a trip socket
}

// openLink loads a link's profile or scenario and opens its relay and its
// trip socket. reg is where its metrics go (already wrapped with the link
// label in links mode).
func openLink(spec linkSpec, opts runOpts, reg prometheus.Registerer, log *slog.Logger) (*link, error) {
	l := &link{spec: spec, log: log}
	var first *profiles.Profile
	if spec.ScenarioPath != "" {
		sc, err := loadPlayingScenario(spec.ScenarioPath, opts.timeScale)
		if err != nil {
			return nil, cli.BadInput(err)
		}
		l.scen = sc
		first = sc.steps[0].Profile
	} else {
		p, err := profiles.Load(spec.ProfilePath)
		if err != nil {
			return nil, cli.BadInput(err)
		}
		l.prof, first = p, p
	}
	l.metrics = emulate.NewMetrics(reg)
	if spec.RecordPath != "" {
		f, err := openRecord(spec.RecordPath, append([]string{spec.ProfilePath, spec.ScenarioPath}, opts.inputs...))
		if err != nil {
			return nil, cli.BadInput(err)
		}
		l.record = f
	}
	cfg := emulate.Config{
		Profile: first, Listen: spec.Listen, Controller: spec.Controller,
		Actuator: spec.Actuator, Sensor: spec.Sensor, RelockAfter: spec.RelockAfter,
		ControllerBind: spec.ControllerBind, Tap: spec.Tap,
		Seed: spec.Seed, SeedSet: spec.SeedSet,
		MaxDatagram: opts.maxDatagram, MaxInFlight: opts.maxInFlight, Spin: opts.spin, SpinSet: true,
		Metrics: l.metrics, Logger: log,
	}
	if l.record != nil {
		cfg.Record = l.record
	}
	relay, err := emulate.New(cfg)
	if err != nil {
		l.close()
		return nil, err
	}
	l.relay = relay
	if spec.TripListen.IsValid() {
		t, err := trip.Listen(trip.ListenConfig{Addr: spec.TripListen, From: spec.TripFrom, Action: spec.OnTrip,
			Target: relay, Registerer: reg, Logger: log})
		if err != nil {
			l.close()
			return nil, err
		}
		l.trip = t
	}
	return l, nil
}

func (l *link) close() {
	if l.trip != nil {
		l.trip.Close()
	}
	if l.record != nil {
		if l.committed {
			l.record.Close()
		} else {
			l.record.abandon()
		}
	}
}

// describe logs what the link does and prints its scenario's phases.
func (l *link) describe(w io.Writer) {
	what, file := "profile", l.spec.ProfilePath
	if l.scen != nil {
		what, file = "scenario", l.spec.ScenarioPath
	}
	trip := "none"
	if l.trip != nil {
		from := "loopback"
		if l.spec.TripFrom.IsValid() {
			from = l.spec.TripFrom.String()
		}
		trip = fmt.Sprintf("%s from %s, %s", l.trip.Addr(), from, l.spec.OnTrip)
	}
	l.log.Info("relaying",
		what, file, "listen", l.relay.ListenAddr().String(),
		"controller_bind", l.relay.ControllerBindAddr().String(), "controller", l.spec.Controller.String(),
		"actuator", addrOr(l.spec.Actuator, "the sensor source"), "sensor", sensorText(l.spec.Sensor),
		"tap", addrOr(l.spec.Tap, "none"), "trip", trip, "seed", l.relay.Seed())
	if !l.spec.Sensor.IsValid() && !l.spec.Listen.Addr().IsLoopback() {
		l.log.Warn("the listen address is reachable from other hosts and no sensor is pinned: the first source to send becomes the rig's sensor and receives its commands; pin the rig's sensor node with --sensor (sensor: in a links file)",
			"listen", l.spec.Listen.String())
	}
	if l.scen != nil {
		prefix := ""
		if l.spec.Name != "" {
			prefix = "link " + l.spec.Name + ": "
		}
		l.scen.print(w, prefix)
	}
}

// runLinks opens every link, serves the metrics, and relays until SIGINT
// or SIGTERM (a second one abandons what is in flight), or until every
// scenario has ended with --exit-after-scenario. A link whose files do not
// load is an cli.InputError; a relay that fails while running is logged and
// ends the command with status 1.
func runLinks(specs []linkSpec, opts runOpts, stderr io.Writer, log *slog.Logger) error {
	reg := prometheus.NewRegistry()
	reg.MustRegister(collectors.NewGoCollector(), collectors.NewProcessCollector(collectors.ProcessCollectorOpts{}))
	var links []*link
	closeAll := func() {
		for _, l := range links {
			l.close()
		}
	}
	for _, s := range specs {
		lreg, llog := prometheus.Registerer(reg), log
		if !opts.singleLink {
			lreg = prometheus.WrapRegistererWith(prometheus.Labels{"link": s.Name}, reg)
			llog = log.With("link", s.Name)
		}
		l, err := openLink(s, opts, lreg, llog)
		if err != nil {
			closeAll()
			if !opts.singleLink {
				err = fmt.Errorf("link %q: %w", s.Name, err) // an cli.InputError stays one
			}
			return err
		}
		links = append(links, l)
	}
	// Signals are caught before anything is announced, so that a signal
	// right after the metrics endpoint is up finds the handler.
	sigs := make(chan os.Signal, 4)
	signal.Notify(sigs, syscall.SIGINT, syscall.SIGTERM, syscall.SIGHUP)
	defer signal.Stop(sigs)
	srv, err := metricsrv.Start(opts.metricsAddr, reg, log)
	if err != nil {
		closeAll()
		return fmt.Errorf("--metrics %s: %w", opts.metricsAddr, err)
	}
	defer srv.Close()

	// Everything is up: the records take their paths' places.
	for _, l := range links {
		if l.record == nil {
			continue
		}
		if err := l.record.commit(); err != nil {
			closeAll()
			return err
		}
		l.committed = true
	}

	if opts.cautionsRead {
		fmt.Fprint(stderr, trip.Reminder)
	} else {
		fmt.Fprint(stderr, safetyCaution)
	}
	for _, l := range links {
		l.describe(stderr)
	}

	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	for _, l := range links {
		l.reloads = make(chan struct{}, 1)
		go l.reloader(ctx)
	}
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
				for _, l := range links {
					select {
					case l.reloads <- struct{}{}:
					default: // one is pending already
					}
				}
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

	var wg sync.WaitGroup
	errs := make([]error, len(links))
	playErrs := make([]error, len(links))
	var scenarios sync.WaitGroup
	nScenarios := 0
	for i, l := range links {
		if l.trip != nil {
			go l.trip.Serve()
		}
		wg.Add(1)
		go func() {
			defer wg.Done()
			errs[i] = l.relay.Run(ctx, abort)
			if l.trip != nil {
				l.trip.Close()
			}
		}()
		if l.scen != nil {
			nScenarios++
			scenarios.Add(1)
			go func() {
				defer scenarios.Done()
				err := l.scen.play(ctx, l.relay, l.log)
				if err != nil && ctx.Err() == nil {
					playErrs[i] = err
					l.log.Error("scenario", "err", err)
					cancel()
					return
				}
				if err == nil && !opts.exitAfterScenario {
					l.log.Info("scenario ended: relaying on its last phase's profile until SIGTERM", "scenario", l.scen.name)
				}
			}()
		}
	}
	if opts.exitAfterScenario && nScenarios > 0 {
		go func() {
			scenarios.Wait()
			if ctx.Err() == nil {
				log.Info("stopping: the scenario ended (--exit-after-scenario)")
				cancel()
			}
		}()
	}
	wg.Wait()
	scenarios.Wait()
	srv.Close()
	code := 0
	for i, l := range links {
		if l.record != nil {
			l.record.Close()
		}
		for _, err := range []error{errs[i], playErrs[i]} {
			if err != nil {
				l.log.Error("relay", "err", err)
				code = 1
			}
		}
	}
	if code != 0 {
		return cli.Exit{Code: code} // the reasons are logged above
	}
	log.Info("stopped")
	return nil
}

// reloader runs the link's reloads until ctx is done.
func (l *link) reloader(ctx context.Context) {
	for {
		select {
		case <-ctx.Done():
			return
		case <-l.reloads:
			l.reload()
		}
	}
}

// sensorText is the --sensor pin for the log.
func sensorText(p netip.AddrPort) string {
	switch {
	case !p.IsValid():
		return "the first source to send"
	case p.Port() == 0:
		return p.Addr().String() + " (any port)"
	}
	return p.String()
}

// reload re-reads the link's profile file (SIGHUP); a link playing a
// scenario ignores it.
func (l *link) reload() {
	if l.scen != nil {
		l.log.Info("SIGHUP ignored: the link plays a scenario, which reloads nothing", "scenario", l.spec.ScenarioPath)
		return
	}
	p, err := profiles.Load(l.spec.ProfilePath)
	if err != nil {
		l.metrics.Reloads.WithLabelValues("error").Inc()
		l.log.Error("reload refused, keeping the running profile", "err", err)
		return
	}
	l.relay.Reload(p)
	l.log.Info("profile reloaded", "profile", p.File, "name", p.Name)
}
