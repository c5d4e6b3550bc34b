package emulate

import (
	"net/netip"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"rigwire/emulate/internal/timer"
	"rigwire/profiles"
	"rigwire/profiles/laws"
	"rigwire/profiles/markov"
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

// The per-datagram path (draw, copy into the pool, schedule, release) must
// not allocate: DEVELOPERS.md, "The relay's hot path".
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
	chans := map[string]*markov.Channel{"markov": two}
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
