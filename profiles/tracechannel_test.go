package profiles

import (
	"math"
	"os"
	"path/filepath"
	"rigwire/profiles/trace"
	"testing"
)

// TestTraceProfile: a direction may replay a trace; the loader validates
// its keys with positions, and the prediction sees its empirical law with
// i.i.d. loss at the trace's loss rate.
func TestTraceProfile(t *testing.T) {
	dir := t.TempDir()
	good, err := os.ReadFile("trace/testdata/wifi.csv") // the trace package's own
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "wifi.csv"), good, 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "bad.csv"), []byte("seq,send_s,status\n0,0,maybe\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	p, err := Parse([]byte("sensor_to_controller:\n  trace: {file: wifi.csv, at_end: stop}\n"), "p.yaml", dir)
	if err != nil {
		t.Fatal(err)
	}
	rp := p.SensorToController.Replay
	if rp == nil {
		t.Fatal("no replay")
	}
	st := p.SensorToController.States[0]
	const tol = 1e-12
	if math.Abs(st.Loss-1.0/3) > tol || rp.AtEnd != trace.AtEndStop || rp.Column != "one_way_s" {
		t.Errorf("loss %g at_end %s column %s", st.Loss, rp.AtEnd, rp.Column)
	}
	if m := st.Delay.Mean(); math.Abs(m-0.00325) > tol {
		t.Errorf("mean delay %g, want 0.00325 (the delivered one-way delays' mean)", m)
	}
	cases := []struct{ name, yaml, want string }{
		{"unknown key", "sensor_to_controller:\n  trace: {file: wifi.csv, colum: rtt_s}\n", `p.yaml:2: sensor_to_controller.trace: unknown key "colum" (want one of: file, column, at_end)`},
		{"bad at_end", "sensor_to_controller:\n  trace: {file: wifi.csv, at_end: wrap}\n", `p.yaml:2: sensor_to_controller.trace.at_end: want loop, stop or clean, got "wrap"`},
		{"bad column", "sensor_to_controller:\n  trace: {file: wifi.csv, column: size}\n", `p.yaml:2: sensor_to_controller.trace.column: want one of rtt_s, one_way_s, back_s, got "size"`},
		{"missing file", "sensor_to_controller:\n  trace: {column: rtt_s}\n", `p.yaml:2: sensor_to_controller.trace: missing file (a probe trace, as written by impair probe)`},
		{"no such file", "sensor_to_controller:\n  trace: {file: none.csv}\n", `p.yaml:2: sensor_to_controller.trace.file: cannot open "none.csv": no such file or directory`},
		{"bad trace", "sensor_to_controller:\n  trace:\n    file: bad.csv\n", `p.yaml:3: sensor_to_controller.trace.file: bad.csv:2: status: want delivered or lost, got "maybe"`},
		{"trace and loss", "sensor_to_controller:\n  loss: 0.1\n  trace: {file: wifi.csv}\n", `p.yaml:2: sensor_to_controller.loss: want either trace or loss, got both`},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := Parse([]byte(c.yaml), "p.yaml", dir)
			if err == nil || err.Error() != c.want {
				t.Errorf("got  %v\nwant %s", err, c.want)
			}
		})
	}
}
