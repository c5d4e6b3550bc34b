package bench

import (
	"context"
	"fmt"
	"io"
	"log/slog"
	"net/netip"
	"time"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/collectors"

	"rigwire/emulate"
	"rigwire/estimate"
	"rigwire/estimate/engine"
	"rigwire/profiles"
)

// Config is what Open needs. Loop, Listen and Controller are required.
type Config struct {
	// Loop is the rig's loop; the relay applies its profile
	// (Loop.Profile), the prediction is for that same network, and the
	// monitor decodes the sensor datagrams with its decode section.
	Loop *profiles.Loop
	// Listen is the relay's sensor-side socket (port 0: an ephemeral one,
	// see Addrs); Controller is where sensor datagrams go; Actuator
	// receives the commands (zero: the latest sensor source).
	Listen, Controller, Actuator netip.AddrPort
	// Tolerance widens the measured interval by this fraction of its
	// bounds for the verdict; Warmup is skipped at the start of the
	// measurement (engine.Options).
	Tolerance float64
	Warmup    time.Duration
	// Seed of the relay's decisions, used only when SeedSet (else the
	// profile's, else random).
	Seed    uint64
	SeedSet bool
	Logger  *slog.Logger // nil: slog.Default()
}

// Bench is the relay and the monitor of one rig, wired in process.
type Bench struct {
	Loop       *profiles.Loop
	Prediction *estimate.Prediction
	Monitor    *engine.Monitor
	Relay      *emulate.Relay
	// Registry holds the relay's and the monitor's metrics, with the Go
	// runtime's and the process's; the bench serves nothing itself.
	Registry *prometheus.Registry
	log      *slog.Logger
	cfg      Config
	turns    *turnarounds // nil: the loop does not let the relay pair commands with samples
}

// InputError is an error of the loop or the profile (the prediction or
// the monitor refuse them), as opposed to one of the run (a socket).
type InputError struct{ Err error }

func (e *InputError) Error() string { return e.Err.Error() }
func (e *InputError) Unwrap() error { return e.Err }

// Open predicts, creates the monitor and the relay, and opens the relay's
// sockets. Nothing is relayed until Run.
func Open(cfg Config) (*Bench, error) {
	if cfg.Logger == nil {
		cfg.Logger = slog.Default()
	}
	b := &Bench{Loop: cfg.Loop, log: cfg.Logger, Registry: prometheus.NewRegistry(), cfg: cfg}
	var err error
	if b.Prediction, err = estimate.Predict(cfg.Loop, estimate.PredictOptions{}); err != nil {
		return nil, &InputError{fmt.Errorf("%s: prediction: %w", cfg.Loop.File, err)}
	}
	b.Monitor, err = engine.New(cfg.Loop, b.Prediction, engine.Options{Tolerance: cfg.Tolerance, Warmup: cfg.Warmup})
	if err != nil {
		return nil, &InputError{fmt.Errorf("%s: %w", cfg.Loop.File, err)}
	}
	b.Registry.MustRegister(collectors.NewGoCollector(), collectors.NewProcessCollector(collectors.ProcessCollectorOpts{}))
	if err := b.Monitor.RegisterMetrics(b.Registry); err != nil {
		return nil, fmt.Errorf("monitor metrics: %w", err)
	}
	rc := emulate.Config{Profile: cfg.Loop.Profile, TapFunc: b.Monitor.Feed, Metrics: emulate.NewMetrics(b.Registry),
		Listen: cfg.Listen, Controller: cfg.Controller, Actuator: cfg.Actuator,
		Seed: cfg.Seed, SeedSet: cfg.SeedSet, Logger: cfg.Logger}
	if l := cfg.Loop; l.Decode.Sequence != nil && l.CommandDecode.Sequence != nil {
		// The loop says where samples and commands carry their numbers:
		// the relay measures the controller's turnaround, which the bench
		// compares with the compute law the prediction assumes.
		b.turns = &turnarounds{}
		rc.Pairing = &emulate.Pairing{Sample: l.Decode, Command: l.CommandDecode, Observe: b.turns.observe}
	}
	if b.Relay, err = emulate.New(rc); err != nil {
		return nil, fmt.Errorf("relay: %w", err)
	}
	return b, nil
}

// Addrs are a bench's addresses, resolved.
type Addrs struct {
	// Listen is the relay's sensor-side socket as bound (an ephemeral
	// port resolved): where the rig's sensor node sends.
	Listen netip.AddrPort
	// ControllerBind is the relay's controller-facing socket as bound:
	// where the controller's commands go.
	ControllerBind netip.AddrPort
	// Controller is where the sensor datagrams go; Actuator where the
	// commands go (zero: the latest sensor source).
	Controller, Actuator netip.AddrPort
}

// Addrs returns the bench's addresses.
func (b *Bench) Addrs() Addrs {
	return Addrs{Listen: b.Relay.ListenAddr(), ControllerBind: b.Relay.ControllerBindAddr(),
		Controller: b.cfg.Controller, Actuator: b.cfg.Actuator}
}

// Stats is a snapshot of the relay's counts (emulate.Relay.Stats).
func (b *Bench) Stats() emulate.Stats { return b.Relay.Stats() }

// Run relays until ctx ends, writing the monitor's progress line to
// progress every period (0: never); then drains the relay (what it holds
// leaves at its due time) and returns the relay's error. A relay that
// fails (emulate.Relay.Run) ends Run at once, before ctx ends.
func (b *Bench) Run(ctx context.Context, progress io.Writer, every time.Duration) error {
	errc := make(chan error, 1)
	go func() { errc <- b.Relay.Run(ctx, nil) }()
	if every <= 0 {
		return <-errc
	}
	tick := time.NewTicker(every)
	defer tick.Stop()
	for {
		select {
		case <-ctx.Done():
			return <-errc
		case err := <-errc:
			return err
		case <-tick.C:
			fmt.Fprintln(progress, b.Monitor.Progress().String())
		}
	}
}
