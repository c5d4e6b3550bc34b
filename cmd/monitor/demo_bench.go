package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"math"
	"net"
	"net/http"
	"sort"
	"strings"
	"sync"
	"time"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/collectors"
	"github.com/prometheus/client_golang/prometheus/promhttp"

	"rigwire/cmd/internal/cli"
	"rigwire/emulate"
	"rigwire/emulate/endpoint"
	"rigwire/emulate/trip"
	"rigwire/estimate"
	"rigwire/estimate/engine"
	"rigwire/profiles"
)

// bench is the relay and the monitor of one rig in one process: the relay
// engine hands every sensor datagram it accepts, before any impairment, to
// the monitor engine (emulate.Config.TapFunc → engine.Monitor.Feed), and
// both export their metrics on one registry.
type bench struct {
	loop  *profiles.Loop
	pred  *estimate.Prediction
	mon   *engine.Monitor
	relay *emulate.Relay
	reg   *prometheus.Registry
	srv   *http.Server
	url   string
	log   *slog.Logger
}

type benchConfig struct {
	loop        *profiles.Loop
	profile     *profiles.Profile // the relay's; nil: the loop's own
	listen      string            // the relay's sensor-side socket
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

// openBench predicts, creates the monitor and the relay and starts the
// metrics endpoint. Nothing is relayed until run.
func openBench(cfg benchConfig) (*bench, error) {
	b := &bench{loop: cfg.loop, log: cfg.log, reg: prometheus.NewRegistry()}
	var err error
	if b.pred, err = estimate.Predict(cfg.loop, estimate.PredictOptions{}); err != nil {
		return nil, cli.BadInput(fmt.Errorf("%s: prediction: %w", cfg.loop.File, err))
	}
	b.mon, err = engine.New(cfg.loop, b.pred, engine.Options{Tolerance: cfg.tolerance, Warmup: cfg.warmup})
	if err != nil {
		return nil, cli.BadInput(fmt.Errorf("%s: %w", cfg.loop.File, err))
	}
	b.reg.MustRegister(collectors.NewGoCollector(), collectors.NewProcessCollector(collectors.ProcessCollectorOpts{}))
	if err := b.mon.RegisterMetrics(b.reg); err != nil {
		return nil, fmt.Errorf("monitor metrics: %w", err)
	}
	prof := cfg.profile
	if prof == nil {
		prof = cfg.loop.Profile
	}
	rc := emulate.Config{Profile: prof, TapFunc: b.mon.Feed, Metrics: emulate.NewMetrics(b.reg),
		Seed: cfg.seed, SeedSet: cfg.seedSet, Logger: cfg.log}
	if rc.Listen, err = endpoint.Resolve(cfg.listen); err != nil {
		return nil, cli.Usagef("--listen: %v", err)
	}
	if rc.Controller, err = endpoint.Resolve(cfg.controller); err != nil {
		return nil, cli.Usagef("--controller: %v", err)
	}
	if cfg.actuator != "" {
		if rc.Actuator, err = endpoint.Resolve(cfg.actuator); err != nil {
			return nil, cli.Usagef("--actuator: %v", err)
		}
	}
	if b.relay, err = emulate.New(rc); err != nil {
		return nil, fmt.Errorf("relay: %w", err)
	}
	if cfg.metrics != "off" {
		ln, err := net.Listen("tcp", cfg.metrics)
		if err != nil && cfg.metricsNote != nil {
			fmt.Fprintf(cfg.metricsNote, "metrics: %s is taken (%v); using an ephemeral port\n", cfg.metrics, err)
			ln, err = net.Listen("tcp", "127.0.0.1:0")
		}
		if err != nil {
			return nil, fmt.Errorf("--metrics %s: %w", cfg.metrics, err)
		}
		mux := http.NewServeMux()
		mux.Handle("/metrics", promhttp.HandlerFor(b.reg, promhttp.HandlerOpts{Registry: b.reg}))
		b.srv = &http.Server{Handler: mux, ReadHeaderTimeout: 5 * time.Second}
		b.url = "http://" + ln.Addr().String() + "/metrics"
		go func() {
			if err := b.srv.Serve(ln); err != nil && !errors.Is(err, http.ErrServerClosed) {
				b.log.Error("metrics server", "err", err)
			}
		}()
	}
	return b, nil
}

// armTrip arms the loop's safety trip, when it has one: on the first
// crossing the relay takes the trip's action at once (before its next
// datagram), the trip is logged, and the returned channel closes. Without
// a trip section the channel never closes.
func (b *bench) armTrip(rule trip.Rule) (<-chan struct{}, error) {
	tripped := make(chan struct{})
	if !rule.Enabled {
		return tripped, nil
	}
	var once sync.Once
	err := b.mon.SetTrip(rule, func(ev trip.Event) {
		b.relay.Trip(rule.Action, ev.Reason)
		b.log.Warn("safety trip", "reason", ev.Reason, "value", ev.Value, "bound", ev.Bound,
			"phase", ev.Phase, "action", rule.Action.String())
		once.Do(func() { close(tripped) })
	})
	if err != nil {
		return nil, cli.BadInput(fmt.Errorf("%s: trip: %w", b.loop.File, err))
	}
	return tripped, nil
}

// run relays until ctx ends, printing the monitor's progress line to out
// every period (0: never); then drains the relay and stops the endpoint.
func (b *bench) run(ctx context.Context, out io.Writer, every time.Duration) error {
	errc := make(chan error, 1)
	go func() { errc <- b.relay.Run(ctx, nil) }()
	if every > 0 {
		tick := time.NewTicker(every)
	progress:
		for {
			select {
			case <-ctx.Done():
				break progress
			case <-tick.C:
				fmt.Fprintln(out, b.mon.Progress().String())
			}
		}
		tick.Stop()
	}
	err := <-errc
	if b.srv != nil {
		shut, done := context.WithTimeout(context.Background(), time.Second)
		_ = b.srv.Shutdown(shut)
		done()
	}
	return err
}

// relayCounts returns the relay's datagram counts, direction → outcome →
// count, from the registry.
func (b *bench) relayCounts() map[string]map[string]float64 {
	out := map[string]map[string]float64{}
	fams, err := b.reg.Gather()
	if err != nil {
		return out
	}
	for _, f := range fams {
		if f.GetName() != "rigwire_relay_datagrams_total" {
			continue
		}
		for _, m := range f.GetMetric() {
			var dir, outcome string
			for _, l := range m.GetLabel() {
				switch l.GetName() {
				case "direction":
					dir = l.GetValue()
				case "outcome":
					outcome = l.GetValue()
				}
			}
			if out[dir] == nil {
				out[dir] = map[string]float64{}
			}
			out[dir][outcome] += m.GetCounter().GetValue()
		}
	}
	return out
}

// report prints predicted and measured side by side, the verdict and the
// relay's counts per direction.
func (b *bench) report(w io.Writer, s *engine.Summary) {
	val := func(p *float64) string {
		if p == nil || math.IsNaN(*p) {
			return "-"
		}
		return fmt.Sprintf("%.5g", *p)
	}
	fmt.Fprintf(w, "\n%-26s %-14s %s\n", "", "predicted", fmt.Sprintf("measured (%g %% CI)", 100*s.Level))
	ci := "-"
	if s.CILow != nil && s.CIHigh != nil {
		ci = fmt.Sprintf("[%.5g, %.5g]", *s.CILow, *s.CIHigh)
	}
	fmt.Fprintf(w, "%-26s %-14s %s  %s\n", "E[eᵀe]", val(s.PredictedSecondMoment), val(s.ErrorSecondMoment), ci)
	var pstd *float64
	if b.pred.Error != nil {
		pstd = &b.pred.Error.Std
	}
	fmt.Fprintf(w, "%-26s %-14s %s\n", "error std", val(pstd), val(s.ErrorStd))
	fmt.Fprintf(w, "%-26s %-14s %s\n", "samples", "", fmt.Sprint(s.Samples))
	if s.Effective != nil {
		fmt.Fprintf(w, "%-26s %-14s %.0f (%d batches of %d)\n", "effective samples", "", *s.Effective, s.Batches, s.BatchSize)
	}
	fmt.Fprintf(w, "%-26s %-14s %s\n", "measured / predicted", "", val(s.Ratio))
	fmt.Fprintf(w, "\nverdict: %s (prediction against the measured interval widened by %g of its bounds): %s\n",
		s.Verdict, s.Tolerance, s.VerdictReason)
	counts := b.relayCounts()
	dirs := make([]string, 0, len(counts))
	for d := range counts {
		dirs = append(dirs, d)
	}
	sort.Strings(dirs)
	fmt.Fprintln(w, "\nrelay:")
	for _, d := range dirs {
		var parts []string
		outcomes := make([]string, 0, len(counts[d]))
		for o := range counts[d] {
			outcomes = append(outcomes, o)
		}
		sort.Strings(outcomes)
		for _, o := range outcomes {
			if v := counts[d][o]; v > 0 || o == emulate.OutcomeForwarded || o == emulate.OutcomeDropped {
				parts = append(parts, fmt.Sprintf("%s %.0f", o, v))
			}
		}
		fmt.Fprintf(w, "  %-24s %s\n", d, strings.Join(parts, ", "))
	}
}
