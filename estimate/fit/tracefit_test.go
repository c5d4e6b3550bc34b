package fit

import (
	"bytes"
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"rigwire/profiles"
	"rigwire/profiles/trace"
)

// burstTrace is a trace of n probes every h seconds: exponential round
// trips of mean 3 ms above 2 ms, losses from a simplified Gilbert chain
// with per-probe p and r (seeded).
func burstTrace(t *testing.T, n int, h, p, r float64, synced bool) *trace.Trace {
	t.Helper()
	rng := rand.New(rand.NewPCG(11, 12))
	var b strings.Builder
	fmt.Fprintf(&b, "%s\n# interval_s: %g\n# clocks_synced: %v\nseq,send_s,status,rtt_s,one_way_s\n", trace.TraceHeaderComment, h, synced)
	bad := false
	for i := range n {
		if bad {
			bad = rng.Float64() >= r
		} else {
			bad = rng.Float64() < p
		}
		if bad {
			fmt.Fprintf(&b, "%d,%.6f,lost,,\n", i, float64(i)*h)
			continue
		}
		rtt := 0.002 + 0.003*rng.ExpFloat64()
		fmt.Fprintf(&b, "%d,%.6f,delivered,%.9f,%.9f\n", i, float64(i)*h, rtt, rtt/2)
	}
	tr, err := trace.ReadTrace(strings.NewReader(b.String()), "burst.csv")
	if err != nil {
		t.Fatal(err)
	}
	return tr
}

// TestTraceDraftLoads: the fitted draft of a bursty trace is written and
// loads as a profile whose two states' dwells give back the fitted p and
// r at the probe interval (to the six digits the file keeps), on the
// direction asked for, the other clean.
func TestTraceDraftLoads(t *testing.T) {
	const (
		h      = 0.005
		digits = 1e-5 // relative: six significant digits in the file
	)
	tr := burstTrace(t, 4000, h, 0.02, 0.2, false)
	r, err := Trace(tr, HalfRTT)
	if err != nil {
		t.Fatal(err)
	}
	if !r.Loss.Burst || !r.DwellOK {
		t.Fatalf("want a burst channel with dwells, got %+v", r.Loss)
	}
	var b bytes.Buffer
	if err := profiles.Write(&b, r.Draft("uplink", profiles.ControllerToActuator)); err != nil {
		t.Fatal(err)
	}
	p, err := profiles.Parse(b.Bytes(), "fitted.yaml", "")
	if err != nil {
		t.Fatalf("%v\n%s", err, b.String())
	}
	ch := p.ControllerToActuator
	if len(ch.States) != 2 || len(p.SensorToController.States) != 1 || p.SensorToController.States[0].Loss != 0 {
		t.Fatalf("want the burst channel on controller_to_actuator only:\n%s", b.String())
	}
	gp, gr := GilbertStep(ch.States[0].MeanDwell, ch.States[1].MeanDwell, h)
	if math.Abs(gp-r.Loss.P) > digits*r.Loss.P || math.Abs(gr-r.Loss.R) > digits*r.Loss.R {
		t.Errorf("dwells give p %.6g r %.6g, the fit %.6g %.6g", gp, gr, r.Loss.P, r.Loss.R)
	}
}

// TestTraceRefuses: one-way delays without synchronised clocks, and too
// few delivered probes, are refused naming the trace.
func TestTraceRefuses(t *testing.T) {
	cases := []struct {
		name  string
		tr    *trace.Trace
		which TraceDelay
		want  string
	}{
		{"one way, clocks not synced", burstTrace(t, 100, 0.01, 0.01, 0.5, false), OneWay, "burst.csv: one-way delays need synchronised clocks"},
		{"too few", burstTrace(t, 5, 0.01, 0, 1, true), RoundTrip, "burst.csv: 5 delivered probes, want at least 10"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if _, err := Trace(c.tr, c.which); err == nil || !strings.Contains(err.Error(), c.want) {
				t.Errorf("error %v, want %q", err, c.want)
			}
		})
	}
}
