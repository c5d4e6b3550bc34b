package main

import (
	"bytes"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"rigwire/estimate/fit"
	"rigwire/profiles"
	"rigwire/profiles/trace"
)

// writeSyntheticTrace writes a trace of n probes every h seconds: gamma
// round trips drawn with gonum's distuv (a reference sampler), one-way
// delays of 0.6 of them, and losses from a simplified Gilbert chain with
// per-probe p, r (seeded).
func writeSyntheticTrace(t *testing.T, path string, n int, h, shape, scale, shift, p, r float64) {
	t.Helper()
	g := distuv.Gamma{Alpha: shape, Beta: 1 / scale, Src: rand.NewPCG(3, 4)}
	rng := rand.New(rand.NewPCG(5, 6))
	var b strings.Builder
	fmt.Fprintf(&b, "%s\n# interval_s: %g\n# clocks_synced: true\nseq,send_s,status,rtt_s,one_way_s,back_s,copies,reordered\n", trace.TraceHeaderComment, h)
	bad := false
	for i := range n {
		if bad {
			bad = rng.Float64() >= r
		} else {
			bad = rng.Float64() < p
		}
		if bad {
			fmt.Fprintf(&b, "%d,%.6f,lost,,,,0,0\n", i, float64(i)*h)
			continue
		}
		rtt := shift + g.Rand()
		fmt.Fprintf(&b, "%d,%.6f,delivered,%.9f,%.9f,%.9f,1,0\n", i, float64(i)*h, rtt, 0.6*rtt, 0.4*rtt)
	}
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
}

// TestFitCommand: impair fit on a synthetic trace writes a profile that
// loads, puts the burst channel in states with the dwells that give p and
// r back, and halves round trips only when told.
func TestFitCommand(t *testing.T) {
	const (
		n, h                = 20000, 0.005
		shape, scale, shift = 3.0, 2e-3, 4e-3
		p, r                = 0.01, 0.2
		seTol               = 3.5 // standard errors, as in estimate's tests
	)
	dir := t.TempDir()
	trace := filepath.Join(dir, "uplink.csv")
	writeSyntheticTrace(t, trace, n, h, shape, scale, shift, p, r)
	cases := []struct {
		name  string
		flag  string
		scale float64 // of the fitted delay against the round trip
	}{
		{"round trip", "--round-trip", 1},
		{"halved", "--halve-rtt", 0.5},
		{"one way", "--one-way", 0.6},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			out := filepath.Join(dir, strings.TrimPrefix(c.flag, "--")+".yaml")
			var stdout, stderr bytes.Buffer
			if code := dispatch([]string{"fit", trace, c.flag, "--out", out, "--loop", "../../profiles/examples/loops/conveyor.yaml"}, &stdout, &stderr); code != 0 {
				t.Fatalf("exit %d: %s", code, stderr.String())
			}
			for _, want := range []string{"KS D", "Lilliefors", "simplified Gilbert", "chosen: burst channel", "prediction for"} {
				if !strings.Contains(stdout.String(), want) {
					t.Errorf("output lacks %q:\n%s", want, stdout.String())
				}
			}
			prof, err := profiles.Load(out)
			if err != nil {
				t.Fatal(err)
			}
			ch := prof.SensorToController
			if len(ch.States) != 2 || ch.States[0].Loss != 0 || ch.States[1].Loss != 1 {
				t.Fatalf("want a good/burst two-state channel, got %+v", ch.States)
			}
			if len(prof.ControllerToActuator.States) != 1 || prof.ControllerToActuator.States[0].Loss != 0 {
				t.Errorf("the other direction should be clean")
			}
			gp, gr := fit.GilbertStep(ch.States[0].MeanDwell, ch.States[1].MeanDwell, h)
			lf := fitOfTrace(t, trace)
			if math.Abs(gp-p) > seTol*lf.PSE || math.Abs(gr-r) > seTol*lf.RSE {
				t.Errorf("the profile's dwells give p %.4g r %.4g per probe, want %g %g", gp, gr, p, r)
			}
			// the fitted delay's mean against the law's: shift + shape·scale,
			// scaled; tolerance seTol standard errors of a mean (σ/√n).
			mean := ch.States[0].Delay.Mean()
			want := c.scale * (shift + shape*scale)
			se := c.scale * math.Sqrt(shape) * scale / math.Sqrt(float64(n)*(1-lf.LongRunLoss))
			if math.Abs(mean-want) > seTol*se {
				t.Errorf("fitted mean delay %.5g, want %.5g ± %.2g", mean, want, seTol*se)
			}
		})
	}
}

func fitOfTrace(t *testing.T, path string) fit.LossFit {
	t.Helper()
	tr, err := trace.LoadTrace(path)
	if err != nil {
		t.Fatal(err)
	}
	_, lost, err := tr.Fates("rtt_s")
	if err != nil {
		t.Fatal(err)
	}
	lf, err := fit.Loss(lost)
	if err != nil {
		t.Fatal(err)
	}
	return lf
}

// TestFitBadInput: each bad trace or flag exits non-zero with a message
// naming the file, the line and the problem.
func TestFitBadInput(t *testing.T) {
	dir := t.TempDir()
	write := func(name, text string) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	const head = "# rigwire probe trace v1\nseq,send_s,status,rtt_s\n"
	empty := write("empty.csv", "")
	headerOnly := write("header.csv", head)
	truncated := write("trunc.csv", head+"0,0.1,delivered,0.003\n1,0.2,deliv")
	unsynced := write("unsynced.csv", head+"0,0.1,delivered,0.003\n")
	few := write("few.csv", head+"0,0.1,delivered,0.003\n1,0.2,lost,\n")
	cases := []struct {
		name string
		args []string
		code int
		want string
	}{
		{"empty", []string{empty, "--halve-rtt"}, 2, empty + ": empty trace: no probe lines (and no header line)"},
		{"header only", []string{headerOnly, "--halve-rtt"}, 2, headerOnly + ": empty trace: no probe lines"},
		{"truncated", []string{truncated, "--halve-rtt"}, 2, truncated + ":4: want 4 fields, got 3 (a truncated line?)"},
		{"no mode", []string{unsynced}, 2, "want exactly one of --one-way, --halve-rtt, --round-trip (a round trip is halved only when you say so), got 0"},
		{"two modes", []string{unsynced, "--one-way", "--halve-rtt"}, 2, "got 2"},
		{"one-way unsynced", []string{unsynced, "--one-way"}, 2, unsynced + ": --one-way: the trace does not declare synchronised clocks (clocks_synced: true); use --halve-rtt or --round-trip"},
		{"too few", []string{few, "--round-trip"}, 2, few + ": 1 delivered probes, want at least 10 to fit delays"},
		{"bad direction", []string{unsynced, "--round-trip", "--direction", "up"}, 2, `--direction: want sensor_to_controller, controller_to_actuator or both, got "up"`},
		{"no file", []string{filepath.Join(dir, "none.csv"), "--round-trip"}, 2, "reading trace: open " + filepath.Join(dir, "none.csv") + ": no such file or directory"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var stdout, stderr bytes.Buffer
			code := dispatch(append([]string{"fit"}, c.args...), &stdout, &stderr)
			if code != c.code || !strings.Contains(stderr.String(), c.want) {
				t.Errorf("exit %d, stderr %q; want exit %d and %q", code, stderr.String(), c.code, c.want)
			}
		})
	}
}

// TestProbeEchoBadFlags: flags are validated before anything is sent.
func TestProbeEchoBadFlags(t *testing.T) {
	cases := []struct {
		name string
		args []string
		want string
	}{
		{"probe without target", []string{"probe", "--out", "x.csv"}, "--target: required"},
		{"probe without out", []string{"probe", "--target", "127.0.0.1:9"}, "--out: required"},
		{"probe small size", []string{"probe", "--target", "127.0.0.1:9", "--out", "x.csv", "--size", "8"}, "--size: want 36…65507 bytes, got 8"},
		{"probe bad rate", []string{"probe", "--target", "127.0.0.1:9", "--out", "x.csv", "--rate", "0"}, "--rate: want a rate in (0, 100000] per second, got 0"},
		{"probe too many", []string{"probe", "--target", "127.0.0.1:9", "--out", "x.csv", "--rate", "100000", "--duration", "1000s"}, "--rate × --duration: want at most 10000000 probes, got 100000000"},
		{"echo without listen", []string{"echo"}, "--listen: required"},
		{"echo bad listen", []string{"echo", "--listen", "nowhere"}, `want HOST:PORT, got "nowhere"`},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var stdout, stderr bytes.Buffer
			if code := dispatch(c.args, &stdout, &stderr); code != 2 || !strings.Contains(stderr.String(), c.want) {
				t.Errorf("exit %d, stderr %q; want 2 and %q", code, stderr.String(), c.want)
			}
		})
	}
}

// TestFitNoLosses: a trace without losses (or whose only loss is its last
// probe) says nothing about r = P(delivered | previous lost); the fit
// says so instead of printing NaN.
func TestFitNoLosses(t *testing.T) {
	dir := t.TempDir()
	cases := []struct {
		name     string
		lastLost bool
		want     []string
	}{
		{"no losses", false, []string{"loss 0 (none in 500 probes; 95 % upper bound 0.006", "r not identifiable (no losses)", "chosen: i.i.d.; no losses in the trace"}},
		{"only the last probe lost", true, []string{"r not identifiable (no lost probe is followed by another)", "chosen: i.i.d."}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var b strings.Builder
			fmt.Fprintf(&b, "%s\n# interval_s: 0.01\nseq,send_s,status,rtt_s\n", trace.TraceHeaderComment)
			rng := rand.New(rand.NewPCG(8, 9))
			const n = 500
			for i := range n {
				if c.lastLost && i == n-1 {
					fmt.Fprintf(&b, "%d,%.2f,lost,\n", i, float64(i)*0.01)
					continue
				}
				fmt.Fprintf(&b, "%d,%.2f,delivered,%.6f\n", i, float64(i)*0.01, 0.002+0.001*rng.ExpFloat64())
			}
			trace := filepath.Join(dir, strings.ReplaceAll(c.name, " ", "-")+".csv")
			if err := os.WriteFile(trace, []byte(b.String()), 0o644); err != nil {
				t.Fatal(err)
			}
			var stdout, stderr bytes.Buffer
			if code := dispatch([]string{"fit", trace, "--round-trip"}, &stdout, &stderr); code != 0 {
				t.Fatalf("exit %d: %s", code, stderr.String())
			}
			out := stdout.String()
			if strings.Contains(strings.ToLower(out), "nan") {
				t.Errorf("output holds NaN:\n%s", out)
			}
			for _, w := range c.want {
				if !strings.Contains(out, w) {
					t.Errorf("output lacks %q:\n%s", w, out)
				}
			}
		})
	}
}
