package tests

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"rigwire/estimate"
	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// jitteryController is the rig controller's computing time in the
// calibration test: 1 ms plus a gamma of shape 2 and scale 2 ms (mean
// 5 ms in all) at a 10 ms period, where the loop file says 1 ms.
const jitteryController = "{kind: gamma, shape: 2, scale: 2ms, shift: 1ms}"

// TestCalibrationEndToEnd: a slow, jittery rig controller that the loop
// file does not know about (it says 1 ms; the controller draws 1 ms plus
// a gamma of mean 4 ms for every sample), each part its own process on
// loopback.
//
//  1. monitor calibrate relays the rig over a clean link for 15 s and
//     writes the rig timing file.
//  2. The rig then runs for three minutes through impair run over the
//     loop's profile, with the relay pairing commands and samples
//     (--loop, --record) and monitor run on its tap judging the measured
//     E[eᵀe] against the prediction of the loop calibrated with that file.
//
// Checks: the uncalibrated prediction misses the measurement (it is
// below the monitor's 95 % interval widened by the usual tolerance, 0.1;
// the miss is logged), the calibrated one agrees with it (the monitor's
// verdict with that same tolerance); and the relay's turnarounds agree
// with the controller's own log of its computing times plus the loopback
// hops: every turnaround is at least the computing time drawn for it,
// and the turnarounds have the law of computing time plus an independent
// hop (two-sample Kolmogorov–Smirnov at α = 0.001 against the logged
// computing times each added to the hop of another command, drawn at
// random: N. Smirnov 1948, the asymptotic law with n·m/(n+m) as
// profiles/laws/ks.go computes it).
func TestCalibrationEndToEnd(t *testing.T) {
	if testing.Short() {
		t.Skip("a three-and-a-half-minute run")
	}
	if !hasMonitorRun(t) {
		t.Skip("monitor run is not available")
	}
	t.Parallel()
	const src = "../profiles/examples/checks/rig-jitter.yaml"
	dir := t.TempDir()
	loopPath, calPath, out := calibrateRig(t, src, dir, 15*time.Second, "--compute", jitteryController, "--seed", "3")
	for _, want := range []string{"chosen (least AIC)", "prediction with the measured turnaround", "calibrating", "sensor-side latency added"} {
		if !strings.Contains(out, want) {
			t.Errorf("monitor calibrate's output lacks %q:\n%s", want, out)
		}
	}
	orig, err := profiles.LoadLoop(loopPath)
	if err != nil {
		t.Fatal(err)
	}
	calLoop, err := profiles.LoadLoop(calPath)
	if err != nil {
		t.Fatal(err)
	}
	// The fitted law's mean: the controller's 5 ms plus the hops and the
	// stacks, a few tenths of a millisecond on an idle loopback.
	if m := calLoop.ComputeMean(); m < 0.005 || m > 0.0062 {
		t.Errorf("calibrated compute delay: mean %s, want 5 ms and the loopback's hops", laws.FormatSeconds(m))
	}
	t.Logf("calibrated: %s (mean %s)", laws.Describe(calLoop.Compute), laws.FormatSeconds(calLoop.ComputeMean()))

	// 2. Three minutes through the impaired link.
	record, ctlLog := filepath.Join(dir, "record.csv"), filepath.Join(dir, "controller.csv")
	relayMetrics := freePort(t, "tcp")
	r := startRigOpts(t, calPath, 3*time.Minute, "15", rigOpts{monitor: true,
		ctlArgs:     []string{"--compute", jitteryController, "--seed", "5", "--log", ctlLog, "--cautions-read"},
		relayArgs:   []string{"--loop", calPath, "--record", record, "--sample-clock", "monotonic", "--metrics", relayMetrics},
		monitorArgs: []string{"--relay-metrics", relayMetrics}})
	var s struct {
		Samples   int      `json:"samples"`
		Measured  *float64 `json:"error_second_moment"`
		Lo        *float64 `json:"ci_low"`
		Hi        *float64 `json:"ci_high"`
		Predicted *float64 `json:"predicted_second_moment"`
		Verdict   string   `json:"verdict"`
		Reason    string   `json:"verdict_reason"`
		Tolerance float64  `json:"tolerance"`
		// monitor run's reading of the relay's turnaround histogram.
		Turnaround *struct {
			Commands int     `json:"commands"`
			Mean     float64 `json:"mean_seconds"`
			Binned   bool    `json:"binned"`
			Agrees   bool    `json:"agrees"`
			KS       float64 `json:"ks_statistic"`
		} `json:"controller_turnaround"`
	}
	b, err := os.ReadFile(r.summary)
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, &s); err != nil || s.Measured == nil || s.Lo == nil || s.Hi == nil || s.Predicted == nil {
		t.Fatalf("summary: %v\n%s", err, b)
	}
	prOrig, err := estimate.Predict(orig, estimate.PredictOptions{SkipMargin: true})
	if err != nil || prOrig.Error == nil {
		t.Fatalf("uncalibrated prediction: %v", err)
	}
	uncal := prOrig.Error.SecondMoment
	t.Logf("measured %.5g in [%.5g, %.5g] over %d samples; calibrated prediction %.5g (%s: %s); uncalibrated %.5g, %.0f %% below the measurement",
		*s.Measured, *s.Lo, *s.Hi, s.Samples, *s.Predicted, s.Verdict, s.Reason, uncal, 100*(1 - uncal / *s.Measured))
	if s.Verdict != "agree" || s.Tolerance != 0.1 {
		t.Errorf("calibrated: verdict %s with tolerance %g: %s", s.Verdict, s.Tolerance, s.Reason)
	}
	if lo := *s.Lo * (1 - s.Tolerance); uncal >= lo {
		t.Errorf("uncalibrated prediction %.5g is not below the measured interval widened by %g (%.5g): the case does not show the controller's timing",
			uncal, s.Tolerance, lo)
	}

	// The relay's turnarounds against the controller's own log.
	compute := map[uint64]float64{}
	for _, l := range readLines(t, ctlLog)[1:] {
		f := strings.Split(l, ",")
		k, err1 := strconv.ParseUint(f[0], 10, 64)
		c, err2 := strconv.ParseFloat(f[3], 64)
		if err1 != nil || err2 != nil {
			t.Fatalf("controller log: %q", l)
		}
		compute[k] = c
	}
	var turns, comps, hops, lats []float64
	for _, l := range readLines(t, record) {
		f := strings.Split(l, ",")
		if len(f) == 11 && f[1] == profiles.SensorToController && f[10] != "" {
			lat, err := strconv.ParseFloat(f[10], 64)
			if err != nil || lat < 0 {
				t.Fatalf("record line %q: sensor_latency_s", l)
			}
			lats = append(lats, lat)
		}
		if len(f) != 11 || f[1] != profiles.ControllerToActuator || f[9] == "" {
			continue
		}
		k, err1 := strconv.ParseUint(f[8], 10, 64)
		turn, err2 := strconv.ParseFloat(f[9], 64)
		c, ok := compute[k]
		if err1 != nil || err2 != nil || !ok {
			t.Fatalf("record line %q: no computing time logged for it (%v, %v)", l, err1, err2)
		}
		if turn < c {
			t.Errorf("sample %d: turnaround %gs shorter than the computing time drawn, %gs", k, turn, c)
		}
		turns, comps, hops = append(turns, turn), append(comps, c), append(hops, turn-c)
	}
	if want := int(0.9 * float64(len(compute))); len(turns) < want {
		t.Fatalf("%d turnarounds in the record for %d commands logged", len(turns), len(compute))
	}
	// The sensor side: the node's stack and one loopback hop, well below a
	// millisecond but for a few stalls of a loaded machine.
	slices.Sort(lats)
	switch {
	case len(lats) < 17000:
		t.Errorf("%d sensor-side latencies in the record, want one per sample", len(lats))
	case lats[len(lats)/2] > 0.001:
		t.Errorf("sensor-side latency: median %s, want a loopback hop", laws.FormatSeconds(lats[len(lats)/2]))
	}
	rng := rand.New(rand.NewPCG(1, 2))
	rng.Shuffle(len(hops), func(i, j int) { hops[i], hops[j] = hops[j], hops[i] })
	model := make([]float64, len(comps))
	for i := range comps {
		model[i] = comps[i] + hops[i]
	}
	slices.Sort(hops)
	d, p := ks2(turns, model)
	t.Logf("turnarounds: %d; hops median %s, p99 %s; two-sample KS D = %.4f, p = %.3g", len(turns),
		laws.FormatSeconds(hops[len(hops)/2]), laws.FormatSeconds(hops[len(hops)*99/100]), d, p)
	if p < 0.001 {
		t.Errorf("the relay's turnarounds against the controller's computing times plus independent hops: KS D = %.4f, p = %.3g", d, p)
	}

	// monitor run --relay-metrics read the relay's histogram of the same
	// turnarounds (every 10 s: its last reading may miss the run's last
	// seconds) and compared it with the calibrated law; the verdict is
	// logged, not judged (the law was fitted on another run of the rig).
	tr := s.Turnaround
	if tr == nil {
		t.Fatalf("summary: no controller_turnaround from --relay-metrics\n%s", b)
	}
	mean := 0.0
	for _, x := range turns {
		mean += x / float64(len(turns))
	}
	t.Logf("monitor run's reading of the relay's histogram: %d commands, mean %s (record: %d, %s), agrees %v (D = %.4f at the buckets' bounds)",
		tr.Commands, laws.FormatSeconds(tr.Mean), len(turns), laws.FormatSeconds(mean), tr.Agrees, tr.KS)
	if !tr.Binned || tr.Commands < len(turns)*9/10 || tr.Commands > len(turns)*11/10 || math.Abs(tr.Mean/mean-1) > 0.05 {
		t.Errorf("controller_turnaround: %d commands of mean %s, want the record's %d of mean %s (within the last 10 s and 5 %%)",
			tr.Commands, laws.FormatSeconds(tr.Mean), len(turns), laws.FormatSeconds(mean))
	}
}

// calibrateRig runs monitor calibrate for dur between the rig node and
// the rig controller (with ctlArgs), each its own process, on a copy of
// the loop file src in dir, the sensor side measured too (the node's
// sample times are on this host's CLOCK_MONOTONIC). It returns the copy, a copy calibrated with
// the rig timing file written, and calibrate's output.
func calibrateRig(t *testing.T, src, dir string, dur time.Duration, ctlArgs ...string) (loopPath, calPath, out string) {
	t.Helper()
	loopPath = copyLoop(t, src, dir, "")
	timing := filepath.Join(dir, strings.TrimSuffix(filepath.Base(src), ".yaml")+".timing.yaml")
	mon := buildCmd(t, "monitor")
	ctlAddr, relayAddr := freePort(t, "udp"), freePort(t, "udp")
	ctl := start(t, mon, append([]string{"rig", "controller", "--loop", loopPath, "--listen", ctlAddr, "--cautions-read"}, ctlArgs...)...)
	cal := start(t, mon, "calibrate", "--loop", loopPath, "--listen", relayAddr, "--controller", ctlAddr,
		"--duration", dur.String(), "--every", "10s", "--write", timing, "--sample-clock", "monotonic", "--cautions-read")
	time.Sleep(300 * time.Millisecond)
	node := start(t, mon, "rig", "node", "--loop", loopPath, "--relay", relayAddr, "--duration", (dur - time.Second).String(), "--seed", "4", "--cautions-read")
	if code := node.wait(t, dur+30*time.Second); code != 0 {
		t.Fatalf("rig node exited %d:\n%s", code, node.out.String())
	}
	if code := cal.wait(t, 30*time.Second); code != 0 {
		t.Fatalf("monitor calibrate exited %d:\n%s", code, cal.out.String())
	}
	ctl.signal(t, syscall.SIGTERM)
	ctl.wait(t, 20*time.Second)
	return loopPath, copyLoop(t, src, dir, timing), cal.out.String()
}

// copyLoop copies the loop file src into dir with its profile path made
// absolute and, when timing is not "", compute_delay pointing at that rig
// timing file; it returns the copy's path.
func copyLoop(t *testing.T, src, dir, timing string) string {
	t.Helper()
	b, err := os.ReadFile(src)
	if err != nil {
		t.Fatal(err)
	}
	abs, err := filepath.Abs(filepath.Dir(src))
	if err != nil {
		t.Fatal(err)
	}
	var lines []string
	for _, l := range strings.Split(string(b), "\n") {
		switch {
		case strings.HasPrefix(l, "profile: "):
			l = "profile: " + filepath.Join(abs, strings.TrimPrefix(l, "profile: "))
		case strings.HasPrefix(l, "compute_delay: ") && timing != "":
			l = "compute_delay: " + timing
		}
		lines = append(lines, l)
	}
	name := "uncalibrated.yaml"
	if timing != "" {
		name = "calibrated.yaml"
	}
	out := filepath.Join(dir, name)
	if err := os.WriteFile(out, []byte(strings.Join(lines, "\n")), 0o644); err != nil {
		t.Fatal(err)
	}
	return out
}

// ks2 is the two-sample Kolmogorov–Smirnov statistic of a and b and its
// asymptotic p-value with the effective size n·m/(n+m) (N. Smirnov 1948).
func ks2(a, b []float64) (d, p float64) {
	a, b = slices.Clone(a), slices.Clone(b)
	slices.Sort(a)
	slices.Sort(b)
	i, j := 0, 0
	for i < len(a) && j < len(b) {
		x := math.Min(a[i], b[j])
		for i < len(a) && a[i] <= x {
			i++
		}
		for j < len(b) && b[j] <= x {
			j++
		}
		d = math.Max(d, math.Abs(float64(i)/float64(len(a))-float64(j)/float64(len(b))))
	}
	n := float64(len(a)) * float64(len(b)) / float64(len(a)+len(b))
	return d, laws.KolmogorovSurvival((math.Sqrt(n) + 0.12 + 0.11/math.Sqrt(n)) * d)
}
