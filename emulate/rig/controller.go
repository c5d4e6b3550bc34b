package rig

import (
	"bufio"
	"container/heap"
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"math"
	"math/rand/v2"
	"net"
	"net/netip"
	"runtime"
	"strconv"
	"sync"
	"time"

	"rigwire/emulate/internal/timer"
	"rigwire/estimate/simstep"
	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// ControllerConfig is what a Controller needs. Loop is required.
type ControllerConfig struct {
	Loop *profiles.Loop
	// Listen is where samples arrive; commands go back to each sample's
	// source (zero: an ephemeral loopback port).
	Listen netip.AddrPort
	// Start.XC is the initial controller state (nil: zeros).
	Start  Start
	Logger *slog.Logger
	// Compute is the law of the controller's computing time, drawn afresh
	// for every sample (nil: the loop's compute_delay). A rig whose
	// computing time differs from what its loop file says is how the
	// bench's calibration is tested: a slow, jittery controller.
	Compute laws.Delay
	// Seed seeds the computing-time draws.
	Seed uint64
	// Log, when set, receives one CSV line per command sent
	// (ControllerLogHeader): the controller's own account of its timing.
	Log io.Writer
}

// ControllerLogHeader heads the controller's log: per command, the
// sample's sequence number, its arrival at the controller, the command's
// send time (both seconds on the rig clock, Now) and the computing time
// drawn.
const ControllerLogHeader = "seq,arrival_s,sent_s,compute_s\n"

// ControllerStats count what the controller did.
type ControllerStats struct {
	Used      uint64 // samples used: a command was sent for each
	Stale     uint64 // samples arriving sample_horizon·h or more after t_k (discarded)
	Duplicate uint64 // samples with the sequence number of the last one used, again (discarded)
	Older     uint64 // samples older than the last one used: overtaken on the way (discarded)
	Malformed uint64 // datagrams that do not decode as samples
	SendError uint64
}

// Controller is the event-driven controller of estimate/model.md §1 step 2. On a
// sample k that arrives at T with T − t_k < Ns·h (Ns the loop's sample
// horizon, 1 by default; else it is stale and discarded, leaving xc as it
// is) and is newer than the last one used (estimate/model.md §13), it
// computes, with e_k = r − y_k,
//
//	u_k = Cc xc + Dc e_k,   xc ← Ac xc + Bc e_k,
//
// and sends at T + c (c drawn for this sample from the loop's compute_delay
// or the configured Compute law; a sender of its own keeps the time, on a
// timer and a short spin, so that a long computation does not hold up the
// next sample: each sample's c is independent of the others', as
// estimate/model.md §14 takes it)
// "k,t_k,u_k" back to the sample's source. Its own stack and compute
// latency, a few tens of microseconds, add to τ (estimate/model.md §10).
type Controller struct {
	cfg    ControllerConfig
	log    *slog.Logger
	conn   *net.UDPConn
	rx     receiver
	layout Layout
	nsNs   int64 // the sample horizon, Ns·h
	comp   laws.Delay
	rng    *rand.Rand
	logw   *bufio.Writer

	mu    sync.Mutex
	stats ControllerStats // guarded by mu
}

// NewController checks the loop and opens the controller's socket.
func NewController(cfg ControllerConfig) (*Controller, error) {
	if cfg.Loop == nil {
		return nil, errors.New("rig controller: no loop")
	}
	layout, err := NewLayout(cfg.Loop)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", cfg.Loop.File, err)
	}
	if cfg.Logger == nil {
		cfg.Logger = slog.Default()
	}
	_, _, _, nc := cfg.Loop.Dims()
	if cfg.Start.XC == nil {
		cfg.Start.XC = make([]float64, nc)
	}
	if len(cfg.Start.XC) != nc {
		return nil, fmt.Errorf("rig controller: start: want %d controller states, got %d", nc, len(cfg.Start.XC))
	}
	conn, err := listenUDP(cfg.Listen, netip.AddrPort{})
	if err != nil {
		return nil, fmt.Errorf("rig controller: %w", err)
	}
	ns, _ := cfg.Loop.Horizons()
	c := &Controller{cfg: cfg, log: cfg.Logger, conn: conn, rx: newReceiver(conn), layout: layout,
		nsNs: int64(ns) * int64(cfg.Loop.Period*1e9+0.5), comp: cfg.Compute,
		rng: rand.New(rand.NewPCG(cfg.Seed, 0x636f6d70))}
	if c.comp == nil {
		c.comp = cfg.Loop.Compute
	}
	if c.comp == nil {
		c.comp = laws.Constant{Value: 0}
	}
	if cfg.Log != nil {
		c.logw = bufio.NewWriter(cfg.Log)
		c.logw.WriteString(ControllerLogHeader)
	}
	return c, nil
}

// LocalAddr is where the controller listens.
func (c *Controller) LocalAddr() netip.AddrPort {
	return c.conn.LocalAddr().(*net.UDPAddr).AddrPort()
}

// Stats returns the controller's counts so far.
func (c *Controller) Stats() ControllerStats {
	c.mu.Lock()
	defer c.mu.Unlock()
	return c.stats
}

// Run serves samples until ctx ends, then closes the socket.
//
// Shutdown order: ctx ends, the receiver is halted, the serve loop ends
// within pollEvery, the sender sends what is pending at its time, the log
// is flushed and the socket closes.
func (c *Controller) Run(ctx context.Context) error {
	done := make(chan struct{})
	go func() {
		select {
		case <-ctx.Done():
		case <-done:
		}
		c.rx.halt()
	}()
	w, err := timer.NewPrecise()
	if err != nil {
		close(done)
		c.rx.close()
		c.conn.Close()
		return fmt.Errorf("rig controller: %w", err)
	}
	q := &sendQueue{w: w, armedFor: math.MaxInt64}
	sent := make(chan struct{})
	go func() { c.sendLoop(q); close(sent) }()
	err = c.serveLoop(q)
	q.close()
	<-sent
	w.Close()
	if c.logw != nil {
		if ferr := c.logw.Flush(); ferr != nil && err == nil {
			err = fmt.Errorf("rig controller: log: %w", ferr)
		}
	}
	close(done)
	c.rx.close()
	c.conn.Close()
	return err
}

// serveLoop reads, decides and computes, and hands each command to the
// sender with its send time; it ends when the receiver is halted.
func (c *Controller) serveLoop(q *sendQueue) error {
	runtime.LockOSThread()
	defer runtime.UnlockOSThread()
	l := c.cfg.Loop
	_, m, p, nc := l.Dims()
	xc := append([]float64(nil), c.cfg.Start.XC...)
	xcn := make([]float64, nc)
	y, e, u, r := make([]float64, p), make([]float64, p), make([]float64, m), make([]float64, p)
	buf := make([]byte, 4096)
	last := int64(-1)
	for {
		n, src, err := c.rx.recv(buf)
		if err != nil {
			if errors.Is(err, errStopped) {
				return nil
			}
			c.log.Warn("rig controller: read", "err", err)
			time.Sleep(10 * time.Millisecond)
			continue
		}
		arrival := Now()
		var k uint64
		var tk int64
		perr := errTruncated
		if n <= len(buf) {
			k, tk, perr = c.layout.ParseSample(buf[:n], y)
		}
		c.mu.Lock()
		if perr != nil {
			c.stats.Malformed++
			c.mu.Unlock()
			continue
		}
		switch judge(arrival-tk, c.nsNs, int64(k), last) {
		case expired:
			c.stats.Stale++
			c.mu.Unlock()
			continue
		case repeated:
			c.stats.Duplicate++
			c.mu.Unlock()
			continue
		case overtaken:
			c.stats.Older++
			c.mu.Unlock()
			continue
		}
		c.mu.Unlock()
		last = int64(k)
		// r(t_k) from the sample's number, as the monitor computes it
		// (profiles.Loop.ReferenceAt): the setpoint, or a sine about it.
		l.ReferenceAt(k, r)
		for i := range e {
			e[i] = r[i] - y[i]
		}
		simstep.Controller(l.Controller, xc, xcn, e, u)
		comp := c.comp.Sample(c.rng)
		q.push(pendingCommand{due: arrival + int64(comp*1e9+0.5), arrival: arrival, k: k, comp: comp,
			out: AppendCommand(nil, k, tk, u), dst: src})
	}
}

// pendingCommand is a command computed and waiting for its send time.
type pendingCommand struct {
	due, arrival int64 // ns, rig clock
	k            uint64
	comp         float64 // the computing time drawn, seconds
	out          []byte
	dst          netip.AddrPort
}

// sendQueue holds the commands waiting for their send time. The serve
// loop pushes and, when a command is due before the time the sender's
// waiter is armed for, re-arms it (a timerfd may be re-armed from another
// thread while one waits on it, as the relay's release does).
type sendQueue struct {
	mu       sync.Mutex
	q        commandQueue
	w        timer.Waiter
	armedFor int64 // math.MaxInt64: disarmed
	closed   bool
}

func (s *sendQueue) push(p pendingCommand) {
	s.mu.Lock()
	heap.Push(&s.q, p)
	if p.due < s.armedFor {
		s.armedFor = p.due
		s.w.Arm(time.Duration(p.due - int64(timer.Slack) - Now()))
	}
	s.mu.Unlock()
}

func (s *sendQueue) close() {
	s.mu.Lock()
	s.closed = true
	s.armedFor = 0
	s.w.Arm(0)
	s.mu.Unlock()
}

// sendLoop sends each command at its time, earliest first, logs it and
// counts it: it sleeps on the waiter until timer.Slack before the earliest
// send time, then spins. It ends, after sending what is pending, once the
// queue is closed.
func (c *Controller) sendLoop(s *sendQueue) {
	runtime.LockOSThread()
	defer runtime.UnlockOSThread()
	var logBuf []byte
	for {
		s.mu.Lock()
		if len(s.q) == 0 {
			if s.closed {
				s.mu.Unlock()
				return
			}
			s.armedFor = math.MaxInt64
			s.w.Disarm()
			s.mu.Unlock()
			s.w.Wait()
			continue
		}
		next := s.q[0]
		if now := Now(); next.due-int64(timer.Slack) > now && !s.closed {
			s.armedFor = next.due
			s.w.Arm(time.Duration(next.due - int64(timer.Slack) - now))
			s.mu.Unlock()
			s.w.Wait()
			continue
		}
		heap.Pop(&s.q)
		s.mu.Unlock()
		for Now() < next.due {
		}
		_, err := c.conn.WriteToUDPAddrPort(next.out, next.dst)
		if c.logw != nil {
			lb := strconv.AppendUint(logBuf[:0], next.k, 10)
			lb = append(lb, ',')
			lb = appendSeconds(lb, next.arrival)
			lb = append(lb, ',')
			lb = appendSeconds(lb, Now())
			lb = append(lb, ',')
			lb = strconv.AppendFloat(lb, next.comp, 'g', 9, 64)
			lb = append(lb, '\n')
			logBuf = lb
			c.logw.Write(lb)
		}
		c.mu.Lock()
		if err != nil {
			c.stats.SendError++
		} else {
			c.stats.Used++
		}
		c.mu.Unlock()
	}
}

// commandQueue is a min-heap of pending commands by send time, then by
// sequence (container/heap).
type commandQueue []pendingCommand

func (q commandQueue) Len() int { return len(q) }
func (q commandQueue) Less(i, j int) bool {
	return q[i].due < q[j].due || (q[i].due == q[j].due && q[i].k < q[j].k)
}
func (q commandQueue) Swap(i, j int) { q[i], q[j] = q[j], q[i] }
func (q *commandQueue) Push(x any)   { *q = append(*q, x.(pendingCommand)) }
func (q *commandQueue) Pop() any {
	old := *q
	x := old[len(old)-1]
	*q = old[:len(old)-1]
	return x
}
