package emulate

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"math/rand/v2"
	"net/netip"
	"runtime/debug"
	"sync"
	"sync/atomic"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"rigwire/emulate/internal/timer"
	"rigwire/profiles"
	"rigwire/profiles/markov"
)

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
	pair   *pairer // nil without Config.Pairing

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

// New opens the relay's sockets. Nothing is read until Run.
func New(cfg Config) (*Relay, error) {
	if err := cfg.checkAndFill(); err != nil {
		return nil, err
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
	if cfg.Pairing != nil {
		if err := cfg.Pairing.Check(); err != nil {
			r.closeSockets()
			return nil, err
		}
		r.pair = newPairer(*cfg.Pairing, r.m)
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
		pair: r.pair, pairSide: pairSideOf(r.pair, name),
	}), nil
}

// Seed is the seed of this run's decisions.
func (r *Relay) Seed() uint64 { return r.seed }

// ListenAddr and ControllerBindAddr are the relay's two socket addresses.
func (r *Relay) ListenAddr() netip.AddrPort { return r.listen.localAddr() }

func (r *Relay) ControllerBindAddr() netip.AddrPort { return r.up.localAddr() }

// Metrics are the relay's metrics.
func (r *Relay) Metrics() *Metrics { return r.m }

// InFlight is how many datagrams each direction holds now.
func (r *Relay) InFlight() (sensorToController, controllerToActuator int) {
	return r.sc.inFlight(), r.ca.inFlight()
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
