package trace

import (
	"bytes"
	"errors"
	"os"
	"strings"
	"testing"
)

// goodTrace is a trace of three probes, one lost and one reordered
// (testdata/wifi.csv; the profile loader's tests replay it too).
func goodTrace(t testing.TB) []byte {
	t.Helper()
	b, err := os.ReadFile("testdata/wifi.csv")
	if err != nil {
		t.Fatal(err)
	}
	return b
}

func TestReadTrace(t *testing.T) {
	tr, err := ReadTrace(bytes.NewReader(goodTrace(t)), "wifi.csv")
	if err != nil {
		t.Fatal(err)
	}
	if len(tr.Probes) != 3 || tr.Interval != 0.002 || !tr.ClocksSynced {
		t.Fatalf("got %d probes, interval %g, synced %v", len(tr.Probes), tr.Interval, tr.ClocksSynced)
	}
	d, lost, err := tr.Fates("one_way_s")
	if err != nil {
		t.Fatal(err)
	}
	want := []float64{0.003, 0, 0.0035}
	for i := range want {
		if d[i] != want[i] || lost[i] != (i == 1) {
			t.Errorf("probe %d: delay %g lost %v", i, d[i], lost[i])
		}
	}
	if p := tr.Probes[2]; p.Copies != 2 || !p.Reordered {
		t.Errorf("probe 2: copies %d reordered %v", p.Copies, p.Reordered)
	}
}

// TestReadTraceErrors: every malformed trace names its line and what was
// wrong.
func TestReadTraceErrors(t *testing.T) {
	const head = "# rigwire probe trace v1\nseq,send_s,status,rtt_s\n"
	cases := []struct {
		name, text, want string
	}{
		{"empty file", "", "t.csv: empty trace: no probe lines (and no header line)"},
		{"only comments", "# rigwire probe trace v1\n# nothing\n", "t.csv: empty trace: no probe lines (and no header line)"},
		{"header only", head, "t.csv: empty trace: no probe lines"},
		{"truncated line", head + "0,0.1,delivered,0.003\n1,0.2,deliv", "t.csv:4: want 4 fields, got 3 (a truncated line?)"},
		{"bad number", head + "0,0.1,delivered,abc\n", `t.csv:3: rtt_s: want a delay in [0, 3600] seconds or nothing, got "abc"`},
		{"negative delay", head + "0,0.1,delivered,-1\n", `t.csv:3: rtt_s: want a delay in [0, 3600] seconds or nothing, got "-1"`},
		{"bad status", head + "0,0.1,gone,\n", `t.csv:3: status: want delivered or lost, got "gone"`},
		{"lost with delay", head + "0,0.1,lost,0.01\n", "t.csv:3: status lost but a delay is given"},
		{"seq not increasing", head + "1,0.1,lost,\n1,0.2,lost,\n", "t.csv:4: seq: want increasing sequence numbers, got 1 after 1"},
		{"unknown column", "seq,send_s,status,jitter\n", `t.csv:1: unknown column "jitter" in the header; want some of seq,send_s,status,rtt_s,one_way_s,back_s,copies,reordered`},
		{"missing column", "seq,status\n", `t.csv:1: header: missing column "send_s"`},
		{"bad interval", "# interval_s: fast\n" + head, `t.csv:1: interval_s: want a time in (0, 3600] seconds, got "fast"`},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := ReadTrace(strings.NewReader(c.text), "t.csv")
			if err == nil || err.Error() != c.want {
				t.Errorf("got  %v\nwant %s", err, c.want)
			}
		})
	}
	_, err := ReadTrace(strings.NewReader(""), "t.csv")
	if !errors.Is(err, ErrEmptyTrace) {
		t.Errorf("empty trace error %v is not ErrEmptyTrace", err)
	}
}

func TestFatesNeedsDelay(t *testing.T) {
	tr, err := ReadTrace(strings.NewReader("seq,send_s,status,rtt_s,one_way_s\n0,0,delivered,0.01,\n"), "t.csv")
	if err != nil {
		t.Fatal(err)
	}
	if _, _, err := tr.Fates("one_way_s"); err == nil || err.Error() != "t.csv:2: one_way_s: delivered but no delay given" {
		t.Errorf("got %v", err)
	}
}

// FuzzReadTrace: whatever the bytes, the reader either returns a trace
// whose probes are valid or a positioned error; it never panics.
func FuzzReadTrace(f *testing.F) {
	f.Add(goodTrace(f))
	f.Add([]byte("seq,send_s,status\n0,0,lost\n"))
	f.Add([]byte("# interval_s: 1e-3\nseq,send_s,status,rtt_s\n0,0,delivered,1e-3\n1,1e-3,deliv"))
	f.Fuzz(func(t *testing.T, data []byte) {
		tr, err := ReadTrace(strings.NewReader(string(data)), "fuzz.csv")
		if err != nil {
			if !strings.HasPrefix(err.Error(), "fuzz.csv") {
				t.Fatalf("error does not name the file: %v", err)
			}
			return
		}
		if len(tr.Probes) == 0 {
			t.Fatal("a trace without probes was accepted")
		}
		for _, c := range TraceDelayColumns {
			d, lost, err := tr.Fates(c)
			if err != nil {
				continue
			}
			for i := range d {
				if !(d[i] >= 0) || (lost[i] && d[i] != 0) {
					t.Fatalf("%s: probe %d: delay %v lost %v", c, i, d[i], lost[i])
				}
			}
		}
	})
}
