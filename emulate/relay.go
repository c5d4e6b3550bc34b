package emulate

import (
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"math/rand/v2"
	"net"
	"net/netip"
	"os"
	"runtime/debug"
	"sync"
	"sync/atomic"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"rigwire/emulate/internal/timer"
	"rigwire/profiles"
	"rigwire/profiles/markov"
)

// Config is what a Relay needs. Listen and Controller are required.
type Config struct {
	Profile *profiles.Profile
	// Listen is where the sensor node's datagrams arrive; commands for the
	// actuator leave from the same socket.
	Listen netip.AddrPort
	// Controller is where sensor datagrams go; its replies to the relay's
	// controller-facing socket are the commands.
	Controller netip.AddrPort
	// Actuator receives the commands; zero: the rig's sensor source (see
	// Sensor). Commands that arrive before that source is known are
	// counted as no_actuator and dropped.
	Actuator netip.AddrPort
	// Sensor pins the rig's sensor source. With an address and a port only
	// that source is accepted at Listen; with port 0 only that address, on
	// the first port it sends from. Zero: the relay locks onto the first
	// source that sends to Listen. Every other source is a stranger:
	// counted, never forwarded, never sent commands.
	Sensor netip.AddrPort
	// RelockAfter, when > 0, lets another source (one the pin allows) take
	// the sensor's place once the locked source has been silent this long:
	// the way back in for a rig node that restarted on a new port. Each
	// change is logged and counted. Zero: the lock holds for the run.
	RelockAfter time.Duration
	// ControllerBind is the local address of the socket that talks to the
	// controller; zero: an ephemeral port (on loopback if the controller is
	// on loopback).
	ControllerBind netip.AddrPort
	// Tap, when set, receives a copy of every accepted sensor datagram as
	// it arrived, before any impairment.
	Tap netip.AddrPort
	// TapFunc, when set, is called with every accepted sensor datagram as it
	// arrived (the payload is only valid during the call); for a monitor in
	// the same process.
	TapFunc func(payload []byte, arrival time.Time)
	// Seed of the decisions; used only when SeedSet (else the profile's
	// seed, else a random one, which Seed reports).
	Seed    uint64
	SeedSet bool
	// MaxDatagram is the longest payload accepted (default 4096 bytes);
	// longer ones are counted as oversized and dropped.
	MaxDatagram int
	// MaxInFlight bounds the datagrams each direction holds (default 2048);
	// beyond it they are counted as overflow and dropped.
	MaxInFlight int
	// Spin is how long before a due time the release goroutine stops
	// sleeping and spins (default 50µs; 0 never spins).
	Spin    time.Duration
	SpinSet bool
	// Record, when set, receives one line per datagram (RecordHeader).
	Record io.Writer
	// Metrics, when nil, are created on a private registry.
	Metrics *Metrics
	Logger  *slog.Logger
	// portableTimers makes the release goroutines sleep on Go timers (for
	// tests under testing/synctest).
	portableTimers bool
	// conns replaces the sockets (tests).
	conns *testConns
}

type testConns struct{ listen, ctlSide, tap batchConn }

// Relay impairs the two directions of one rig's link.
type Relay struct {
	cfg    Config
	log    *slog.Logger
	seed   uint64
	epoch  time.Time
	m      *Metrics
	listen batchConn // sensor side: sensor datagrams in, commands out
	up     batchConn // controller side: sensor datagrams out, commands in
	tap    batchConn // nil without Tap
	rec    *recorder
	sc, ca *direction

	// sensorSrc is the locked sensor source (zero until the first
	// datagram; guarded by srcMu): the command side sends to it when no
	// Actuator is given.
	srcMu     sync.Mutex
	sensorSrc netip.AddrPort
	lock      sourceLock // owned by the sensor side's receive goroutine

	tapSent, tapFailed prometheus.Counter

	closing atomic.Bool

	// ctlMu serialises the changes of channel: Reload, Play's steps, Trip.
	ctlMu   sync.Mutex
	tripped atomic.Bool
}

// Defaults of Config.
const (
	DefaultMaxDatagram = 4096
	DefaultMaxInFlight = 2048
	DefaultSpin        = 50 * time.Microsecond
)

// New opens the relay's sockets. Nothing is read until Run.
func New(cfg Config) (*Relay, error) {
	if cfg.Profile == nil {
		return nil, errors.New("relay: no profile")
	}
	if !cfg.Listen.IsValid() || !cfg.Controller.IsValid() {
		return nil, errors.New("relay: the listen and controller addresses are required")
	}
	if cfg.Sensor.IsValid() && cfg.Sensor.Addr().IsUnspecified() {
		return nil, fmt.Errorf("relay: sensor %s: no datagram comes from an unspecified address; want the sensor node's address", cfg.Sensor)
	}
	if cfg.RelockAfter < 0 {
		return nil, fmt.Errorf("relay: relock interval %s: want ≥ 0", cfg.RelockAfter)
	}
	if err := CheckFamilies(cfg); err != nil {
		return nil, err
	}
	if cfg.MaxDatagram <= 0 {
		cfg.MaxDatagram = DefaultMaxDatagram
	}
	if cfg.MaxInFlight <= 0 {
		cfg.MaxInFlight = DefaultMaxInFlight
	}
	if !cfg.SpinSet {
		cfg.Spin = DefaultSpin
	}
	if cfg.Logger == nil {
		cfg.Logger = slog.Default()
	}
	if cfg.Metrics == nil {
		cfg.Metrics = NewMetrics(prometheus.NewRegistry())
	}
	r := &Relay{cfg: cfg, log: cfg.Logger, m: cfg.Metrics, epoch: time.Now(),
		tapSent:   cfg.Metrics.Tap.WithLabelValues("sent"),
		tapFailed: cfg.Metrics.Tap.WithLabelValues(OutcomeSendError),
		lock:      sourceLock{pin: unmapped(cfg.Sensor), relockAfter: int64(cfg.RelockAfter)}}
	switch {
	case cfg.SeedSet:
		r.seed = cfg.Seed
	case cfg.Profile.HasSeed:
		r.seed = cfg.Profile.Seed
	default:
		r.seed = rand.Uint64()
	}
	if err := r.openSockets(); err != nil {
		r.closeSockets()
		return nil, err
	}
	if cfg.Record != nil {
		rec, err := newRecorder(cfg.Record, r.m.RecordLost)
		if err != nil {
			r.closeSockets()
			return nil, fmt.Errorf("record: %w", err)
		}
		r.rec = rec
	}
	var err error
	if r.sc, err = r.newDirection(profiles.SensorToController, cfg.Profile.SensorToController, 1, r.up); err == nil {
		r.ca, err = r.newDirection(profiles.ControllerToActuator, cfg.Profile.ControllerToActuator, 3, r.listen)
	}
	if err != nil {
		r.closeSockets()
		return nil, err
	}
	return r, nil
}

func (r *Relay) newDirection(name string, ch *markov.Channel, stream uint64, out batchConn) (*direction, error) {
	w := timer.NewPortable()
	precise := !r.cfg.portableTimers
	if precise {
		pw, err := timer.NewPrecise()
		if err != nil {
			return nil, fmt.Errorf("%s: %w", name, err)
		}
		w = pw
	}
	return newDirection(dirConfig{
		name: name, ch: ch, seed: r.seed, stream: stream, out: out,
		metrics: r.m, rec: r.rec, epoch: r.epoch,
		maxInFlight: r.cfg.MaxInFlight, bufLen: r.cfg.MaxDatagram,
		spin: r.cfg.Spin, w: w, lockThread: precise,
	}), nil
}

func (r *Relay) openSockets() error {
	if r.cfg.conns != nil {
		r.listen, r.up, r.tap = r.cfg.conns.listen, r.cfg.conns.ctlSide, r.cfg.conns.tap
		return nil
	}
	var err error
	if r.listen, err = openUDP(r.cfg.Listen); err != nil {
		return fmt.Errorf("listen %s: %w", r.cfg.Listen, err)
	}
	up := r.cfg.ControllerBind
	if !up.IsValid() {
		up = ephemeralFor(r.cfg.Controller)
	}
	if r.up, err = openUDP(up); err != nil {
		return fmt.Errorf("controller-facing socket %s: %w", up, err)
	}
	if r.cfg.Tap.IsValid() {
		if r.tap, err = openUDP(ephemeralFor(r.cfg.Tap)); err != nil {
			return fmt.Errorf("tap socket: %w", err)
		}
	}
	return nil
}

// unmapped spells an IPv4-mapped IPv6 address as IPv4, as the sockets
// report sources.
func unmapped(ap netip.AddrPort) netip.AddrPort {
	if !ap.IsValid() {
		return ap
	}
	return netip.AddrPortFrom(ap.Addr().Unmap(), ap.Port())
}

// ephemeralFor is a local address with an ephemeral port from which dst
// can be reached: loopback for a loopback destination, else any address
// of dst's family.
func ephemeralFor(dst netip.AddrPort) netip.AddrPort {
	a := dst.Addr()
	switch {
	case a.IsLoopback():
		return netip.AddrPortFrom(a, 0)
	case a.Is4() || a.Is4In6():
		return netip.AddrPortFrom(netip.IPv4Unspecified(), 0)
	default:
		return netip.AddrPortFrom(netip.IPv6Unspecified(), 0)
	}
}

func openUDP(ap netip.AddrPort) (batchConn, error) {
	network := "udp4"
	if ap.Addr().Is6() && !ap.Addr().Is4In6() {
		network = "udp6"
	}
	uc, err := net.ListenUDP(network, net.UDPAddrFromAddrPort(ap))
	if err != nil {
		return nil, err
	}
	_ = uc.SetReadBuffer(4 << 20)
	_ = uc.SetWriteBuffer(4 << 20)
	c, err := newBatchConn(uc)
	if err != nil {
		uc.Close()
		return nil, err
	}
	return c, nil
}

func (r *Relay) closeSockets() {
	for _, c := range []batchConn{r.listen, r.up, r.tap} {
		if c != nil {
			c.close()
		}
	}
}

// Seed is the seed of this run's decisions.
func (r *Relay) Seed() uint64 { return r.seed }

// ListenAddr and ControllerBindAddr are the relay's two socket addresses.
func (r *Relay) ListenAddr() netip.AddrPort         { return r.listen.localAddr() }
func (r *Relay) ControllerBindAddr() netip.AddrPort { return r.up.localAddr() }

// Metrics are the relay's metrics.
func (r *Relay) Metrics() *Metrics { return r.m }

// InFlight is how many datagrams each direction holds now.
func (r *Relay) InFlight() (sensorToController, controllerToActuator int) {
	return r.sc.inFlight(), r.ca.inFlight()
}

// Reload puts both directions on p's channels from now on. Datagrams
// already scheduled keep their release times. After the safety trip it
// changes nothing (logged, and counted with result "ignored").
func (r *Relay) Reload(p *profiles.Profile) {
	if r.apply(p, "reload") {
		r.m.Reloads.WithLabelValues("ok").Inc()
	} else {
		r.m.Reloads.WithLabelValues("ignored").Inc()
	}
}

// apply puts both directions on p's channels unless the trip has fired;
// it reports whether it did. why names the caller in the log.
func (r *Relay) apply(p *profiles.Profile, why string) bool {
	r.ctlMu.Lock()
	defer r.ctlMu.Unlock()
	if r.tripped.Load() {
		r.log.Warn("profile change ignored: the safety trip has fired", "by", why)
		return false
	}
	// Trip holds ctlMu too, so both directions are still untripped here.
	r.sc.changeChannel(p.SensorToController)
	r.ca.changeChannel(p.ControllerToActuator)
	r.cfg.Profile = p
	return true
}

// Run relays until ctx is done, then stops reading, releases everything
// still scheduled at its due time, and returns. If abort is closed while
// draining, what is left is counted as shutdown and Run returns at once.
//
// Shutdown order: receive loops end (read deadline in the past), then each
// direction drains and its release goroutine ends, then the recorder
// flushes, then the sockets and timers close.
//
// A goroutine of the relay that fails (a panic: a bug) ends the run the
// same way, and Run returns its error; what a failed release goroutine
// held is counted as shutdown.
func (r *Relay) Run(ctx context.Context, abort <-chan struct{}) error {
	var recv, rel sync.WaitGroup
	failed := make(chan error, 4)
	guard := func(wg *sync.WaitGroup, what string, f func()) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			defer func() {
				if p := recover(); p != nil {
					err := fmt.Errorf("relay %s failed: %v", what, p)
					r.log.Error("relay goroutine failed: stopping the run", "goroutine", what, "panic", fmt.Sprint(p), "stack", string(debug.Stack()))
					failed <- err
				}
			}()
			f()
		}()
	}
	for _, d := range []*direction{r.sc, r.ca} {
		guard(&rel, "release "+d.name, d.releaseLoop)
	}
	sensor := &side{in: r.listen, dir: r.sc, sensor: true}
	command := &side{in: r.up, dir: r.ca, from: unmapped(r.cfg.Controller)}
	for _, s := range []*side{sensor, command} {
		guard(&recv, "receive "+s.dir.name, func() { r.receiveLoop(s) })
	}

	var runErr error
	select {
	case <-ctx.Done():
	case runErr = <-failed:
	}
	r.closing.Store(true)
	past := time.Now().Add(-time.Second)
	r.listen.setReadDeadline(past)
	r.up.setReadDeadline(past)
	recv.Wait()

	sc, ca := r.InFlight()
	r.log.Info("draining", "sensor_to_controller", sc, "controller_to_actuator", ca)
	drained := make(chan struct{})
	go func() {
		r.sc.stop(true)
		r.ca.stop(true)
		rel.Wait()
		close(drained)
	}()
	select {
	case <-drained:
	case <-abort:
		r.sc.stop(false)
		r.ca.stop(false)
		<-drained
	}
	// A release goroutine that failed left its schedule behind.
	for _, d := range []*direction{r.sc, r.ca} {
		if d.mu.TryLock() {
			d.abortLocked()
			d.mu.Unlock()
		} else {
			r.log.Error("a failed goroutine holds the direction: its datagrams cannot be counted", "direction", d.name)
		}
	}
	errs := []error{runErr}
	select {
	case err := <-failed:
		errs = append(errs, err)
	default:
	}
	if r.rec != nil {
		if rerr := r.rec.close(); rerr != nil {
			errs = append(errs, fmt.Errorf("record: %w", rerr))
		}
	}
	r.closeSockets()
	r.sc.w.Close()
	r.ca.w.Close()
	return errors.Join(errs...)
}

// side is one socket's receive loop: which direction its datagrams take and
// which sources count as the rig's.
type side struct {
	in     batchConn
	dir    *direction
	from   netip.AddrPort // command side: the only source accepted (the controller)
	sensor bool           // sensor side: the source lock, the tap, send to the controller
}

// rxBatch is a receive loop's read buffers and per-batch scratch, made
// once per loop.
type rxBatch struct {
	ms   []message
	acc  []message
	taps []message
	imm  []message
	meta []immediate
}

func (r *Relay) newRxBatch() *rxBatch {
	bufLen := r.cfg.MaxDatagram + 1
	backing := make([]byte, batchSize*bufLen)
	b := &rxBatch{
		ms:   make([]message, batchSize),
		acc:  make([]message, 0, batchSize),
		taps: make([]message, 0, batchSize),
		imm:  make([]message, 0, batchSize),
		meta: make([]immediate, 0, batchSize),
	}
	for i := range b.ms {
		b.ms[i].buf = backing[i*bufLen : (i+1)*bufLen : (i+1)*bufLen]
	}
	return b
}

// receiveLoop reads batches from s.in until the relay closes.
func (r *Relay) receiveLoop(s *side) {
	b := r.newRxBatch()
	for {
		n, err := s.in.readBatch(b.ms)
		if err != nil {
			if r.closing.Load() || errors.Is(err, net.ErrClosed) {
				return
			}
			if errors.Is(err, os.ErrDeadlineExceeded) {
				continue
			}
			r.log.Warn("read failed", "direction", s.dir.name, "err", err)
			time.Sleep(10 * time.Millisecond)
			continue
		}
		r.handleBatch(s, b, n)
	}
}

// handleBatch settles the n datagrams just read into b.ms: each is
// rejected (oversized, stranger, no actuator known yet) or handed to the
// direction; those with no delay are sent at once, from the read buffers,
// and on the sensor side the tap gets its copies.
func (r *Relay) handleBatch(s *side, b *rxBatch, n int) {
	d := s.dir
	now := d.now()
	b.acc = b.acc[:0]
	for i := range n {
		m := &b.ms[i]
		if m.trunc || m.n > r.cfg.MaxDatagram {
			d.m.outcome[oOversized].Inc()
			d.record(rec{arrival: now, outcome: oOversized})
			continue
		}
		if !r.fromRig(s, m.addr, now) {
			d.m.outcome[oStranger].Inc()
			d.record(rec{arrival: now, outcome: oStranger})
			continue
		}
		b.acc = append(b.acc, *m)
	}
	if len(b.acc) == 0 {
		return
	}
	dst := r.cfg.Controller
	if !s.sensor {
		dst = r.cfg.Actuator
		if !dst.IsValid() {
			r.srcMu.Lock()
			dst = r.sensorSrc
			r.srcMu.Unlock()
		}
		if !dst.IsValid() {
			// A controller that kept sending across a relay restart: no
			// sensor datagram yet says where the actuator is.
			for range b.acc {
				d.m.outcome[oNoActuator].Inc()
				d.record(rec{arrival: now, outcome: oNoActuator})
			}
			return
		}
	}
	b.imm, b.meta = d.admit(b.acc, dst, now, b.imm[:0], b.meta[:0])
	d.sendImmediate(b.imm, b.meta, now)
	if s.sensor {
		b.taps = r.sendTaps(b.acc, b.taps[:0])
	}
}

// fromRig reports whether a datagram from src read at now on side s comes
// from the rig: the controller on the command side, the locked sensor
// source on the sensor side (which it may lock onto first).
func (r *Relay) fromRig(s *side, src netip.AddrPort, now int64) bool {
	if !s.sensor {
		return src == s.from
	}
	ok, c := r.lock.admit(src, now)
	switch {
	case !ok:
		r.strangerSeen(src, now)
	case c.why != "":
		r.lockChanged(src, c)
	}
	return ok
}

// sendTaps hands copies of the accepted sensor datagrams to the tap.
func (r *Relay) sendTaps(acc, taps []message) []message {
	if r.cfg.TapFunc != nil {
		t := time.Now()
		for i := range acc {
			r.cfg.TapFunc(acc[i].buf[:acc[i].n], t)
		}
	}
	if r.tap == nil {
		return taps
	}
	for i := range acc {
		taps = append(taps, message{buf: acc[i].buf, n: acc[i].n, addr: r.cfg.Tap})
	}
	base := 0
	for base < len(taps) {
		sent, err := r.tap.writeBatch(taps[base:])
		r.tapSent.Add(float64(sent))
		base += sent
		if err != nil && base < len(taps) {
			r.tapFailed.Inc()
			base++
		}
	}
	return taps
}
