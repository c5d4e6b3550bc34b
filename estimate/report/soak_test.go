package report

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"math"
	"os"
	"strings"
	"testing"

	"rigwire/emulate"
	"rigwire/estimate/engine"
	"rigwire/profiles"
)

// The shipped conveyor loop and scenario: every file the soak reads is
// listed once, with all its roles, hashed (SHA-256 recomputed here from
// the file) and embedded; each phase's source names its overrides.
func TestSoakInputsAndSources(t *testing.T) {
	loop, err := profiles.LoadLoop("../../profiles/examples/loops/conveyor.yaml")
	if err != nil {
		t.Fatal(err)
	}
	sc, err := profiles.LoadScenario("../../profiles/examples/scenarios/conveyor-qualification.yaml")
	if err != nil {
		t.Fatal(err)
	}
	ins := SoakInputs(loop, sc)
	roles := map[string]Input{}
	for _, in := range ins {
		roles[in.Role] = in
		b, err := os.ReadFile(in.Path)
		if err != nil {
			t.Fatal(err)
		}
		sum := sha256.Sum256(b)
		if in.SHA256 != hex.EncodeToString(sum[:]) || in.Text != string(b) || in.Err != "" {
			t.Errorf("%s (%s): sha256 %s, embedded %d bytes, err %q; want the file's own", in.Role, in.Path, in.SHA256, len(in.Text), in.Err)
		}
	}
	for _, want := range []string{"loop", "scenario"} {
		if _, ok := roles[want]; !ok {
			t.Errorf("inputs %v lack the %s", ins, want)
		}
	}
	base := false
	for r := range roles {
		base = base || strings.Contains(r, "scenario's base profile")
	}
	if !base {
		t.Errorf("inputs %v lack the scenario's base profile", ins)
	}
	src := readScenarioSources(sc)
	deg := src.describe(1, sc)
	for _, want := range []string{"warehouse-wifi.yaml", "set {sensor_to_controller.states.clear.mean_dwell: 3s}", "ramp {"} {
		if !strings.Contains(deg, want) {
			t.Errorf("degrading phase's source %q lacks %q", deg, want)
		}
	}
	if got := src.describe(0, sc); strings.Contains(got, " with ") {
		t.Errorf("nominal phase's source %q: want the base profile alone", got)
	}
}

// The summary JSON keeps the monitor's keys at the top and adds the
// provenance beside them.
func TestSoakSummaryProvenance(t *testing.T) {
	s := &engine.Summary{Samples: 12, Verdict: "agree", Phases: []engine.PhaseResult{{Name: "nominal"}}}
	prov := &Provenance{Version: "(devel)", Revision: "abc", CommandLine: []string{"monitor", "soak"}, TimeScale: 0.3,
		Inputs: []Input{InputFromBytes("loop", "l.yaml", []byte("period: 10ms\n"))}}
	b, err := json.Marshal(SoakSummary{Summary: s, Provenance: prov})
	if err != nil {
		t.Fatal(err)
	}
	var m map[string]any
	if err := json.Unmarshal(b, &m); err != nil {
		t.Fatal(err)
	}
	if m["samples"] != 12.0 || m["verdict"] != "agree" || m["phases"] == nil {
		t.Errorf("summary keys lost: %s", b)
	}
	p, _ := m["provenance"].(map[string]any)
	sum := sha256.Sum256([]byte("period: 10ms\n"))
	if p == nil || p["version"] != "(devel)" || p["time_scale"] != 0.3 || !strings.Contains(string(b), hex.EncodeToString(sum[:])) {
		t.Errorf("provenance in the summary: %s", b)
	}
}

// The median read off a histogram: linear within the bucket that holds
// it (a uniform law on [0, 4 ms] in buckets of 1 ms has its median at 2 ms).
func TestHistMedian(t *testing.T) {
	cases := []struct {
		name string
		h    Histogram
		want float64
	}{
		{"uniform", Histogram{Upper: []float64{0.001, 0.002, 0.003, 0.004, math.Inf(1)}, Counts: []float64{25, 25, 25, 25, 0}}, 0.002},
		{"one bucket", Histogram{Upper: []float64{0.001, 0.002, math.Inf(1)}, Counts: []float64{0, 10, 0}}, 0.0015},
		{"overflow", Histogram{Upper: []float64{0.001, math.Inf(1)}, Counts: []float64{1, 9}}, math.NaN()},
		{"empty", Histogram{Upper: []float64{0.001}, Counts: []float64{0}}, math.NaN()},
	}
	const tol = 1e-12
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got := histMedian(c.h)
			if math.IsNaN(c.want) != math.IsNaN(got) || (!math.IsNaN(got) && math.Abs(got-c.want) > tol) {
				t.Errorf("median %g, want %g", got, c.want)
			}
		})
	}
	// Counts between two snapshots.
	a := emulate.Histogram{Count: 5, Buckets: []emulate.Bucket{{UpperBound: 0.001, Count: 3}}}
	b := emulate.Histogram{Count: 15, Buckets: []emulate.Bucket{{UpperBound: 0.001, Count: 10}}}
	h := bucketCounts(a, b)
	if len(h.Counts) != 2 || h.Counts[0] != 7 || h.Counts[1] != 3 || !math.IsInf(h.Upper[1], 1) {
		t.Errorf("diff %v, want [7 3]", h.Counts)
	}
}
