package emulate

import (
	"bytes"
	"sort"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// syncBuffer is a record file the relay's writer and the test share.
type syncBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (s *syncBuffer) Write(p []byte) (int, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.Write(p)
}

func (s *syncBuffer) String() string {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.String()
}

// TestRelayCountsReordering sends numbered datagrams through a direction
// whose delay is 1 ms or 20 ms at random, so that many overtake each
// other, and one with a constant delay, so that none do. The relay's
// reordered counter must equal what the receiver sees — datagrams that
// came after one sent later than them — and the record's arrival_seq,
// sorted, must give back the order they were sent in, its release order
// the order they were received in.
func TestRelayCountsReordering(t *testing.T) {
	two := mustDelay(t)(laws.NewMixture([]float64{0.5, 0.5}, []laws.Delay{laws.Constant{Value: 0.001}, laws.Constant{Value: 0.02}}))
	p := &profiles.Profile{SensorToController: oneState(0, two), ControllerToActuator: oneState(0, laws.Constant{Value: 0.003})}
	rec := &syncBuffer{}
	rig := startLoopback(t, p, func(c *Config) { c.Record = rec })
	const n = 300
	recvOrder := func(got [][]byte) (order []int, overtaken int) {
		top := -1
		for _, b := range got {
			k, err := strconv.Atoi(string(b))
			if err != nil {
				t.Fatal(err)
			}
			order = append(order, k)
			if k < top {
				overtaken++
			} else {
				top = k
			}
		}
		return order, overtaken
	}
	done := make(chan [][]byte)
	go func() { done <- readAll(t, rig.controller, n, 2*time.Second) }()
	for i := range n {
		rig.sensor.WriteToUDPAddrPort([]byte(strconv.Itoa(i)), rig.relay.ListenAddr())
		time.Sleep(500 * time.Microsecond)
	}
	order, overtaken := recvOrder(<-done)
	cdone := make(chan [][]byte)
	go func() { cdone <- readAll(t, rig.sensor, n, 2*time.Second) }()
	for i := range n {
		rig.controller.WriteToUDPAddrPort([]byte(strconv.Itoa(i)), rig.relay.ControllerBindAddr())
		time.Sleep(200 * time.Microsecond)
	}
	corder, covertaken := recvOrder(<-cdone)
	rig.stop(t)
	if len(order) != n || len(corder) != n {
		t.Fatalf("received %d and %d of %d", len(order), len(corder), n)
	}
	st := rig.relay.Stats()
	if overtaken < n/10 {
		t.Fatalf("only %d of %d overtaken: the profile should reorder many", overtaken, n)
	}
	if got := st.SensorToController.Reordered; got != uint64(overtaken) {
		t.Errorf("sensor direction: relay counted %d reordered, the receiver saw %d overtaken", got, overtaken)
	}
	if got := st.ControllerToActuator.Reordered; got != uint64(covertaken) || covertaken != 0 {
		t.Errorf("command direction (constant delay): relay counted %d, the receiver saw %d; want 0", got, covertaken)
	}
	// The record: by arrival_seq the send order, by release_s the order
	// received.
	type row struct {
		seq          int
		release, due float64
	}
	var rows []row
	for _, line := range strings.Split(rec.String(), "\n") {
		f := strings.Split(line, ",")
		if len(f) != len(RecordColumns) || f[1] != profiles.SensorToController || f[3] != OutcomeForwarded {
			continue
		}
		seq, err1 := strconv.Atoi(f[7])
		rel, err2 := strconv.ParseFloat(f[6], 64)
		due, err3 := strconv.ParseFloat(f[5], 64)
		if err1 != nil || err2 != nil || err3 != nil {
			t.Fatalf("record line %q", line)
		}
		rows = append(rows, row{seq, rel, due})
	}
	if len(rows) != n {
		t.Fatalf("record: %d forwarded sensor lines, want %d", len(rows), n)
	}
	sort.Slice(rows, func(i, j int) bool { return rows[i].seq < rows[j].seq })
	for i, r := range rows {
		if r.seq != i+1 {
			t.Fatalf("arrival_seq %d at rank %d: not 1…n", r.seq, i)
		}
	}
	// Datagram k (sent k-th) arrived k-th: its arrival_seq is k+1. The
	// release order of arrival_seq must be the receiver's order (a batch
	// released at one instant goes out in order of due time).
	sort.SliceStable(rows, func(i, j int) bool {
		if rows[i].release != rows[j].release {
			return rows[i].release < rows[j].release
		}
		return rows[i].due < rows[j].due
	})
	mismatch := 0
	for i, r := range rows {
		if r.seq-1 != order[i] {
			mismatch++
		}
	}
	if mismatch > 0 {
		t.Errorf("%d of %d datagrams: release order by the record differs from the order received", mismatch, n)
	}
}
