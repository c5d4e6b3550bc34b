package emulate

import (
	"fmt"
	"math"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/testutil"

	"rigwire/emulate/internal/timer"
	"rigwire/profiles"
	"rigwire/profiles/datagram"
	"rigwire/profiles/laws"
)

// riglike is the simulated rig's pairing: samples "k,t_k,y", commands
// "k,t_k,u", the sequence first in both.
var riglike = Pairing{
	Sample:  datagram.Layout{Format: "text", Separator: ",", Sequence: &datagram.Field{Field: 0}},
	Command: datagram.Layout{Format: "text", Separator: ",", Sequence: &datagram.Field{Field: 0}},
}

// TestPairerRules: a command is paired with the latest release of the
// sample it names, within the ring; a command for a sample not released
// (or released too long ago), and datagrams whose sequence does not
// decode, are counted by reason and never paired.
func TestPairerRules(t *testing.T) {
	m := NewMetrics(prometheus.NewRegistry())
	var seen []int64
	p := riglike
	p.Observe = func(seq uint64, turn, _ int64) { seen = append(seen, turn) }
	pr := newPairer(p, m)
	if tag := pr.sampleTag([]byte("7,123,0.5")); tag != 8 {
		t.Fatalf("sample tag %d, want 8", tag)
	}
	pr.released(8, 1000, -1)
	if tag, turn := pr.command([]byte("7,123,0.25"), 3500); tag != 8 || turn != 2500 {
		t.Errorf("command for 7: tag %d turn %d, want 8 and 2500", tag, turn)
	}
	if _, turn := pr.command([]byte("9,0,0"), 4000); turn != -1 {
		t.Errorf("command for a sample never released: turn %d, want -1", turn)
	}
	pr.released(7+pairRing+1, 5000, -1) // the same slot, a later sample
	if _, turn := pr.command([]byte("7,0,0"), 6000); turn != -1 {
		t.Errorf("command for a sample overwritten in the ring: turn %d, want -1", turn)
	}
	if tag := pr.sampleTag([]byte("x,1,2")); tag != 0 {
		t.Errorf("sample without a sequence: tag %d", tag)
	}
	if tag, turn := pr.command([]byte(""), 7000); tag != 0 || turn != -1 {
		t.Errorf("empty command: tag %d turn %d", tag, turn)
	}
	want := map[string]float64{"sample_without_sequence": 1, "command_without_sequence": 1, "sample_not_released": 2}
	for r, w := range want {
		if got := testutil.ToFloat64(m.PairingFailures.WithLabelValues(r)); got != w {
			t.Errorf("%s: %g, want %g", r, got, w)
		}
	}
	if len(seen) != 1 || seen[0] != 2500 {
		t.Errorf("observed %v, want [2500]", seen)
	}
	if err := (&Pairing{Command: riglike.Command}).Check(); err == nil || !strings.Contains(err.Error(), "decode.sequence") {
		t.Errorf("no sample sequence: %v", err)
	}
	if err := (&Pairing{Sample: riglike.Sample}).Check(); err == nil || !strings.Contains(err.Error(), "command_decode.sequence") {
		t.Errorf("no command sequence: %v", err)
	}
}

// TestPairingDoesNotAllocate: with a pairing the per-datagram path of
// both sides still does not allocate (DEVELOPERS.md, "The relay's hot
// path").
func TestPairingDoesNotAllocate(t *testing.T) {
	pr := newPairer(riglike, NewMetrics(prometheus.NewRegistry()))
	sample, command := []byte("123456,99,0.5"), []byte("123456,99,-0.25")
	n := int64(0)
	allocs := testing.AllocsPerRun(500, func() {
		n++
		pr.released(pr.sampleTag(sample), n, pr.latency(sample))
		pr.command(command, n+10)
	})
	if allocs != 0 {
		t.Errorf("%v allocations per pair, want 0", allocs)
	}
}

// TestRelayMeasuresTurnaround runs a relay with a pairing on loopback and
// a controller of the test's own that answers each sample after a known
// hold (0.5 ms + 0.2 ms·(k mod 8)), over a delaying sensor direction: the
// relay's turnaround for each command must be the hold plus the two
// loopback hops (at least the hold; at most 2 ms more but for a few that a
// loaded machine stalls),
// its histogram must count every command, and the record must carry each
// datagram's sample_seq and each command's turnaround_s.
func TestRelayMeasuresTurnaround(t *testing.T) {
	p := &profiles.Profile{SensorToController: oneState(0, laws.Constant{Value: 0.002}), ControllerToActuator: oneState(0, nil)}
	rec := &syncBuffer{}
	var mu sync.Mutex
	turns := map[uint64]int64{}
	pairing := riglike
	pairing.Observe = func(seq uint64, turn, _ int64) { mu.Lock(); turns[seq] = turn; mu.Unlock() }
	rig := startLoopback(t, p, func(c *Config) { c.Record = rec; c.Pairing = &pairing })
	const n = 80
	hold := func(k uint64) time.Duration { return 500*time.Microsecond + time.Duration(k%8)*200*time.Microsecond }
	ctlDone := make(chan error, 1)
	go func() {
		buf := make([]byte, 256)
		for range n {
			rig.controller.SetReadDeadline(time.Now().Add(2 * time.Second))
			m, from, err := rig.controller.ReadFromUDPAddrPort(buf)
			if err != nil {
				ctlDone <- err
				return
			}
			got := time.Now()
			seq, _, _ := strings.Cut(string(buf[:m]), ",")
			k, _ := strconv.ParseUint(seq, 10, 64)
			for time.Since(got) < hold(k) {
			}
			rig.controller.WriteToUDPAddrPort([]byte(fmt.Sprintf("%d,0,0.5", k)), from)
		}
		ctlDone <- nil
	}()
	for k := range uint64(n) {
		rig.sensor.WriteToUDPAddrPort([]byte(fmt.Sprintf("%d,0,1.5", k)), rig.relay.ListenAddr())
		time.Sleep(5 * time.Millisecond)
	}
	if err := <-ctlDone; err != nil {
		t.Fatal(err)
	}
	readAll(t, rig.sensor, n, 2*time.Second)
	rig.stop(t)
	mu.Lock()
	defer mu.Unlock()
	if len(turns) != n {
		t.Fatalf("%d commands paired, want %d", len(turns), n)
	}
	slow := 0
	for k, turn := range turns {
		h := hold(k).Nanoseconds()
		if turn < h {
			t.Errorf("sample %d: turnaround %dns, shorter than the controller held it (%dns)", k, turn, h)
		}
		if turn > h+2e6 {
			slow++
		}
	}
	if slow > n/8 { // a loaded machine stalls a few goroutines for milliseconds
		t.Errorf("%d of %d turnarounds more than 2 ms above the controller's hold", slow, n)
	}
	if got := testutil.CollectAndCount(rig.relay.Metrics().Turnaround); got != 1 {
		t.Errorf("turnaround histogram: %d series", got)
	}
	var recTurns int
	for _, line := range strings.Split(rec.String(), "\n") {
		f := strings.Split(line, ",")
		if len(f) != len(RecordColumns) || f[3] != OutcomeForwarded {
			continue
		}
		k, err := strconv.ParseUint(f[8], 10, 64)
		if err != nil {
			t.Fatalf("record line %q: sample_seq: %v", line, err)
		}
		if f[1] == profiles.ControllerToActuator {
			s, err := strconv.ParseFloat(f[9], 64)
			if err != nil || math.Abs(s*1e9-float64(turns[k])) > 1 {
				t.Errorf("record line %q: turnaround_s, the relay measured %dns", line, turns[k])
			}
			recTurns++
		} else if f[9] != "" {
			t.Errorf("record line %q: a sample with a turnaround", line)
		}
	}
	if recTurns != n {
		t.Errorf("record: %d commands with a turnaround, want %d", recTurns, n)
	}
}

// TestPairerSensorLatency: with a monotonic sample clock, a sample stamped
// 1 ms ago has a latency of 1 ms and a little (the test's own time), which
// a command answering it reports with its turnaround; a sample stamped in
// the future or without a time is counted and not measured.
func TestPairerSensorLatency(t *testing.T) {
	m := NewMetrics(prometheus.NewRegistry())
	var gotLat int64 = -2
	p := riglike
	p.Sample.SampleTime, p.Sample.TimeUnit = &datagram.Field{Field: 1}, 1
	p.Clock = SampleClockMonotonic
	p.Observe = func(_ uint64, _, lat int64) { gotLat = lat }
	if err := p.Check(); err != nil {
		t.Fatal(err)
	}
	pr := newPairer(p, m)
	sample := []byte(fmt.Sprintf("3,%d,0.5", timer.Now()-1_000_000))
	lat := pr.latency(sample)
	if lat < 1_000_000 || lat > 51_000_000 {
		t.Fatalf("latency %dns of a sample stamped 1 ms ago", lat)
	}
	pr.released(pr.sampleTag(sample), 100, lat)
	if _, turn := pr.command([]byte("3,0,0"), 300); turn != 200 || gotLat != lat {
		t.Errorf("command: turnaround %d, latency %d; want 200 and %d", turn, gotLat, lat)
	}
	if l := pr.latency([]byte(fmt.Sprintf("4,%d,0.5", timer.Now()+int64(time.Second)))); l != -1 {
		t.Errorf("a sample stamped in the future: latency %d", l)
	}
	if l := pr.latency([]byte("5,,0.5")); l != -1 {
		t.Errorf("a sample without a time: latency %d", l)
	}
	for r, w := range map[string]float64{"sample_time_ahead": 1, "sample_without_time": 1} {
		if got := testutil.ToFloat64(m.PairingFailures.WithLabelValues(r)); got != w {
			t.Errorf("%s: %g, want %g", r, got, w)
		}
	}
	if got := testutil.CollectAndCount(m.SensorLatency); got != 1 {
		t.Errorf("latency histogram: %d series", got)
	}
	noTime := riglike
	noTime.Clock = SampleClockRealtime
	if err := noTime.Check(); err == nil || !strings.Contains(err.Error(), "decode.sample_time") {
		t.Errorf("a clock without a sample time: %v", err)
	}
}
