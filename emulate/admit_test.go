package emulate

import (
	"math"
	"testing"

	"github.com/prometheus/client_golang/prometheus"
	dto "github.com/prometheus/client_model/go"

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

// lossRunHist is the loss-run histogram of d's direction.
func lossRunHist(t *testing.T, d *direction) *dto.Histogram {
	t.Helper()
	var out dto.Metric
	if err := d.m.lossRuns.(prometheus.Histogram).Write(&out); err != nil {
		t.Fatal(err)
	}
	return out.Histogram
}

// admitN admits n datagrams one batch at a time and forgets what was held.
func admitN(d *direction, n int, now *int64) {
	batch := make([]message, 1)
	batch[0] = message{buf: make([]byte, 16), n: 8, addr: sensorAddr}
	for range n {
		*now += 1000
		d.admit(batch, controllerAddr, *now, nil, nil)
	}
	d.mu.Lock()
	for d.sched.len() > 0 {
		d.pool.put(d.sched.pop())
	}
	d.mu.Unlock()
}

func TestLossRunsDeterministic(t *testing.T) {
	lose, keep := oneState(1, nil), oneState(0, nil)
	d, _ := newTestDirection(t, keep, 16)
	now := int64(0)
	for _, run := range []int{3, 1, 5} { // lose run, then keep 2
		d.changeChannel(lose)
		admitN(d, run, &now)
		d.changeChannel(keep)
		admitN(d, 2, &now)
	}
	d.changeChannel(lose)
	admitN(d, 7, &now) // not ended by a kept datagram: not observed yet
	h := lossRunHist(t, d)
	if h.GetSampleCount() != 3 || h.GetSampleSum() != 9 {
		t.Errorf("%d runs of total %v, want 3 runs of total 9 (3+1+5)", h.GetSampleCount(), h.GetSampleSum())
	}
	want := map[float64]uint64{1: 1, 2: 1, 3: 2, 4: 2, 6: 3, 128: 3}
	for _, b := range h.Bucket {
		if w, ok := want[b.GetUpperBound()]; ok && b.GetCumulativeCount() != w {
			t.Errorf("bucket ≤%v: %d, want %d", b.GetUpperBound(), b.GetCumulativeCount(), w)
		}
	}
}

// Under i.i.d. Bernoulli(p) loss the length of a run of losses is
// geometric, P(L = k) = p^(k−1)(1−p), with mean 1/(1−p) and variance
// p/(1−p)² (known law of runs of i.i.d. trials; e.g. Feller, An
// Introduction to Probability Theory and Its Applications, vol. 1, on
// runs and the geometric distribution).
func TestLossRunsGeometric(t *testing.T) {
	const p, n = 0.6, 200000
	d, _ := newTestDirection(t, oneState(p, nil), 16)
	now := int64(0)
	admitN(d, n, &now)
	h := lossRunHist(t, d)
	runs := float64(h.GetSampleCount())
	mean := h.GetSampleSum() / runs
	want := 1 / (1 - p)
	se := math.Sqrt(p/((1-p)*(1-p))) / math.Sqrt(runs)
	if math.Abs(mean-want) > 5*se {
		t.Errorf("mean loss run %.4f over %v runs, want %.4f ± %.4f (5 standard errors)", mean, runs, want, 5*se)
	}
	// P(L = 1) = 1 − p.
	ones := float64(h.Bucket[0].GetCumulativeCount()) / runs
	if se1 := math.Sqrt(p * (1 - p) / runs); math.Abs(ones-(1-p)) > 5*se1 {
		t.Errorf("share of runs of length 1: %.4f, want %.4f ± %.4f", ones, 1-p, 5*se1)
	}
	// Expected number of runs: n·p·(1−p) (each kept datagram after a loss ends one).
	if wr := n * p * (1 - p); math.Abs(runs-wr) > 5*math.Sqrt(wr) {
		t.Errorf("%v runs, want about %v", runs, wr)
	}
}
