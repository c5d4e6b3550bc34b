package main

import (
	"fmt"
	"io"
	"math"
	"net"
	"time"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/collectors"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/exitcode"
	"rigwire/cmd/internal/metricsrv"
	"rigwire/emulate/endpoint"
	"rigwire/emulate/trip"
	"rigwire/estimate"
	"rigwire/estimate/engine"
	"rigwire/estimate/report"
	"rigwire/profiles"
)

// runCaution is printed when `monitor run` starts (same family as the
// relay's caution).
const runCaution = "SAFETY: the monitor only watches; it does not stop the rig.\n" + trip.Cautions

const runUsage = `usage: monitor run --loop LOOP.yaml --listen HOST:PORT [--metrics HOST:PORT] [--duration D]
                   [--summary FILE] [--tolerance X] [--min-samples N] [--warmup D]
                   [--strict] [--trip-to HOST:PORT] [--from HOST[:PORT]]
                   [--relay-metrics URL [--relay-link NAME]]

Receives the rig's sensor datagrams, decodes them with the loop's decode
section, estimates E[eᵀe] of e = setpoint − y online with a 95 % batch-means
confidence interval (on the log scale, so never below zero), compares it
with the prediction, serves Prometheus metrics and, at the end (--duration,
SIGINT or SIGTERM), writes a JSON summary with a verdict: above when the
predicted E[eᵀe] lies below the interval widened by --tolerance
([lo·(1 − tol), hi·(1 + tol)]), below when it lies above it, agree when it
lies inside and that interval is narrow enough to have shown a prediction
off by a factor of 2, inconclusive when the data cannot tell (fewer than
--min-samples samples, 400 by default, batches short for the loop's correlation time, or an
interval too wide to confirm; the summary's verdict_reason says which),
unstable when the prediction is not mean-square stable. Without
--strict the status is 0 once the summary is written, whatever the
verdict; a safety trip gives 8 either way.

Only the relay's tap should reach --listen. --from HOST (any port of that
address: the relay sends its taps from an ephemeral port) or --from
HOST:PORT decodes only what that source sends; a datagram from anyone else
is counted as a stranger (rigwire_monitor_stranger_datagrams_total, reason
other_host or other_port; stranger_datagrams in the summary) and never
decoded. Without --from every source is decoded: give it whenever --listen
is reachable from other hosts.

A datagram that does not decode is counted by reason and never used
(rigwire_monitor_decode_failures_total, decode_failures in the summary):
too_short, not_a_number (text that is not a decimal number: NaN and Inf
included), not_finite (a binary NaN or infinity, text beyond float64),
out_of_range (an output beyond ±1e50: the monitor sums the squares of each
sample's eᵀe, and they stay finite under that bound, so one absurd value
never poisons the run's estimate), bad_sequence, oversized
(--max-datagram).

With a trip section in the loop file the monitor checks every sample
against its bounds; when one is crossed it logs a warning and, with
--trip-to, sends the trip request "rigwire-trip 1 <reason>" (three copies,
UDP) to the relay's trip socket (impair run --trip-listen). The trip is no
emergency stop: keep one that does not depend on the link or on rigwire.

With --relay-metrics the monitor reads the relay's turnaround histogram
(impair run --loop: ` + turnaroundMetric + `)
every 10 s and at the end compares it with the loop's compute_delay
(Kolmogorov–Smirnov at the buckets' bounds), logs a warning when they
differ and adds controller_turnaround to the summary.
`

// runExits are the statuses of monitor run, in their order of precedence
// after 1 and 2: the trip first, then the --strict verdict.
var runExits = exitcode.Help(
	[]int{exitcode.OK, exitcode.Failure, exitcode.BadInput, exitcode.Tripped, exitcode.Above, exitcode.Below,
		exitcode.Inconclusive, exitcode.NotStable},
	map[int]string{
		exitcode.OK:           "the summary was written (with --strict: and the verdict is agree)",
		exitcode.Failure:      "error while running (a socket, the summary file)",
		exitcode.BadInput:     "bad usage, or a loop or profile file that does not load or validate (the message names file, line and key)",
		exitcode.Tripped:      "the loop's safety trip fired (before any verdict code)",
		exitcode.Above:        "with --strict: the measured E[eᵀe] lies above the prediction",
		exitcode.Below:        "with --strict: the measured E[eᵀe] lies below the prediction",
		exitcode.Inconclusive: "with --strict: the data cannot tell (too few samples, batches short for the loop's correlation time, or an interval too wide to confirm)",
		exitcode.NotStable:    "with --strict: the prediction is not mean-square stable (or marginal), so there is nothing to compare with",
	})

func cmdRun(args []string, stdout, stderr io.Writer) error {
	fs := cli.NewFlags("monitor run", runUsage, runExits)
	cautions := cautionsFlag(fs)
	var listen cli.AddrFlag
	var duration, warmup durationFlag
	loopPath := fs.String("loop", "", "loop description `FILE` (YAML, with a decode section)")
	fs.Var(&listen, "listen", "`HOST:PORT` where the sensor datagrams arrive (required)")
	metricsAddr := fs.String("metrics", "127.0.0.1:9472", "serve Prometheus metrics on `HOST:PORT` (\"off\": none; every interface only as 0.0.0.0:PORT or [::]:PORT)")
	fs.Var(&duration, "duration", "stop after `D` (a duration or seconds; default: run until SIGINT/SIGTERM)")
	summaryPath := fs.String("summary", "", "write the JSON summary to `FILE` (default: stdout)")
	tolerance := fs.Float64("tolerance", 0.1, "relative widening of the confidence interval for the verdict")
	minSamples := fs.Int("min-samples", engine.DefaultMinSamples, "least number of estimated samples for a verdict other than inconclusive (at least 20)")
	fs.Var(&warmup, "warmup", "skip the samples of the first `D` (by count: D / period)")
	strict := fs.Bool("strict", false, "exit with the verdict's status (3 above, 4 below, 5 inconclusive, 6 not stable)")
	windows := fs.String("windows", "1m,10m", "sliding windows, comma-separated durations")
	maxDatagram := fs.Int("max-datagram", engine.DefaultMaxDatagram, "longest datagram decoded, `bytes` (longer: counted as oversized)")
	progress := durationFlag{s: 1}
	fs.Var(&progress, "progress", "status line on stderr every `D` (a duration or seconds; 0: none)")
	noMargin := fs.Bool("no-margin", false, "skip the loss margin in the prediction")
	rcvBuf := fs.Int("receive-buffer", 4<<20, "socket receive buffer, `bytes`")
	from := cli.SenderFlag{Who: "the relay's tap"}
	fs.Var(&from, "from", "decode only datagrams from `HOST` (any port) or HOST:PORT, the relay's tap socket; others are counted as strangers, never decoded (default: any source)")
	var tripTo cli.AddrFlag
	fs.Var(&tripTo, "trip-to", "send the safety trip request to the relay's trip socket at `HOST:PORT` (needs a trip section in the loop)")
	var relay relayMetricsFlag
	relay.register(fs)
	logger := fs.LogLevel()
	if err := fs.Parse(args); err != nil {
		return err
	}
	switch {
	case fs.NArg() > 0:
		return cli.Usagef("unexpected argument %q", fs.Arg(0))
	case relay.link != "" && relay.url == "":
		return cli.Usagef("--relay-link: needs --relay-metrics")
	case *loopPath == "":
		return cli.Usagef("--loop: required")
	case !listen.Given:
		return cli.Usagef("--listen: required")
	case !(*tolerance >= 0) || math.IsInf(*tolerance, 0):
		return cli.Usagef("--tolerance: want a number ≥ 0, got %g", *tolerance)
	case *minSamples < 20 || *minSamples > 1_000_000_000:
		return cli.Usagef("--min-samples: want 20…1000000000 samples, got %d", *minSamples)
	case *maxDatagram < 1 || *maxDatagram > 65535:
		return cli.Usagef("--max-datagram: want 1…65535 bytes, got %d", *maxDatagram)
	case *rcvBuf < 0 || *rcvBuf > 1<<30:
		return cli.Usagef("--receive-buffer: want 0…1073741824 bytes, got %d", *rcvBuf)
	case cli.CheckMetricsAddr(*metricsAddr) != nil:
		return cli.CheckMetricsAddr(*metricsAddr)
	case from.Given && mixedFamilies(listen.Addr.Addr(), from.Addr.Addr()):
		return cli.Usagef("--from %s: an IPv%s address, but --listen %s takes IPv%s datagrams only; the tap could never match",
			from.Addr.Addr(), family(from.Addr.Addr()), listen.Addr, family(listen.Addr.Addr()))
	}
	wins, err := parseWindows(*windows)
	if err != nil {
		return err
	}
	log, err := logger(stderr)
	if err != nil {
		return err
	}

	loop, err := profiles.LoadLoop(*loopPath)
	if err != nil {
		return cli.BadInput(err)
	}
	if loop.Decode.Format == "" {
		return cli.BadInput(fmt.Errorf("%s: decode: missing (where the outputs sit in each sensor datagram)", *loopPath))
	}
	pred, err := estimate.Predict(loop, estimate.PredictOptions{SkipMargin: *noMargin})
	if err != nil {
		return cli.BadInput(fmt.Errorf("%s: prediction: %w", *loopPath, err))
	}
	mon, err := engine.New(loop, pred, engine.Options{
		Windows: wins, Warmup: time.Duration(warmup.s * 1e9), Tolerance: *tolerance, MinSamples: *minSamples, MaxDatagram: *maxDatagram,
	})
	if err != nil {
		return cli.BadInput(fmt.Errorf("%s: %w", *loopPath, err))
	}
	if tripTo.Given && !loop.Trip.Enabled {
		return cli.Usagef("--trip-to: %s has no trip section (the bounds that fire the trip)", *loopPath)
	}
	closeTrip, err := armRunTrip(mon, loop, tripTo, log)
	if err != nil {
		return err
	}
	defer closeTrip()

	if from.Given {
		mon.SetSource(from.Addr)
	}
	conn, err := net.ListenUDP("udp", net.UDPAddrFromAddrPort(listen.Addr))
	if err != nil {
		return fmt.Errorf("--listen %s: %w", listen.Addr, err)
	}
	if *rcvBuf > 0 {
		if err := conn.SetReadBuffer(*rcvBuf); err != nil {
			log.Warn("receive buffer", "err", err)
		}
	}
	reg := prometheus.NewRegistry()
	reg.MustRegister(collectors.NewGoCollector(), collectors.NewProcessCollector(collectors.ProcessCollectorOpts{}))
	if err := mon.RegisterMetrics(reg); err != nil {
		conn.Close()
		return err
	}
	srv, err := metricsrv.Start(*metricsAddr, reg, log)
	if err != nil {
		conn.Close()
		return fmt.Errorf("--metrics %s: %w", *metricsAddr, err)
	}
	defer srv.Close()

	fmt.Fprint(stderr, cautions(runCaution))
	report.WritePredictionLine(stderr, pred)
	log.Info("monitoring", "loop", *loopPath, "listen", conn.LocalAddr().String(), "from", endpoint.SenderText(from.Addr, "any source"),
		"decode", loop.Decode.Format, "warmup_samples", mon.WarmupSamples(), "tolerance", *tolerance)
	if !from.Given && !listen.Addr.Addr().IsLoopback() {
		log.Warn("--from not given: datagrams from any host that reaches --listen are decoded; give the relay's address (--from HOST) to count the others as strangers",
			"listen", listen.Addr.String())
	}

	// Shutdown order: the signal or the duration ends the serving; Serve
	// closes the socket and returns; the status lines stop; then the
	// metrics server stops and the summary is written from the final
	// state.
	ctx, cancel := cli.SignalContext()
	defer cancel()
	turnaround := relay.watch(ctx, loop, log)
	serveErr := mon.ServeFor(ctx, conn, time.Duration(duration.s*1e9), time.Duration(progress.s*1e9), stderr)
	cancel()
	srv.Close()
	sum := mon.Summary()
	sum.Turnaround = reportTurnaround(turnaround(), log)
	if err := writeSummary(stdout, *summaryPath, sum); err != nil {
		return err
	}
	if serveErr != nil {
		return fmt.Errorf("receiving: %w", serveErr)
	}
	fmt.Fprintln(stderr, sum.VerdictLine())
	for _, l := range sum.FrequencyLines() {
		fmt.Fprintln(stderr, l)
	}
	if code := exitcode.OfTrip(sum); code != 0 {
		return cli.Exit{Code: code}
	}
	if code := exitcode.OfRun(sum, *strict); code != 0 {
		return cli.Exit{Code: code}
	}
	return nil
}
