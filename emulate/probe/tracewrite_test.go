package probe

import (
	"bytes"
	"context"
	"math"
	"net"
	"testing"
	"time"

	"rigwire/profiles/trace"
)

// TestWriteTraceReadsBack: what WriteTrace writes, profiles/trace reads
// back line by line: fates, delays (in seconds, to the nanosecond), copies
// and reordering, and the metadata; one-way delays only with synchronised
// clocks.
func TestWriteTraceReadsBack(t *testing.T) {
	const nsTol = 1e-9 // the trace writes nanosecond digits
	recs := []Record{
		{Sent: 0, RTT: 4 * time.Millisecond, OneWay: 3 * time.Millisecond, Back: time.Millisecond, Copies: 1},
		{Sent: 2 * time.Millisecond},
		{Sent: 4 * time.Millisecond, RTT: 7 * time.Millisecond, OneWay: -time.Microsecond, Back: 6 * time.Millisecond, Copies: 2, Reordered: true},
	}
	for _, synced := range []bool{true, false} {
		var b bytes.Buffer
		WriteTrace(&b, recs, TraceInfo{Target: "127.0.0.1:9", Rate: 500, Size: 64, ClocksSynced: synced})
		tr, err := trace.ReadTrace(&b, "written.csv")
		if err != nil {
			t.Fatalf("synced %v: %v", synced, err)
		}
		if tr.Interval != 0.002 || tr.ClocksSynced != synced || len(tr.Probes) != len(recs) {
			t.Fatalf("synced %v: interval %g, clocks_synced %v, %d probes", synced, tr.Interval, tr.ClocksSynced, len(tr.Probes))
		}
		for i, r := range recs {
			p := tr.Probes[i]
			if p.Lost != (r.Copies == 0) || p.Copies != r.Copies || p.Reordered != r.Reordered || math.Abs(p.Send-r.Sent.Seconds()) > nsTol {
				t.Errorf("synced %v, probe %d: read %+v from %+v", synced, i, p, r)
			}
			if r.Copies == 0 {
				continue
			}
			if math.Abs(p.RTT-r.RTT.Seconds()) > nsTol {
				t.Errorf("synced %v, probe %d: rtt %g, want %g", synced, i, p.RTT, r.RTT.Seconds())
			}
			wantOW := math.Max(r.OneWay.Seconds(), 0) // clipped at 0
			switch {
			case synced && math.Abs(p.OneWay-wantOW) > nsTol:
				t.Errorf("probe %d: one way %g, want %g", i, p.OneWay, wantOW)
			case !synced && !math.IsNaN(p.OneWay):
				t.Errorf("probe %d: one way %g without synchronised clocks, want none", i, p.OneWay)
			}
		}
	}
}

// TestRunAgainstEcho: a short probe run on loopback against Echo gets
// every probe back once, in order, with a round trip ≥ 0, and the echo
// counts them answered.
func TestRunAgainstEcho(t *testing.T) {
	const count = 20
	echo, err := net.ListenUDP("udp", &net.UDPAddr{IP: net.IPv4(127, 0, 0, 1)})
	if err != nil {
		t.Fatal(err)
	}
	type result struct{ answered, ignored uint64 }
	done := make(chan result, 1)
	go func() { a, i, _ := Echo(echo); done <- result{a, i} }()
	conn, err := net.DialUDP("udp", nil, echo.LocalAddr().(*net.UDPAddr))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := conn.Write([]byte("not a probe")); err != nil {
		t.Fatal(err)
	}
	recs, err := Run(context.Background(), Config{Conn: conn, Count: count, Interval: time.Millisecond, Size: 64, Wait: 500 * time.Millisecond})
	if err != nil {
		t.Fatal(err)
	}
	echo.Close()
	r := <-done
	if len(recs) != count || Lost(recs) != 0 {
		t.Fatalf("%d records, %d lost; want %d, none lost (loopback)", len(recs), Lost(recs), count)
	}
	for i, rec := range recs {
		if rec.Copies != 1 || rec.Reordered || rec.RTT < 0 {
			t.Errorf("probe %d: %+v", i, rec)
		}
	}
	if r.answered != count || r.ignored != 1 {
		t.Errorf("echo answered %d, ignored %d; want %d and 1", r.answered, r.ignored, count)
	}
}
