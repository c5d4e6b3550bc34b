package tests

import (
	"encoding/binary"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"
)

// TestRelayReplaysTrace: the built relay, replaying a trace on the
// outbound direction, loses exactly the probes the trace lost and delays
// the others by their recorded delays, in order; past the end (at_end:
// stop) it loses everything.
func TestRelayReplaysTrace(t *testing.T) {
	const (
		probes = 30
		extra  = 10                    // datagrams sent past the end of the trace
		gap    = 15 * time.Millisecond // between datagrams: above every delay, so order is kept
		// replayLow/High: the measured one-way delay may be this much
		// below/above the recorded one (the loopback stack and scheduling;
		// as in TestProbeFitRecoversRelayProfile, p99 ≈ 2.5 ms on a busy
		// host).
		replayLow  = 0.2e-3
		replayHigh = 5e-3
		// recordTol: the relay's record prints delays with 9 decimals.
		recordTol = 1e-9
	)
	// A trace of our own: delays from 1 to 8 ms, a run of three losses and
	// two single ones.
	var b strings.Builder
	b.WriteString("# rigwire probe trace v1\n# interval_s: 0.015\n# clocks_synced: true\nseq,send_s,status,rtt_s,one_way_s,back_s,copies,reordered\n")
	want := make([]float64, probes) // NaN: lost
	for i := range probes {
		lost := i == 4 || (i >= 10 && i <= 12) || i == 21
		if lost {
			want[i] = math.NaN()
			fmt.Fprintf(&b, "%d,%.6f,lost,,,,0,0\n", i, float64(i)*0.015)
			continue
		}
		want[i] = 1e-3 + float64((i*7)%8)*1e-3
		fmt.Fprintf(&b, "%d,%.6f,delivered,%.6f,%.6f,%.6f,1,0\n", i, float64(i)*0.015, want[i]+1e-4, want[i], 1e-4)
	}
	dir := t.TempDir()
	trace := filepath.Join(dir, "field.csv")
	if err := os.WriteFile(trace, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	profile := fmt.Sprintf("name: replay\nsensor_to_controller:\n  trace: {file: %s, column: one_way_s, at_end: stop}\n", strconv.Quote(trace))
	rig := startRelay(t, profile)

	epoch := time.Now()
	var got []arrival
	var wg sync.WaitGroup
	wg.Add(1)
	go collect(rig.controller, epoch, time.Second, &got, &wg)
	for i := range probes + extra {
		if _, err := rig.sensor.WriteToUDPAddrPort(datagram(uint32(i), int64(time.Since(epoch)), 64), rig.listen); err != nil {
			t.Fatal(err)
		}
		time.Sleep(gap)
	}
	wg.Wait()

	seen := map[int]float64{}
	var order []int
	for _, a := range got {
		seq := int(binary.BigEndian.Uint32(a.data))
		seen[seq] = float64(a.at-int64(binary.BigEndian.Uint64(a.data[4:]))) / 1e9
		order = append(order, seq)
	}
	if !sort.IntsAreSorted(order) {
		t.Errorf("arrivals out of order: %v", order)
	}
	for i := range probes + extra {
		d, ok := seen[i]
		switch {
		case i >= probes:
			if ok {
				t.Errorf("datagram %d past the end of the trace was forwarded (at_end: stop)", i)
			}
		case math.IsNaN(want[i]):
			if ok {
				t.Errorf("datagram %d forwarded, the trace lost probe %d", i, i)
			}
		case !ok:
			t.Errorf("datagram %d lost, the trace delivered probe %d", i, i)
		case d < want[i]-replayLow || d > want[i]+replayHigh:
			t.Errorf("datagram %d delayed %.3f ms, the trace %.3f ms (tolerance −%g/+%g ms)", i, d*1e3, want[i]*1e3, replayLow*1e3, replayHigh*1e3)
		}
	}

	// The delays the relay used are the recorded ones, exactly.
	rig.p.signal(t, syscall.SIGTERM)
	if code := rig.p.wait(t, 10*time.Second); code != 0 {
		t.Fatalf("impair exited %d after SIGTERM, want 0", code)
	}
	type line struct {
		arrival float64
		fate    string
		delay   float64
	}
	var ls []line
	for _, l := range readLines(t, rig.record)[1:] {
		f := strings.Split(l, ",")
		if f[1] != "sensor_to_controller" {
			continue
		}
		a, _ := strconv.ParseFloat(f[0], 64)
		d, _ := strconv.ParseFloat(f[4], 64)
		ls = append(ls, line{a, f[3], d})
	}
	sort.SliceStable(ls, func(i, j int) bool { return ls[i].arrival < ls[j].arrival })
	if len(ls) != probes+extra {
		t.Fatalf("record has %d outbound datagrams, want %d", len(ls), probes+extra)
	}
	for i, l := range ls {
		lost := i >= probes || math.IsNaN(want[i])
		if lost != (l.fate == "dropped") {
			t.Errorf("record line %d: %s, trace lost %v", i, l.fate, lost)
		}
		if !lost && math.Abs(l.delay-want[i]) > recordTol {
			t.Errorf("record line %d: delay %.9f, trace %.9f", i, l.delay, want[i])
		}
	}
}
