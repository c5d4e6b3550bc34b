package main

import (
	"encoding/json"
	"math"
	"strings"
	"testing"
)

// lateTol is the rounding allowance on lateness read from nine-decimal
// text (a nanosecond, plus float64 subtraction error).
const lateTol = 1.5e-9

func TestParseRecord(t *testing.T) {
	// The header lines as the relay writes them (emulate.RecordHeader).
	const head = "# rigwire relay record v1\n# times in seconds on the relay's monotonic clock since it started\n" +
		"arrival_s,direction,state,decision,delay_s,due_s,release_s\n"
	cases := []struct {
		name      string
		in        string
		wantErr   string
		rows      int
		lateness  []float64
		decisions map[string]int
	}{
		{
			name: "forwarded and dropped",
			in: head +
				"0.100000000,sensor_to_controller,,forwarded,0.002000000,0.102000000,0.102000150\n" +
				"0.100500000,sensor_to_controller,,dropped,,,\n" +
				"0.101000000,sensor_to_controller,,forwarded,0.004000000,0.105000000,0.104999990\n",
			rows: 3, lateness: []float64{150e-9, -10e-9},
			decisions: map[string]int{"forwarded": 2, "dropped": 1},
		},
		{name: "header only", in: head, rows: 0, decisions: map[string]int{}},
		{name: "empty file", in: "", wantErr: "x.csv: no header line"},
		{name: "header without due_s", in: "arrival_s,decision,release_s\n", wantErr: `x.csv:1: header: want a column "due_s"`},
		{
			name:    "short row",
			in:      head + "0.1,sensor_to_controller,,forwarded,0.002,0.102\n",
			wantErr: "x.csv:4: want 7 fields as in the header, got 6",
		},
		{
			name:    "forwarded without release",
			in:      head + "0.1,sensor_to_controller,,forwarded,0.002,0.102,\n",
			wantErr: `x.csv:4: release_s: want seconds for a forwarded datagram, got ""`,
		},
		{
			name:    "bad due",
			in:      head + "0.1,sensor_to_controller,,forwarded,0.002,soon,0.1\n",
			wantErr: `x.csv:4: due_s: want seconds, got "soon"`,
		},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s, err := parseRecord(strings.NewReader(c.in), "x.csv")
			if c.wantErr != "" {
				if err == nil || !strings.Contains(err.Error(), c.wantErr) {
					t.Fatalf("got %v, want an error containing %q", err, c.wantErr)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if s.Rows != c.rows || len(s.Lateness) != len(c.lateness) {
				t.Fatalf("rows %d lateness %v, want %d and %v", s.Rows, s.Lateness, c.rows, c.lateness)
			}
			for i, l := range c.lateness {
				if math.Abs(s.Lateness[i]-l) > lateTol {
					t.Errorf("lateness[%d] = %g, want %g", i, s.Lateness[i], l)
				}
			}
			for k, v := range c.decisions {
				if s.Decisions[k] != v {
					t.Errorf("decisions[%s] = %d, want %d", k, s.Decisions[k], v)
				}
			}
		})
	}
}

func TestParseStatTicks(t *testing.T) {
	cases := []struct {
		name, in string
		want     uint64
		wantErr  string
	}{
		{
			// A line of the shape proc(5) gives; utime 1234 and stime 56.
			name: "plain",
			in:   "4242 (impair) S 1 4242 4242 0 -1 4194560 900 0 0 0 1234 56 0 0 20 0 7 0 100 1000000 500 18446744073709551615",
			want: 1290,
		},
		{
			name: "name with spaces and parentheses",
			in:   "7 (a (b) c) R 1 7 7 0 -1 0 0 0 0 0 10 5 0 0 20 0 1 0 1 1 1 1",
			want: 15,
		},
		{name: "no parenthesis", in: "7 foo R 1", wantErr: "no ')' found"},
		{name: "too short", in: "7 (x) R 1 2 3", wantErr: "want at least 15 fields"},
		{name: "not a number", in: "7 (x) R 1 7 7 0 -1 0 0 0 0 0 ten 5 0", wantErr: "utime"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got, err := parseStatTicks(c.in, "stat")
			if c.wantErr != "" {
				if err == nil || !strings.Contains(err.Error(), c.wantErr) {
					t.Fatalf("got %v, want an error containing %q", err, c.wantErr)
				}
				return
			}
			if err != nil || got != c.want {
				t.Fatalf("got %d, %v; want %d", got, err, c.want)
			}
		})
	}
}

func TestParseProcNetUDP(t *testing.T) {
	// Two rows in the layout of /proc/net/udp (proc(5)): port 0x9C41 =
	// 40001 with 17 drops, port 0x0035 = 53 with none.
	in := "   sl  local_address rem_address   st tx_queue rx_queue tr tm->when retrnsmt   uid  timeout inode ref pointer drops\n" +
		"  100: 0100007F:9C41 00000000:0000 07 00000000:00000000 00:00000000 00000000     0        0 12345 2 0000000000000000 17\n" +
		"  101: 0100007F:0035 00000000:0000 07 00000000:00000000 00:00000000 00000000     0        0 12346 2 0000000000000000 0\n"
	got, err := parseProcNetUDP(strings.NewReader(in), "udp")
	if err != nil {
		t.Fatal(err)
	}
	want := []udpSocket{{40001, 17}, {53, 0}}
	if len(got) != len(want) || got[0] != want[0] || got[1] != want[1] {
		t.Fatalf("got %v, want %v", got, want)
	}
	if _, err := parseProcNetUDP(strings.NewReader("h\n 1: 0100007F 0 0\n"), "udp"); err == nil {
		t.Fatal("short row: want an error")
	}
}

func TestParseCPUTotals(t *testing.T) {
	// proc(5): cpu user nice system idle iowait irq softirq steal guest guest_nice.
	in := "cpu  100 5 40 9000 12 3 77 8 0 0\ncpu0 50 2 20 4500 6 1 38 4 0 0\n"
	got, err := parseCPUTotals(in, "stat")
	if err != nil {
		t.Fatal(err)
	}
	if got.busy != 145 || got.steal != 8 {
		t.Fatalf("got %+v, want busy 145 steal 8", got)
	}
	if _, err := parseCPUTotals("intr 1 2 3\n", "stat"); err == nil {
		t.Fatal("wrong line: want an error")
	}
}

func TestParseExposition(t *testing.T) {
	in := `# HELP rigwire_relay_datagrams_total Datagrams by direction and outcome.
# TYPE rigwire_relay_datagrams_total counter
rigwire_relay_datagrams_total{direction="sensor_to_controller",outcome="forwarded"} 1000
rigwire_relay_datagrams_total{direction="sensor_to_controller",outcome="dropped"} 20
rigwire_relay_datagrams_total{direction="controller_to_actuator",outcome="dropped"} 3
rigwire_relay_release_lateness_seconds_bucket{direction="sensor_to_controller",le="+Inf"} 1000
odd_label{v="a\"b,c}"} 1.5e3 1700000000000
plain 7
`
	ss, err := parseExposition(strings.NewReader(in))
	if err != nil {
		t.Fatal(err)
	}
	if len(ss) != 6 {
		t.Fatalf("got %d samples, want 6", len(ss))
	}
	if ss[4].labels["v"] != `a"b,c}` || ss[4].value != 1500 {
		t.Errorf("escaped label: got %q = %g", ss[4].labels["v"], ss[4].value)
	}
	out := relayOutcomes(ss)
	if out["forwarded"] != 1000 || out["dropped"] != 23 {
		t.Errorf("outcomes %v, want forwarded 1000 dropped 23", out)
	}
	for _, bad := range []string{"novalue\n", `m{a="x} 1` + "\n", "m{a=1} 2\n", "m notanumber\n"} {
		if _, err := parseExposition(strings.NewReader(bad)); err == nil {
			t.Errorf("%q: want an error", bad)
		}
	}
}

func TestStepsFor(t *testing.T) {
	cases := []struct {
		name    string
		r, prec float64
		want    int
	}{
		// (200k/10k)^(1/2^5) ≈ 1.098: five steps narrow 20× to it.
		{"full bracket", 20, math.Pow(20, 1.0/32), 5},
		// 1.69 → 1.098: ln 1.69 / ln 1.098 ≈ 5.6, so ⌈log₂ 5.6⌉ = 3.
		{"hint bracket", 1.69, math.Pow(20, 1.0/32), 3},
		{"already narrow", 1.05, 1.1, 1},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := stepsFor(c.r, c.prec); got != c.want {
				t.Fatalf("stepsFor(%g, %g) = %d, want %d", c.r, c.prec, got, c.want)
			}
		})
	}
}

func TestRotateAndRatios(t *testing.T) {
	got := rotate([]string{"a", "b", "c"}, 4)
	if strings.Join(got, "") != "bca" {
		t.Fatalf("rotate: got %v", got)
	}
	nan := math.NaN()
	r := ratios([]float64{10, 20, nan, 30, 0}, []float64{5, 10, 1, nan, 3})
	if len(r) != 2 || r[0] != 2 || r[1] != 2 {
		t.Fatalf("ratios: got %v, want [2 2]", r)
	}
	if r := addedRatios([]float64{-0.5e-6, 3e-6, 2e-6, nan}, []float64{10e-6, 2e-6, 0, 1e-6}); len(r) != 2 || r[0] != 0 || r[1] != 1.5 {
		t.Fatalf("addedRatios: got %v, want [0 1.5] (none added counts as 0×; no baseline, no ratio)", r)
	}
	b, err := json.Marshal(figures{1.5, nan, 2})
	if err != nil || string(b) != "[1.5,null,2]" {
		t.Fatalf("figures JSON: got %s, %v", b, err)
	}
}
