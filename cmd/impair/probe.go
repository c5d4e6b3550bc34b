package main

import (
	"bufio"
	"fmt"
	"io"
	"log/slog"
	"math"
	"net"
	"os"
	"time"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/exitcode"
	"rigwire/emulate/probe"
	"rigwire/profiles/trace"
)

const probeUsage = `usage: impair probe --target HOST:PORT --rate R --size B --duration D
                    --out TRACE.csv [--clocks-synced] [--wait D]

Sends probe datagrams of B bytes (at least 36) to an impair echo at
--target, R per second for D, each with a sequence number and its send
time, and records each probe's fate in a trace: its round trip, or lost
(no reply within --wait, default 1s, after the last probe), duplicated
(more than one reply), reordered (its reply came after a later probe's).
With --clocks-synced (the prober's and the echo's clocks are synchronised,
e.g. the same machine, or PTP) it also records the one-way delays out and
back. Progress goes to stderr each second. SIGINT/SIGTERM stops sending
early; the trace is still written.

The trace is a CSV of our own (times in seconds, '#' comment lines with
metadata, then a header):

` + traceDoc

const traceDoc = `  # rigwire probe trace v1
  # interval_s: 0.002            (1/R)
  # size_bytes: 64
  # clocks_synced: true|false
  seq,send_s,status,rtt_s,one_way_s,back_s,copies,reordered

  seq        sequence number, from 0, one line per probe sent
  send_s     send time, seconds since the first probe (prober's monotonic clock)
  status     delivered | lost
  rtt_s      round trip of the first reply, seconds (empty when lost)
  one_way_s  outbound delay, seconds (empty when lost or clocks not synced)
  back_s     return delay, seconds (likewise)
  copies     replies received (0 lost, 1, more: duplicated)
  reordered  1 when the first reply came after a later probe's first reply
`

var probeExits = exitcode.Help(cli.PlainStatuses, map[int]string{
	exitcode.OK:       "the trace was written (also after SIGINT/SIGTERM)",
	exitcode.Failure:  "error while running (the socket, the trace file)",
	exitcode.BadInput: "bad usage",
})

// Bounds of the probe flags; a run sends at most trace.MaxTraceProbes
// probes, the most a trace holds.
const (
	maxProbeRate  = 100000.0
	maxProbeWait  = time.Minute
	maxProbeBytes = 65507
)

// cmdProbe is `impair probe`.
func cmdProbe(args []string, stdout, stderr io.Writer) error {
	fs := cli.NewFlags("impair probe", probeUsage, probeExits)
	var target cli.AddrFlag
	fs.Var(&target, "target", "`HOST:PORT` of the echo, or of a relay in front of it (required)")
	rate := fs.Float64("rate", 100, "probes per second")
	size := fs.Int("size", 64, "probe size in bytes (≥ 36)")
	duration := fs.Duration("duration", 10*time.Second, "how long to send")
	wait := fs.Duration("wait", time.Second, "how long to wait for replies after the last probe")
	synced := fs.Bool("clocks-synced", false, "the prober's and the echo's clocks are synchronised: record one-way delays")
	out := fs.String("out", "", "trace `FILE` to write (required)")
	if err := fs.Parse(args); err != nil {
		return err
	}
	fail := cli.Usagef
	switch {
	case fs.NArg() > 0:
		return fail("unexpected argument %q", fs.Arg(0))
	case !target.Given:
		return fail("--target: required")
	case *out == "":
		return fail("--out: required")
	case !(*rate > 0) || *rate > maxProbeRate:
		return fail("--rate: want a rate in (0, %g] per second, got %g", maxProbeRate, *rate)
	case *size < probe.HeaderLen || *size > maxProbeBytes:
		return fail("--size: want %d…%d bytes, got %d", probe.HeaderLen, maxProbeBytes, *size)
	case *duration <= 0:
		return fail("--duration: want a duration > 0, got %s", *duration)
	case *wait < 0 || *wait > maxProbeWait:
		return fail("--wait: want 0…1m, got %s", *wait)
	}
	n := int(math.Ceil(duration.Seconds() * *rate))
	if n > trace.MaxTraceProbes {
		return fail("--rate × --duration: want at most %d probes, got %d", trace.MaxTraceProbes, n)
	}
	log := slog.New(slog.NewTextHandler(stderr, nil))
	conn, err := net.DialUDP("udp", nil, net.UDPAddrFromAddrPort(target.Addr))
	if err != nil {
		return fmt.Errorf("--target %s: %w", target.Addr, err)
	}
	defer conn.Close()
	fh, err := os.Create(*out)
	if err != nil {
		return fmt.Errorf("--out: %w", err)
	}
	defer fh.Close()

	ctx, stop := cli.SignalContext()
	defer stop()
	log.Info("probing", "target", target.Addr.String(), "rate", *rate, "size", *size, "duration", duration.String(), "probes", n)
	recs, err := probe.Run(ctx, probe.Config{Conn: conn, Count: n, Interval: time.Duration(float64(time.Second) / *rate),
		Size: *size, Wait: *wait, Progress: stderr})
	if err != nil {
		return err
	}
	w := bufio.NewWriter(fh)
	probe.WriteTrace(w, recs, probe.TraceInfo{Target: target.Addr.String(), Rate: *rate, Size: *size, ClocksSynced: *synced})
	if err := w.Flush(); err != nil {
		return fmt.Errorf("writing %s: %w", *out, err)
	}
	if err := fh.Close(); err != nil {
		return fmt.Errorf("writing %s: %w", *out, err)
	}
	log.Info("trace written", "file", *out, "probes", len(recs), "lost", probe.Lost(recs))
	return nil
}
