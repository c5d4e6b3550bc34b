package rig

import (
	"bufio"
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"math/rand/v2"
	"net"
	"net/netip"
	"runtime"
	"strconv"
	"sync"
	"time"

	"rigwire/emulate/internal/timer"
	"rigwire/profiles"
)

// NodeConfig is what a Node needs. Loop and Relay are required.
type NodeConfig struct {
	Loop *profiles.Loop
	// Listen is the node's socket: samples leave from it and commands
	// arrive at it (zero: an ephemeral loopback port).
	Listen netip.AddrPort
	// Relay is where the samples go: the relay's listen address, or the
	// controller itself for a run without a relay.
	Relay netip.AddrPort
	// Periods is how many samples to take (0: until the context ends).
	Periods int
	// Seed of the process and sensor noise.
	Seed uint64
	// Start is where the plant begins (zero value: at rest).
	Start Start
	// Log, when set, receives the sample log (SampleLogHeader).
	Log    io.Writer
	Logger *slog.Logger
}

// NoCommandWarnAfter is how long the node sends without any command coming
// back before it warns (once) that nothing answers: the relay is not
// running yet, or listens elsewhere (a closed port gives no error on an
// unconnected UDP socket).
const NoCommandWarnAfter = 2 * time.Second

// NodeStats count what the node did.
type NodeStats struct {
	Samples   uint64 // sample datagrams sent
	SendError uint64 // sample datagrams the socket refused
	Applied   uint64 // commands applied (newer than the last applied, within the horizon)
	Late      uint64 // commands arriving command_horizon·h or more after their sample (discarded)
	Duplicate uint64 // a command for the sample of the last one applied, again (discarded)
	Older     uint64 // a command older than the last one applied, overtaken on the way (discarded)
	Malformed uint64 // datagrams that are not commands, or for samples never taken
	// Overruns are samples sent a quarter period or more after t_k: the
	// host stalled the node (a loaded machine), and the loop saw extra
	// delay the profile does not hold.
	Overruns uint64
}

// Node is the rig's field side: the plant, its time-driven sensor and its
// actuator, on one UDP socket (estimate/model.md §1 steps 1 and 3).
//
// Each period h, at t_k = t₀ + k h on a precise ticker, it advances the
// plant to t_k with the held input, samples y_k = C x(t_k) + v_k and
// sends one datagram (Layout). A command for sample k arriving at T is
// applied at T if T − t_k < Na·h (Na the loop's command horizon, 1 by
// default) and k is above the last command applied — the plant is
// advanced to T with the old input and continues with u_k — and discarded
// otherwise, as late, duplicate or older (estimate/model.md §13). Several
// commands may be applied within one period, each at its own arrival.
// With the loop's actuator policy "zero" the input falls to zero at every
// t_k before the period's command arrives.
//
// Events are taken in time order: a command that arrives after t_{k+1}
// but is read before the ticker has woken first closes period k (takes
// sample k+1), so the plant never integrates backwards. The arrival time
// is the clock read after the datagram is read, under the node's lock.
type Node struct {
	cfg    NodeConfig
	log    *slog.Logger
	conn   *net.UDPConn
	rx     receiver
	layout Layout
	hNs    int64
	naNs   int64 // the command horizon, Na·h
	zero   bool

	mu    sync.Mutex
	plant *Plant    // guarded by mu
	u     []float64 // input held now; guarded by mu
	xt    int64     // time of the plant state; guarded by mu
	t0    int64     // time of sample 0; guarded by mu
	next  int       // next sample to take; guarded by mu
	// rows are the sample log's rows still open, a ring of Na (the
	// command horizon): row k sits at k mod Na until command k can no
	// longer arrive in time (t_{k+Na}), then it is written; guarded by mu.
	rows        []logRow
	lastApplied int64     // sequence of the last command applied, −1: none; guarded by mu
	stats       NodeStats // guarded by mu
	// silentWarned: the node has warned that no command came back
	// (NoCommandWarnAfter); guarded by mu.
	silentWarned bool
	y            []float64
	buf          []byte
	slog         *sampleLog
}

// NewNode checks the loop against what the simulated rig can do and
// opens the node's socket.
func NewNode(cfg NodeConfig) (*Node, error) {
	if cfg.Loop == nil {
		return nil, errors.New("rig node: no loop")
	}
	if !cfg.Relay.IsValid() {
		return nil, errors.New("rig node: no relay address")
	}
	layout, err := NewLayout(cfg.Loop)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", cfg.Loop.File, err)
	}
	if cfg.Logger == nil {
		cfg.Logger = slog.Default()
	}
	n, m, p, _ := cfg.Loop.Dims()
	if cfg.Start.X == nil {
		cfg.Start = RestStart(cfg.Loop)
	}
	if len(cfg.Start.X) != n || len(cfg.Start.U) != m {
		return nil, fmt.Errorf("rig node: start: want %d states and %d inputs, got %d and %d", n, m, len(cfg.Start.X), len(cfg.Start.U))
	}
	conn, err := listenUDP(cfg.Listen, cfg.Relay)
	if err != nil {
		return nil, fmt.Errorf("rig node: %w", err)
	}
	nd := &Node{
		cfg: cfg, log: cfg.Logger, conn: conn, layout: layout,
		hNs:         int64(cfg.Loop.Period*1e9 + 0.5),
		lastApplied: -1,
		zero:        cfg.Loop.Actuator.OnLoss == profiles.ZeroUnlessFresh,
		plant:       NewPlant(cfg.Loop.Plant, rand.New(rand.NewPCG(cfg.Seed, 0x6e6f6465))),
		u:           append([]float64(nil), cfg.Start.U...),
		y:           make([]float64, p),
		buf:         make([]byte, 0, 512),
	}
	_, na := cfg.Loop.Horizons()
	nd.naNs = int64(na) * nd.hNs
	nd.rx = newReceiver(conn)
	nd.plant.SetState(cfg.Start.X)
	nd.rows = make([]logRow, na)
	for i := range nd.rows {
		nd.rows[i] = logRow{y: make([]float64, p), u: make([]float64, m), k: -1}
	}
	if cfg.Log != nil {
		nd.slog = newSampleLog(cfg.Log, p, m)
	}
	return nd, nil
}

// listenUDP opens a UDP socket at ap; a zero ap is an ephemeral port on
// loopback when peer is on loopback, else on any address.
func listenUDP(ap, peer netip.AddrPort) (*net.UDPConn, error) {
	if !ap.IsValid() {
		if peer.Addr().IsLoopback() || !peer.IsValid() {
			ap = netip.AddrPortFrom(netip.AddrFrom4([4]byte{127, 0, 0, 1}), 0)
			if peer.Addr().Is6() && !peer.Addr().Is4In6() {
				ap = netip.AddrPortFrom(netip.IPv6Loopback(), 0)
			}
		} else {
			ap = netip.AddrPortFrom(netip.IPv4Unspecified(), 0)
		}
	}
	network := "udp4"
	if ap.Addr().Is6() && !ap.Addr().Is4In6() {
		network = "udp6"
	}
	c, err := net.ListenUDP(network, net.UDPAddrFromAddrPort(ap))
	if err != nil {
		return nil, fmt.Errorf("listen %s: %w", ap, err)
	}
	_ = c.SetReadBuffer(1 << 20)
	return c, nil
}

// LocalAddr is the node's socket address (where commands must come).
func (nd *Node) LocalAddr() netip.AddrPort { return nd.conn.LocalAddr().(*net.UDPAddr).AddrPort() }

// Stats returns the node's counts so far.
func (nd *Node) Stats() NodeStats {
	nd.mu.Lock()
	defer nd.mu.Unlock()
	return nd.stats
}

// Samples is how many samples have been taken so far.
func (nd *Node) Samples() int {
	nd.mu.Lock()
	defer nd.mu.Unlock()
	return nd.next
}

// Run takes Periods samples (or runs until ctx ends), closes the last
// period, flushes the sample log and closes the socket.
//
// Shutdown order: the ticker stops (after closing the last period), the
// receive loop is halted and ends within pollEvery, the socket closes,
// the log flushes.
func (nd *Node) Run(ctx context.Context) error {
	w, err := timer.NewPrecise()
	if err != nil {
		nd.rx.close()
		nd.conn.Close()
		return fmt.Errorf("rig node: %w", err)
	}
	defer w.Close()
	nd.mu.Lock()
	nd.t0 = Now() + 20e6 // 20 ms to settle before sample 0
	nd.xt = nd.t0
	nd.mu.Unlock()
	var recv sync.WaitGroup
	recv.Add(1)
	go func() { defer recv.Done(); nd.receiveLoop() }()
	nd.tickLoop(ctx, w)
	nd.rx.halt()
	recv.Wait()
	nd.rx.close()
	nd.conn.Close()
	if nd.slog != nil {
		if err := nd.slog.flush(); err != nil {
			return fmt.Errorf("sample log: %w", err)
		}
	}
	return nil
}

// tickLoop wakes at each t_k and takes the samples due, until Periods
// samples have been taken and the last period closed, or ctx ends.
func (nd *Node) tickLoop(ctx context.Context, w timer.Waiter) {
	runtime.LockOSThread()
	defer runtime.UnlockOSThread()
	for k := 0; nd.cfg.Periods == 0 || k <= nd.cfg.Periods; k++ {
		tk := nd.t0 + int64(k)*nd.hNs
		sleepUntil(w, tk)
		if ctx.Err() != nil {
			break
		}
		nd.mu.Lock()
		nd.catchUpLocked(Now())
		nd.mu.Unlock()
	}
	nd.mu.Lock()
	nd.flushRowsLocked()
	nd.mu.Unlock()
}

func (nd *Node) sampleTime(k int) int64 { return nd.t0 + int64(k)*nd.hNs }

// catchUpLocked takes every sample due by now: the plant is advanced to
// each t_k with the held input, the log row of sample k − Na (whose
// command can no longer arrive in time) is written, and sample k is sent.
func (nd *Node) catchUpLocked(now int64) {
	for {
		k := nd.next
		tk := nd.sampleTime(k)
		if tk > now || (nd.cfg.Periods > 0 && k > nd.cfg.Periods) {
			return
		}
		nd.plant.Advance(tk-nd.xt, nd.u)
		nd.xt = tk
		if nd.cfg.Periods > 0 && k == nd.cfg.Periods {
			nd.flushRowsLocked()
			nd.next++ // the end: no sample, the last period is closed
			return
		}
		row := &nd.rows[k%len(nd.rows)]
		nd.writeRowLocked(row)
		if nd.zero {
			clear(nd.u)
		}
		nd.plant.Sample(nd.y)
		if now-tk >= nd.hNs/4 {
			nd.stats.Overruns++
		}
		if !nd.silentWarned && nd.stats.Applied+nd.stats.Late+nd.stats.Duplicate+nd.stats.Older == 0 &&
			int64(k)*nd.hNs >= int64(NoCommandWarnAfter) {
			nd.silentWarned = true
			nd.log.Warn("rig node: no command has come back yet: is the relay (or the controller) running and listening there? The node keeps sending and holds its input",
				"sending_to", nd.cfg.Relay.String(), "samples_sent", nd.stats.Samples, "since", time.Duration(int64(k)*nd.hNs).String())
		}
		nd.buf = nd.layout.AppendSample(nd.buf[:0], uint64(k), tk, nd.y)
		if _, err := nd.conn.WriteToUDPAddrPort(nd.buf, nd.cfg.Relay); err != nil {
			nd.stats.SendError++
		} else {
			nd.stats.Samples++
		}
		row.k, row.t, row.tau = k, tk, -1
		copy(row.y, nd.y)
		copy(row.u, nd.u)
		nd.next++
	}
}

// writeRowLocked writes an open log row (none when r.k < 0) and empties it.
func (nd *Node) writeRowLocked(r *logRow) {
	if r.k < 0 {
		return
	}
	if nd.slog != nil {
		nd.slog.write(r)
	}
	r.k = -1
}

// flushRowsLocked writes every open log row, oldest first: the run ends.
func (nd *Node) flushRowsLocked() {
	na := len(nd.rows)
	for k := max(0, nd.next-na); k < nd.next; k++ {
		if r := &nd.rows[k%na]; r.k == k {
			nd.writeRowLocked(r)
		}
	}
}

// receiveLoop reads commands until the receiver is halted.
func (nd *Node) receiveLoop() {
	runtime.LockOSThread()
	defer runtime.UnlockOSThread()
	buf := make([]byte, 2048)
	_, m, _, _ := nd.cfg.Loop.Dims()
	u := make([]float64, m)
	for {
		n, _, err := nd.rx.recv(buf)
		if err != nil {
			if errors.Is(err, errStopped) {
				return
			}
			nd.log.Warn("rig node: read", "err", err)
			time.Sleep(10 * time.Millisecond)
			continue
		}
		var k uint64
		perr := errTruncated
		if n <= len(buf) {
			k, _, perr = ParseCommand(buf[:n], u)
		}
		nd.mu.Lock()
		now := max(Now(), nd.xt)
		nd.catchUpLocked(now)
		if perr != nil {
			nd.stats.Malformed++
		} else {
			nd.commandLocked(k, u, now)
		}
		nd.mu.Unlock()
	}
}

// commandLocked applies the timing policy to command k, arrived at
// now ≥ the plant's time, after the samples due by now were taken: applied
// at once — the plant advanced to now with the old input, then holding
// u — or counted as late, duplicate or older; a command for a sample not
// taken yet is malformed. Its age runs from t_k as the node itself took
// sample k (the t_k the command carries is not trusted), so that a
// command can never look younger than it is.
func (nd *Node) commandLocked(seq uint64, u []float64, now int64) {
	if seq >= uint64(nd.next) {
		nd.stats.Malformed++
		return
	}
	k := int(seq)
	age := now - nd.sampleTime(k)
	switch judge(age, nd.naNs, int64(k), nd.lastApplied) {
	case expired:
		nd.stats.Late++
	case repeated:
		nd.stats.Duplicate++
	case overtaken:
		nd.stats.Older++
	default:
		nd.plant.Advance(now-nd.xt, nd.u)
		nd.xt = now
		copy(nd.u, u)
		nd.lastApplied = int64(k)
		if r := &nd.rows[k%len(nd.rows)]; r.k == k {
			r.tau = age
		}
		nd.stats.Applied++
	}
}

// logRow is one sample of the sample log.
type logRow struct {
	k   int // −1: the row is empty
	t   int64
	y   []float64
	u   []float64 // input held at t_k
	tau int64     // arrival of command k after t_k, −1: none applied
}

// SampleLogHeader names the sample log's columns, for p outputs and m
// inputs: k, the sample time t_k (seconds, CLOCK_MONOTONIC), the outputs
// y_k as sent, the input the actuator held at t_k, and the delay after
// t_k at which command k was applied (empty when none was: lost, stale,
// late, duplicate or overtaken, or still on its way when the run ended).
// That delay is below the command horizon Na·h, so it may span several
// periods: row k is written once t_{k+Na} has passed (or the run ends),
// and rows come in order of k. The log says when the input changed: the
// changes within period k are the commands j whose t_j + delay falls in
// [t_k, t_{k+1}), in that order, and the input held at t_{k+1} is the
// last of them; the value of a command replaced within the period it
// arrived in is not logged (the controller that sent it knows it).
func SampleLogHeader(p, m int) string {
	b := []byte("k,t_seconds")
	for i := 1; i <= p; i++ {
		b = append(b, ",y"...)
		b = strconv.AppendInt(b, int64(i), 10)
	}
	for i := 1; i <= m; i++ {
		b = append(b, ",u"...)
		b = strconv.AppendInt(b, int64(i), 10)
	}
	return string(append(b, ",applied_after_seconds"...))
}

type sampleLog struct {
	w   *bufio.Writer
	b   []byte
	err error
}

func newSampleLog(w io.Writer, p, m int) *sampleLog {
	l := &sampleLog{w: bufio.NewWriterSize(w, 64<<10)}
	_, l.err = l.w.WriteString(SampleLogHeader(p, m) + "\n")
	return l
}

func (l *sampleLog) write(r *logRow) {
	b := strconv.AppendInt(l.b[:0], int64(r.k), 10)
	b = append(b, ',')
	b = appendSeconds(b, r.t)
	for _, v := range r.y {
		b = append(b, ',')
		b = strconv.AppendFloat(b, v, 'g', -1, 64)
	}
	for _, v := range r.u {
		b = append(b, ',')
		b = strconv.AppendFloat(b, v, 'g', -1, 64)
	}
	b = append(b, ',')
	if r.tau >= 0 {
		b = appendSeconds(b, r.tau)
	}
	b = append(b, '\n')
	if _, err := l.w.Write(b); err != nil && l.err == nil {
		l.err = err
	}
	l.b = b
}

func (l *sampleLog) flush() error {
	if err := l.w.Flush(); err != nil && l.err == nil {
		l.err = err
	}
	return l.err
}
