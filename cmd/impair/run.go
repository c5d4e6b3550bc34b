package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"log/slog"
	"os"
	"os/signal"
	"syscall"
	"time"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/collectors"

	"rigwire/cmd/internal/metricsrv"
	"rigwire/emulate"
	"rigwire/profiles"
)

// safetyCaution is printed before any datagram is relayed.
const safetyCaution = "SAFETY: the relay will delay and drop the commands that move your rig.\n" + emulate.SafetyCautions

func cmdRun(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("impair run", flag.ContinueOnError)
	fs.SetOutput(stderr)
	var listen, controller, actuator, sensor, upstream, tap addrFlag
	profilePath := fs.String("profile", "", "network profile `FILE` (YAML)")
	fs.Var(&listen, "listen", "`HOST:PORT` where the sensor node's datagrams arrive (required)")
	fs.Var(&controller, "controller", "`HOST:PORT` of the controller (required)")
	fs.Var(&actuator, "actuator", "`HOST:PORT` for commands (default: the source of the latest sensor datagram)")
	fs.Var(&sensor, "sensor", "accept sensor datagrams only from `HOST:PORT` (default: any source)")
	fs.Var(&upstream, "upstream", "local `HOST:PORT` of the socket that talks to the controller (default: an ephemeral port)")
	fs.Var(&tap, "tap", "send a copy of every sensor datagram, before impairment, to `HOST:PORT`")
	metricsAddr := fs.String("metrics", "127.0.0.1:9471", "serve Prometheus metrics on `HOST:PORT` (\"off\": none)")
	recordPath := fs.String("record", "", "write one line per datagram to `FILE`")
	seed := fs.Uint64("seed", 0, "seed of the decisions (default: the profile's, else random)")
	maxDatagram := fs.Int("max-datagram", emulate.DefaultMaxDatagram, "longest datagram accepted, `bytes`")
	maxInFlight := fs.Int("max-in-flight", emulate.DefaultMaxInFlight, "datagrams held at most per direction")
	spin := fs.Duration("spin", emulate.DefaultSpin, "spin this long before each release instead of sleeping (0: never)")
	logLevel := fs.String("log-level", "info", "debug, info, warn or error")
	if err := fs.Parse(args); err != nil {
		return 2
	}
	fail := func(format string, a ...any) int {
		fmt.Fprintf(stderr, "impair run: "+format+"\n", a...)
		return 2
	}
	if fs.NArg() > 0 {
		return fail("unexpected argument %q", fs.Arg(0))
	}
	switch {
	case *profilePath == "":
		return fail("--profile: required")
	case !listen.set:
		return fail("--listen: required")
	case !controller.set:
		return fail("--controller: required")
	case *maxDatagram < 1 || *maxDatagram > 65535:
		return fail("--max-datagram: want 1…65535 bytes, got %d", *maxDatagram)
	case *maxInFlight < 1 || *maxInFlight > 1<<20:
		return fail("--max-in-flight: want 1…1048576, got %d", *maxInFlight)
	case *spin < 0 || *spin > 10*time.Millisecond:
		return fail("--spin: want 0…10ms, got %s", *spin)
	}
	var level slog.Level
	if err := level.UnmarshalText([]byte(*logLevel)); err != nil {
		return fail("--log-level: want debug, info, warn or error, got %q", *logLevel)
	}
	log := slog.New(slog.NewTextHandler(stderr, &slog.HandlerOptions{Level: level}))

	prof, err := profiles.Load(*profilePath)
	if err != nil {
		fmt.Fprintf(stderr, "impair run: %v\n", err)
		return 2
	}
	seedSet := false
	fs.Visit(func(f *flag.Flag) { seedSet = seedSet || f.Name == "seed" })

	reg := prometheus.NewRegistry()
	reg.MustRegister(collectors.NewGoCollector(), collectors.NewProcessCollector(collectors.ProcessCollectorOpts{}))
	metrics := emulate.NewMetrics(reg)

	var record *os.File
	if *recordPath != "" {
		if record, err = os.Create(*recordPath); err != nil {
			return fail("--record: %v", err)
		}
		defer record.Close()
	}
	cfg := emulate.Config{
		Profile: prof, Listen: listen.ap, Controller: controller.ap,
		Actuator: actuator.ap, Sensor: sensor.ap, Upstream: upstream.ap, Tap: tap.ap,
		Seed: *seed, SeedSet: seedSet,
		MaxDatagram: *maxDatagram, MaxInFlight: *maxInFlight, Spin: *spin, SpinSet: true,
		Metrics: metrics, Logger: log,
	}
	if record != nil {
		cfg.Record = record
	}
	relay, err := emulate.New(cfg)
	if err != nil {
		fmt.Fprintf(stderr, "impair run: %v\n", err)
		return 1
	}

	srv, err := metricsrv.Start(*metricsAddr, reg, log)
	if err != nil {
		return fail("--metrics %s: %v", *metricsAddr, err)
	}
	defer srv.Close()

	fmt.Fprint(stderr, safetyCaution)
	log.Info("relaying",
		"profile", prof.File, "listen", relay.ListenAddr().String(),
		"upstream", relay.UpstreamAddr().String(), "controller", controller.ap.String(),
		"actuator", orDefault(actuator, "latest sensor source"), "tap", orDefault(tap, "none"),
		"seed", relay.Seed())

	ctx, cancel := context.WithCancel(context.Background())
	abort := make(chan struct{})
	sigs := make(chan os.Signal, 4)
	signal.Notify(sigs, syscall.SIGINT, syscall.SIGTERM, syscall.SIGHUP)
	defer signal.Stop(sigs)
	go func() {
		stopping := false
		for s := range sigs {
			switch {
			case s == syscall.SIGHUP:
				p, err := profiles.Load(*profilePath)
				if err != nil {
					metrics.Reloads.WithLabelValues("error").Inc()
					log.Error("reload refused, keeping the running profile", "err", err)
					continue
				}
				relay.Reload(p)
				log.Info("profile reloaded", "profile", p.File, "name", p.Name)
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
	runErr := relay.Run(ctx, abort)
	srv.Close()
	if runErr != nil {
		log.Error("relay", "err", runErr)
		return 1
	}
	log.Info("stopped")
	return 0
}

func orDefault(a addrFlag, def string) string {
	if a.set {
		return a.ap.String()
	}
	return def
}
