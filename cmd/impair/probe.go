package main

import (
	"bufio"
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"math"
	"net"
	"os"
	"os/signal"
	"strconv"
	"sync"
	"syscall"
	"time"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/exitcode"
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

// Bounds of the probe flags.
const (
	maxProbeRate  = 100000.0
	maxProbes     = 10_000_000
	maxProbeWait  = time.Minute
	maxProbeBytes = 65507
)

// probeRec is what the prober knows of one probe.
type probeRec struct {
	sent      time.Duration // monotonic, since start
	rtt       time.Duration
	oneWay    time.Duration
	back      time.Duration
	copies    int
	reordered bool
}

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
	case *size < probeHeader || *size > maxProbeBytes:
		return fail("--size: want %d…%d bytes, got %d", probeHeader, maxProbeBytes, *size)
	case *duration <= 0:
		return fail("--duration: want a duration > 0, got %s", *duration)
	case *wait < 0 || *wait > maxProbeWait:
		return fail("--wait: want 0…1m, got %s", *wait)
	}
	n := int(math.Ceil(duration.Seconds() * *rate))
	if n > maxProbes {
		return fail("--rate × --duration: want at most %d probes, got %d", maxProbes, n)
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

	ctx, stop := signal.NotifyContext(context.Background(), syscall.SIGINT, syscall.SIGTERM)
	defer stop()
	p := &prober{conn: conn, recs: make([]probeRec, n), interval: time.Duration(float64(time.Second) / *rate), size: *size, start: time.Now()}
	log.Info("probing", "target", target.Addr.String(), "rate", *rate, "size", *size, "duration", duration.String(), "probes", n)

	var wg sync.WaitGroup
	wg.Add(1)
	go func() { defer wg.Done(); p.receiveLoop() }()
	progressDone := make(chan struct{})
	go func() { p.progressLoop(stderr, progressDone) }()
	sent := p.sendLoop(ctx)
	select {
	case <-ctx.Done():
	case <-time.After(*wait):
	}
	conn.Close() // ends receiveLoop with net.ErrClosed
	wg.Wait()
	close(progressDone)

	w := bufio.NewWriter(fh)
	writeTrace(w, p.recs[:sent], *rate, *size, *synced, target.Addr.String())
	if err := w.Flush(); err != nil {
		return fmt.Errorf("writing %s: %w", *out, err)
	}
	if err := fh.Close(); err != nil {
		return fmt.Errorf("writing %s: %w", *out, err)
	}
	lost := 0
	for _, r := range p.recs[:sent] {
		if r.copies == 0 {
			lost++
		}
	}
	log.Info("trace written", "file", *out, "probes", sent, "lost", lost)
	return nil
}

// prober sends probes and matches their replies. Its goroutines:
// sendLoop (the caller's), receiveLoop (ends when conn closes),
// progressLoop (ends when its channel closes).
type prober struct {
	conn     *net.UDPConn
	interval time.Duration
	size     int
	start    time.Time

	mu      sync.Mutex
	recs    []probeRec // by sequence number
	sent    int
	replies int
	highest int64 // highest sequence number with a reply; −1 none
}

// sendLoop sends the probes at their times (start + i·interval; a late
// one is sent at once and its real send time recorded) and returns how
// many were sent.
func (p *prober) sendLoop(ctx context.Context) int {
	buf := make([]byte, p.size)
	p.mu.Lock()
	p.highest = -1
	p.mu.Unlock()
	for i := range p.recs {
		due := time.Duration(i) * p.interval
		if d := due - time.Since(p.start); d > 0 {
			select {
			case <-ctx.Done():
				return p.count()
			case <-time.After(d):
			}
		} else if ctx.Err() != nil {
			return p.count()
		}
		p.mu.Lock()
		p.recs[i].sent = time.Since(p.start)
		p.sent = i + 1
		p.mu.Unlock()
		putProbe(buf, probeStamp{seq: uint64(i), sent: time.Now().UnixNano()})
		_, _ = p.conn.Write(buf) // a refused send is a lost probe
	}
	return p.count()
}

func (p *prober) count() int {
	p.mu.Lock()
	defer p.mu.Unlock()
	return p.sent
}

// receiveLoop matches replies to probes until the socket is closed.
func (p *prober) receiveLoop() {
	buf := make([]byte, 65536)
	for {
		n, err := p.conn.Read(buf)
		at := time.Since(p.start)
		wall := time.Now().UnixNano()
		if err != nil {
			if errors.Is(err, net.ErrClosed) {
				return
			}
			continue // e.g. a port-unreachable report: keep reading
		}
		st, err := readProbe(buf[:n])
		if err != nil {
			continue
		}
		p.mu.Lock()
		if st.seq < uint64(p.sent) {
			r := &p.recs[st.seq]
			r.copies++
			if r.copies == 1 {
				p.replies++
				r.rtt = at - r.sent
				r.oneWay = time.Duration(st.echoed - st.sent)
				r.back = time.Duration(wall - st.reply)
				if int64(st.seq) < p.highest {
					r.reordered = true
				} else {
					p.highest = int64(st.seq)
				}
			}
		}
		p.mu.Unlock()
	}
}

// progressLoop reports on w each second until done closes.
func (p *prober) progressLoop(w io.Writer, done <-chan struct{}) {
	t := time.NewTicker(time.Second)
	defer t.Stop()
	for {
		select {
		case <-done:
			return
		case <-t.C:
			p.mu.Lock()
			sent, replies := p.sent, p.replies
			p.mu.Unlock()
			pending := 100 * float64(sent-replies) / math.Max(1, float64(sent))
			fmt.Fprintf(w, "probe: %5.1fs  %d sent  %d replies  %.2f %% not (yet) answered\n", time.Since(p.start).Seconds(), sent, replies, pending)
		}
	}
}

func secs(d time.Duration) string { return strconv.FormatFloat(d.Seconds(), 'f', 9, 64) }

// writeTrace writes the trace format of trace.ReadTrace.
func writeTrace(w io.Writer, recs []probeRec, rate float64, size int, synced bool, target string) {
	fmt.Fprintln(w, trace.TraceHeaderComment)
	fmt.Fprintf(w, "# target: %s\n", target)
	fmt.Fprintf(w, "# interval_s: %s\n", strconv.FormatFloat(1/rate, 'g', -1, 64))
	fmt.Fprintf(w, "# size_bytes: %d\n", size)
	fmt.Fprintf(w, "# clocks_synced: %v\n", synced)
	fmt.Fprintln(w, "# times in seconds; send_s on the prober's monotonic clock since the first probe;")
	fmt.Fprintln(w, "# rtt_s on that clock; one_way_s and back_s from wall-clock stamps (only with clocks_synced)")
	fmt.Fprintln(w, "seq,send_s,status,rtt_s,one_way_s,back_s,copies,reordered")
	for i, r := range recs {
		status, rtt, ow, back := "lost", "", "", ""
		if r.copies > 0 {
			status, rtt = "delivered", secs(max(r.rtt, 0))
			if synced {
				// Synchronised clocks still differ by their residual offset; a
				// negative one-way delay is clipped to 0 (and says the offset
				// exceeds the delay).
				ow, back = secs(max(r.oneWay, 0)), secs(max(r.back, 0))
			}
		}
		reord := "0"
		if r.reordered {
			reord = "1"
		}
		fmt.Fprintf(w, "%d,%s,%s,%s,%s,%s,%d,%s\n", i, secs(r.sent), status, rtt, ow, back, r.copies, reord)
	}
}
