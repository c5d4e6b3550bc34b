package emulate

import (
	"io"
	"log/slog"
	"net"
	"net/netip"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"rigwire/emulate/internal/timer"
	"rigwire/profiles"
	"rigwire/profiles/laws"
	"rigwire/profiles/markov"
	"rigwire/profiles/trace"
)

// newTestDirection is a direction on a fake socket, outside any relay.
func newTestDirection(t testing.TB, ch *markov.Channel, inFlight int) (*direction, *fakeConn) {
	out := newFakeConn("127.0.0.1:4001")
	d := newDirection(dirConfig{
		name: profiles.SensorToController, ch: ch, seed: 1, stream: 1, out: out,
		metrics: NewMetrics(prometheus.NewRegistry()), epoch: time.Now(),
		maxInFlight: inFlight, bufLen: 1500, w: timer.NewPortable(),
	})
	return d, out
}

// The per-datagram path (draw or replayed fate, copy into the pool,
// schedule, release) must not allocate: DEVELOPERS.md, "The relay's hot
// path".
func TestHotPathDoesNotAllocate(t *testing.T) {
	lawsByName := map[string]laws.Delay{
		"constant":  laws.Constant{Value: 0.002},
		"lognormal": mustDelay(t)(laws.NewLognormal(0.003, 0.4, 0.001)),
		"mixture": mustDelay(t)(laws.NewMixture([]float64{0.9, 0.1}, []laws.Delay{
			laws.Constant{Value: 0.001}, mustDelay(t)(laws.NewPareto(1.5, 0.004))})),
	}
	two := &markov.Channel{States: []markov.State{
		{Name: "clear", MeanDwell: 0.05, Loss: 0.01, Delay: laws.Constant{Value: 0.001}, Jump: []float64{0, 1}},
		{Name: "fading", MeanDwell: 0.01, Loss: 0.4, Delay: lawsByName["lognormal"], Jump: []float64{1, 0}},
	}}
	chans := map[string]*markov.Channel{"markov": two, "replay": replayChannel(t, trace.AtEndLoop)}
	for k, law := range lawsByName {
		chans[k] = oneState(0.05, law)
	}
	for name, ch := range chans {
		t.Run(name, func(t *testing.T) {
			d, _ := newTestDirection(t, ch, 256)
			batch := make([]message, 8)
			for i := range batch {
				batch[i] = message{buf: make([]byte, 1500), n: 64, addr: sensorAddr}
			}
			imm := make([]message, 0, batchSize)
			meta := make([]immediate, 0, batchSize)
			now := int64(0)
			allocs := testing.AllocsPerRun(200, func() {
				now += int64(time.Millisecond)
				imm, meta = d.admit(batch, controllerAddr, now, imm[:0], meta[:0])
				d.mu.Lock()
				for d.sched.len() > 0 {
					d.pool.put(d.sched.pop())
				}
				d.mu.Unlock()
			})
			if allocs != 0 {
				t.Errorf("%v allocations per batch of %d datagrams, want 0", allocs, len(batch))
			}
		})
	}
}

func mustDelay(t testing.TB) func(laws.Delay, error) laws.Delay {
	return func(d laws.Delay, err error) laws.Delay {
		if err != nil {
			t.Fatal(err)
		}
		return d
	}
}

// BenchmarkRelayLoopback sends datagrams through a real relay on loopback
// and reports allocations per datagram (the whole process: sender, relay
// and sink) and the round of one window through the relay.
func BenchmarkRelayLoopback(b *testing.B) {
	for _, c := range []struct {
		name  string
		delay laws.Delay
		size  int
	}{
		{"zero-delay/64B", nil, 64},
		{"zero-delay/1200B", nil, 1200},
		{"delay-1ms/64B", laws.Constant{Value: 0.001}, 64},
	} {
		b.Run(c.name, func(b *testing.B) {
			p := &profiles.Profile{SensorToController: oneState(0, c.delay), ControllerToActuator: oneState(0, nil)}
			rig := startLoopback(b, p, func(cfg *Config) { cfg.Tap = netip.AddrPort{} })
			listen := rig.relay.ListenAddr()
			msg := make([]byte, c.size)
			buf := make([]byte, 2048)
			const window = 32
			b.ReportAllocs()
			b.ResetTimer()
			for sent := 0; sent < b.N; {
				w := min(window, b.N-sent)
				for range w {
					if _, err := rig.sensor.WriteToUDPAddrPort(msg, listen); err != nil {
						b.Fatal(err)
					}
				}
				for range w {
					rig.controller.SetReadDeadline(time.Now().Add(2 * time.Second))
					if _, _, err := rig.controller.ReadFromUDPAddrPort(buf); err != nil {
						b.Fatalf("after %d datagrams: %v", sent, err)
					}
				}
				sent += w
			}
		})
	}
}

// nopConn is a batchConn that takes every write and has nothing to read:
// the sockets of a relay whose batches a test hands in itself.
type nopConn struct{ addr netip.AddrPort }

func (c *nopConn) readBatch([]message) (int, error)     { return 0, net.ErrClosed }
func (c *nopConn) writeBatch(ms []message) (int, error) { return len(ms), nil }
func (c *nopConn) localAddr() netip.AddrPort            { return c.addr }
func (c *nopConn) setReadDeadline(time.Time) error      { return nil }
func (c *nopConn) close() error                         { return nil }

// The whole per-batch path of both receive loops, from the read buffers
// on: the size check, the sensor lock or the controller check, the
// actuator's address from the lock, admit, the sends at once, the tap (a
// socket and a function), the record, and for held datagrams the release
// goroutine's pop, send and return to the pool. Rejected datagrams
// (oversized, strangers) ride in every batch. The first batch, which
// locks the sensor source and logs the first stranger, is AllocsPerRun's
// warm-up.
func TestReceivePathDoesNotAllocate(t *testing.T) {
	for _, c := range []struct {
		name  string
		delay laws.Delay
	}{
		{"sent at once", nil},
		{"held", laws.Constant{Value: 0.001}},
	} {
		t.Run(c.name, func(t *testing.T) {
			p := &profiles.Profile{SensorToController: oneState(0.1, c.delay), ControllerToActuator: oneState(0.1, c.delay)}
			r, err := New(Config{
				Profile: p, Listen: netip.MustParseAddrPort("127.0.0.1:4000"), Controller: controllerAddr,
				Tap: tapAddr, TapFunc: func([]byte, time.Time) {}, Record: io.Discard,
				Seed: 1, SeedSet: true, MaxDatagram: 100,
				Logger:         slog.New(slog.NewTextHandler(io.Discard, nil)),
				portableTimers: true,
				conns:          &testConns{listen: &nopConn{}, ctlSide: &nopConn{}, tap: &nopConn{}},
			})
			if err != nil {
				t.Fatal(err)
			}
			defer r.rec.close()
			sensor := &side{in: r.listen, dir: r.sc, sensor: true}
			command := &side{in: r.up, dir: r.ca, from: controllerAddr}
			fill := func(b *rxBatch, from netip.AddrPort) int {
				const n = 16
				for i := range n {
					b.ms[i].n, b.ms[i].trunc, b.ms[i].addr = 64, false, from
				}
				b.ms[0].addr = strangerAddr
				b.ms[1].n = 101 // oversized
				return n
			}
			sb, cb := r.newRxBatch(), r.newRxBatch()
			var held [batchSize]*packet
			var out [batchSize]message
			allocs := testing.AllocsPerRun(200, func() {
				r.handleBatch(sensor, sb, fill(sb, sensorAddr))
				r.handleBatch(command, cb, fill(cb, controllerAddr))
				releaseAll(r.sc, held[:], out[:])
				releaseAll(r.ca, held[:], out[:])
			})
			if allocs != 0 {
				t.Errorf("%v allocations per pair of batches, want 0", allocs)
			}
			s := r.Stats()
			if s.SensorToController.Forwarded == 0 || s.ControllerToActuator.Forwarded == 0 ||
				s.SensorToController.Stranger == 0 || s.ControllerToActuator.Oversized == 0 || s.TapSent == 0 {
				t.Errorf("the batches did not take every path: %+v", s)
			}
		})
	}
}
