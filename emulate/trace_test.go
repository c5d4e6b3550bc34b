package emulate

import (
	"math"
	"testing"
	"time"

	"rigwire/profiles/markov"
	"rigwire/profiles/trace"
)

func replayChannel(t *testing.T, atEnd string) *markov.Channel {
	t.Helper()
	rp, err := trace.NewReplay("t.csv", "one_way_s", atEnd,
		[]float64{0.003, 0, 0.001, 0.002}, []bool{false, true, false, false})
	if err != nil {
		t.Fatal(err)
	}
	return &markov.Channel{States: []markov.State{{Name: "trace", MeanDwell: math.Inf(1), Loss: rp.LossRate, Delay: rp}}, Replay: rp}
}

// TestReplayInOrder: a replaying direction gives the recorded fates in
// order, then loops, stops (loses all) or goes clean.
func TestReplayInOrder(t *testing.T) {
	type fate struct {
		lost  bool
		delay float64
	}
	rec := []fate{{false, 0.003}, {true, 0}, {false, 0.001}, {false, 0.002}}
	cases := []struct {
		atEnd string
		after fate // the fate of the datagrams past the end
	}{
		{trace.AtEndStop, fate{true, 0}},
		{trace.AtEndClean, fate{false, 0}},
	}
	for _, c := range cases {
		t.Run(c.atEnd, func(t *testing.T) {
			d, _ := newTestDirection(t, replayChannel(t, c.atEnd), 64)
			st := &d.chain.ch.States[0]
			for i := range 10 {
				lost, delay := d.fateLocked(st)
				want := c.after
				if i < len(rec) {
					want = rec[i]
				}
				if lost != want.lost || delay != want.delay {
					t.Errorf("datagram %d: lost %v delay %g, want %v %g", i, lost, delay, want.lost, want.delay)
				}
			}
		})
	}
	t.Run(trace.AtEndLoop, func(t *testing.T) {
		d, _ := newTestDirection(t, replayChannel(t, trace.AtEndLoop), 64)
		st := &d.chain.ch.States[0]
		for i := range 10 {
			lost, delay := d.fateLocked(st)
			if w := rec[i%len(rec)]; lost != w.lost || delay != w.delay {
				t.Errorf("datagram %d: lost %v delay %g, want %v %g", i, lost, delay, w.lost, w.delay)
			}
		}
	})
}

// TestReplayDoesNotAllocate: the replay path keeps the hot path free of
// allocations (DEVELOPERS.md, "The relay's hot path").
func TestReplayDoesNotAllocate(t *testing.T) {
	d, _ := newTestDirection(t, replayChannel(t, trace.AtEndLoop), 256)
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
		t.Errorf("%v allocations per batch, want 0", allocs)
	}
}
