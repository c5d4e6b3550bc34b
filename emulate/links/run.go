package links

import (
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"net/netip"
	"sync"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"rigwire/emulate"
	"rigwire/emulate/endpoint"
	"rigwire/emulate/trip"
	"rigwire/profiles"
)

// Options are the settings shared by every link of a run.
type Options struct {
	MaxDatagram, MaxInFlight int
	Spin                     time.Duration
	// TimeScale multiplies every duration of each link's scenario.
	TimeScale float64
	// ExitAfterScenario ends the run once every scenario has ended
	// (otherwise each link relays on its last phase's profile).
	ExitAfterScenario bool
	// Labelled gives each link's metrics the constant label link="NAME"
	// and its log lines link=NAME (a links file); without it the one link
	// of the flags has neither.
	Labelled bool
	// Inputs are input files of the run besides each link's profile or
	// scenario (the links file): no record may overwrite them.
	Inputs []string
}

// InputError is a link's profile, scenario or record path that does not
// load or is refused: an error of the run's input, not of running it.
type InputError struct{ Err error }

func (e *InputError) Error() string { return e.Err.Error() }
func (e *InputError) Unwrap() error { return e.Err }

// ErrFailed is Relay's error when a relay or a scenario failed while
// running; each failure has been logged.
var ErrFailed = errors.New("a link failed while running (logged)")

// Run is a set of open links.
type Run struct {
	links []*link
	opts  Options
	log   *slog.Logger
}

// link is one running link: its relay and what plays on it.
type link struct {
	spec    Spec
	log     *slog.Logger
	metrics *emulate.Metrics
	relay   *emulate.Relay
	record  *recordFile // nil without a record
	// committed: the record has taken its path's place (Commit, once
	// everything is up).
	committed bool
	// reloads asks the link's reloader to re-read its profile (Reload);
	// a request while one is pending is merged with it.
	reloads chan struct{}
	scen    *emulate.ScenarioPlan // nil with a profile
	trip    *trip.Listener        // nil without a trip socket
}

// Open loads every link's profile or scenario and opens its record, its
// relay and its trip socket, registering their metrics on reg (with the
// link label when opts.Labelled). A file that does not load is an
// *InputError; on any error what was opened is closed and records are
// abandoned. With opts.Labelled an error names the link, and the links
// file and line of its entry ("rigs.yaml:4: link "pump": record …").
// Nothing is relayed before Relay.
func Open(specs []Spec, opts Options, reg prometheus.Registerer, log *slog.Logger) (*Run, error) {
	r := &Run{opts: opts, log: log}
	for _, s := range specs {
		lreg, llog := reg, log
		if opts.Labelled {
			lreg = prometheus.WrapRegistererWith(prometheus.Labels{"link": s.Name}, reg)
			llog = log.With("link", s.Name)
		}
		l, err := openLink(s, opts, lreg, llog)
		if err != nil {
			r.Close()
			switch {
			case opts.Labelled && s.File != "":
				err = fmt.Errorf("%s:%d: link %q: %w", s.File, s.Line, s.Name, err) // an InputError stays one
			case opts.Labelled:
				err = fmt.Errorf("link %q: %w", s.Name, err)
			}
			return nil, err
		}
		r.links = append(r.links, l)
	}
	return r, nil
}

// openLink loads a link's profile or scenario and opens its relay and its
// trip socket. reg is where its metrics go.
func openLink(spec Spec, opts Options, reg prometheus.Registerer, log *slog.Logger) (*link, error) {
	l := &link{spec: spec, log: log, reloads: make(chan struct{}, 1)}
	var first *profiles.Profile
	if spec.ScenarioPath != "" {
		sc, err := emulate.LoadScenarioPlan(spec.ScenarioPath, opts.TimeScale)
		if err != nil {
			return nil, &InputError{err}
		}
		l.scen = sc
		first = sc.Steps[0].Profile
	} else {
		p, err := profiles.Load(spec.ProfilePath)
		if err != nil {
			return nil, &InputError{err}
		}
		first = p
	}
	l.metrics = emulate.NewMetrics(reg)
	if spec.RecordPath != "" {
		f, err := openRecord(spec.RecordPath, append([]string{spec.ProfilePath, spec.ScenarioPath}, opts.Inputs...))
		if err != nil {
			return nil, &InputError{err}
		}
		l.record = f
	}
	cfg := emulate.Config{
		Profile: first, Listen: spec.Listen, Controller: spec.Controller,
		Actuator: spec.Actuator, Sensor: spec.Sensor, RelockAfter: spec.RelockAfter,
		ControllerBind: spec.ControllerBind, Tap: spec.Tap,
		Seed: spec.Seed, SeedSet: spec.SeedSet,
		MaxDatagram: opts.MaxDatagram, MaxInFlight: opts.MaxInFlight, Spin: opts.Spin, SpinSet: true,
		Metrics: l.metrics, Logger: log, Pairing: spec.Pairing,
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

// Close closes every link's trip socket and record; a record not yet
// committed is abandoned (an earlier one at its path stays as it was).
func (r *Run) Close() {
	for _, l := range r.links {
		l.close()
	}
}

// Commit puts every record in its path's place: call it once everything
// the run needs is up (the metrics endpoint too), so that a start that
// fails leaves earlier records as they were.
func (r *Run) Commit() error {
	for _, l := range r.links {
		if l.record == nil {
			continue
		}
		if err := l.record.commit(); err != nil {
			r.Close()
			return err
		}
		l.committed = true
	}
	return nil
}

// Describe logs what each link does and prints its scenario's phases on w.
func (r *Run) Describe(w io.Writer) {
	for _, l := range r.links {
		l.describe(w)
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
		"actuator", addrOr(l.spec.Actuator, "the sensor source"), "sensor", endpoint.SenderText(l.spec.Sensor, "the first source to send"),
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
		l.scen.Print(w, prefix)
	}
}

// Reload asks every link to re-read its profile (SIGHUP); it does not
// wait. A link playing a scenario ignores it; a profile that does not load
// is refused and the running one kept. A request while one is pending is
// merged with it.
func (r *Run) Reload() {
	for _, l := range r.links {
		select {
		case l.reloads <- struct{}{}:
		default: // one is pending already
		}
	}
}

// Relay relays on every link until ctx ends (then each relay releases
// what it holds on time, or abandons it once abort closes), serving the
// trip sockets and playing the scenarios. It calls stop when the run must
// end on its own: a scenario failed, or every scenario ended with
// ExitAfterScenario. Once every relay has stopped it closes the records
// and returns nil, or ErrFailed when a relay or a scenario failed (each
// failure logged).
func (r *Run) Relay(ctx context.Context, stop func(), abort <-chan struct{}) error {
	reloadCtx, endReloads := context.WithCancel(ctx)
	defer endReloads()
	for _, l := range r.links {
		go l.reloader(reloadCtx)
	}
	var wg sync.WaitGroup
	errs := make([]error, len(r.links))
	playErrs := make([]error, len(r.links))
	var scenarios sync.WaitGroup
	nScenarios := 0
	for i, l := range r.links {
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
				err := l.scen.PlayOn(ctx, l.relay, l.log)
				if err != nil && ctx.Err() == nil {
					playErrs[i] = err
					l.log.Error("scenario", "err", err)
					stop()
					return
				}
				if err == nil && !r.opts.ExitAfterScenario {
					l.log.Info("scenario ended: relaying on its last phase's profile until SIGTERM", "scenario", l.scen.Name)
				}
			}()
		}
	}
	if r.opts.ExitAfterScenario && nScenarios > 0 {
		go func() {
			scenarios.Wait()
			if ctx.Err() == nil {
				r.log.Info("stopping: the scenario ended (--exit-after-scenario)")
				stop()
			}
		}()
	}
	wg.Wait()
	scenarios.Wait()
	failed := false
	for i, l := range r.links {
		if l.record != nil {
			l.record.Close()
		}
		for _, err := range []error{errs[i], playErrs[i]} {
			if err != nil {
				l.log.Error("relay", "err", err)
				failed = true
			}
		}
	}
	if failed {
		return ErrFailed
	}
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

// reload re-reads the link's profile file; a link playing a scenario
// ignores it.
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

// addrOr is an address for the log, or def when it is not set.
func addrOr(a netip.AddrPort, def string) string {
	if a.IsValid() {
		return a.String()
	}
	return def
}
