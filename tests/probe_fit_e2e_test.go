package tests

import (
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"rigwire/estimate"
	"rigwire/estimate/fit"
	"rigwire/profiles"
	"rigwire/profiles/trace"
)

// Tolerances of the full loop, each with its reason.
const (
	// fitSE: a fitted parameter may sit this many standard errors
	// (observed information) from the configured one; about 5e-4
	// two-sided for a normal estimator (asymptotic normality of the MLE).
	fitSE = 3.5
	// stackAllowance: what the loopback stack, the relay's release
	// lateness and the prober's and echo's scheduling add to every
	// measured one-way delay on these machines (the relay e2e test allows
	// −0.2/+1 ms on a median for the same reason); it is added to the
	// tolerance of time parameters, and mostly moves the shift.
	stackAllowance = 0.3e-3
	// momentRelTol: the predicted E[eᵀe] of the example loop under the
	// fitted profile may differ from the one under the configured profile
	// by this fraction (the fitted law and loss carry their estimation
	// error and the stack allowance above).
	momentRelTol = 0.10
)

// TestProbeFitRecoversRelayProfile is the full loop of characterisation:
// the built impair binary relays (its own process) with a known profile —
// gamma delays and a two-state burst loss on the outbound direction — an
// impair echo answers behind it, impair probe measures through it with
// declared-synchronised clocks (one machine, one clock), and impair fit
// fits the trace. The fitted parameters must match the configured ones
// within their confidence intervals, and the example conveyor loop's
// predicted second moment must agree under both profiles.
func TestProbeFitRecoversRelayProfile(t *testing.T) {
	if testing.Short() {
		t.Skip("sends probes for 10 s")
	}
	const (
		interval   = 0.002 // 500 probes/s
		duration   = "10s"
		shape      = 4.0
		scale      = 1e-3
		shift      = 2e-3
		pLoss      = 0.02 // per-probe P(lost | previous delivered)
		rRecover   = 0.25 // per-probe P(delivered | previous lost)
		loopFile   = "../profiles/examples/loops/conveyor.yaml"
		probeBytes = 64
	)
	good, bad, err := (fit.LossFit{P: pLoss, R: rRecover}).Dwell(interval)
	if err != nil {
		t.Fatal(err)
	}
	profile := fmt.Sprintf(`name: e2e-fit
seed: 5
sensor_to_controller:
  states:
    - {name: good, mean_dwell: %gs, loss: 0, delay: {kind: gamma, shape: %g, scale: %gs, shift: %gs}}
    - {name: burst, mean_dwell: %gs, loss: 1, delay: {kind: gamma, shape: %g, scale: %gs, shift: %gs}}
`, good, shape, scale, shift, bad, shape, scale, shift)
	dir := t.TempDir()
	profPath := filepath.Join(dir, "profile.yaml")
	if err := os.WriteFile(profPath, []byte(profile), 0o644); err != nil {
		t.Fatal(err)
	}
	orig, err := profiles.Load(profPath)
	if err != nil {
		t.Fatal(err)
	}
	bin := buildCmd(t, "impair")
	echoAddr := freePort(t, "udp")
	echo := start(t, bin, "echo", "--listen", echoAddr)
	listen := freePort(t, "udp")
	metrics := freePort(t, "tcp")
	record := filepath.Join(dir, "record.csv")
	relay := start(t, bin, "run", "--profile", profPath, "--listen", listen,
		"--controller-bind", freePort(t, "udp"), "--controller", echoAddr, "--metrics", metrics,
		"--record", record)
	waitHTTP(t, "http://"+metrics+"/metrics", relay)
	waitOutput(t, echo, "echoing probes")

	traceFile := filepath.Join(dir, "trace.csv")
	probe := exec.Command(bin, "probe", "--target", listen, "--rate", fmt.Sprint(1/interval),
		"--size", fmt.Sprint(probeBytes), "--duration", duration, "--clocks-synced",
		"--wait", "500ms", "--out", traceFile)
	if out, err := probe.CombinedOutput(); err != nil {
		t.Fatalf("impair probe: %v\n%s", err, out)
	} else if !strings.Contains(string(out), "sent") {
		t.Errorf("impair probe printed no progress:\n%s", out)
	}
	fitted := filepath.Join(dir, "fitted.yaml")
	fitCmd := exec.Command(bin, "fit", traceFile, "--one-way", "--out", fitted, "--loop", loopFile)
	out, err := fitCmd.CombinedOutput()
	if err != nil {
		t.Fatalf("impair fit: %v\n%s", err, out)
	}
	t.Logf("impair fit:\n%s", out)
	for _, want := range []string{"gamma", "simplified Gilbert", "chosen: burst channel", "prediction for"} {
		if !strings.Contains(string(out), want) {
			t.Errorf("impair fit output lacks %q", want)
		}
	}

	// The same fit, in process, for the standard errors.
	tr, err := trace.LoadTrace(traceFile)
	if err != nil {
		t.Fatal(err)
	}
	delays, lost, err := tr.Fates("one_way_s")
	if err != nil {
		t.Fatal(err)
	}
	var kept []float64
	for i, l := range lost {
		if !l {
			kept = append(kept, delays[i])
		}
	}
	echo.signal(t, syscall.SIGTERM)
	relay.signal(t, syscall.SIGTERM)
	if code := relay.wait(t, 10*time.Second); code != 0 {
		t.Fatalf("impair run exited %d after SIGTERM, want 0", code)
	}
	noise := stackNoise(t, record, delays, lost)
	t.Logf("measured minus drawn one-way delay (loopback stack, scheduling): %s", noise)
	fits, err := fit.Delays(kept)
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range fits {
		if f.Kind != "gamma" {
			continue
		}
		for _, c := range []struct {
			name  string
			want  float64
			extra float64
		}{{"shape", shape, 0}, {"scale", scale, stackAllowance}, {"shift", shift, stackAllowance}} {
			est, se, _ := f.Param(c.name)
			if math.IsNaN(se) || math.Abs(est-c.want) > fitSE*se+c.extra {
				t.Errorf("gamma %s = %.5g ± %.2g, configured %.5g (tolerance %g SE + %g; this host added %s)", c.name, est, se, c.want, fitSE, c.extra, noise)
			}
		}
	}
	lf, err := fit.Loss(lost)
	if err != nil {
		t.Fatal(err)
	}
	// The relay's chain is in continuous time; sampled every interval it
	// gives back pLoss, rRecover exactly (fit.GilbertStep).
	if math.Abs(lf.P-pLoss) > fitSE*lf.PSE || math.Abs(lf.R-rRecover) > fitSE*lf.RSE {
		t.Errorf("loss p = %.4g ± %.2g, r = %.4g ± %.2g; configured %g, %g", lf.P, lf.PSE, lf.R, lf.RSE, pLoss, rRecover)
	}

	// The prediction under the fitted profile against the configured one.
	fp, err := profiles.Load(fitted)
	if err != nil {
		t.Fatalf("the fitted profile does not load: %v", err)
	}
	loop, err := profiles.LoadLoop(loopFile)
	if err != nil {
		t.Fatal(err)
	}
	predict := func(p *profiles.Profile) float64 {
		l := *loop
		l.Profile = p
		pr, err := estimate.Predict(&l, estimate.PredictOptions{SkipMargin: true})
		if err != nil {
			t.Fatal(err)
		}
		if pr.Error == nil {
			t.Fatal("conveyor loop not mean-square stable under a fitted profile")
		}
		return pr.Error.SecondMoment
	}
	mOrig, mFit := predict(orig), predict(fp)
	t.Logf("conveyor E[eᵀe]: configured profile %.6g, fitted %.6g", mOrig, mFit)
	if math.Abs(mFit-mOrig) > momentRelTol*mOrig {
		t.Errorf("predicted E[eᵀe] under the fitted profile %.6g, under the configured one %.6g: want within %.0f %%", mFit, mOrig, 100*momentRelTol)
	}
	if code := echo.wait(t, 10*time.Second); code != 0 {
		t.Errorf("impair echo exited %d after SIGTERM, want 0", code)
	}
}

// waitOutput waits until p has printed want.
func waitOutput(t testing.TB, p *proc, want string) {
	t.Helper()
	deadline := time.Now().Add(20 * time.Second)
	for !strings.Contains(p.out.String(), want) {
		if time.Now().After(deadline) {
			t.Fatalf("no %q in the output after 20s:\n%s", want, p.out.String())
		}
		time.Sleep(20 * time.Millisecond)
	}
}

// stackNoise matches the relay's record of the outbound direction (in
// order of arrival, one line per probe) with the trace and describes
// measured − drawn delay: what the host adds to what the relay drew.
func stackNoise(t *testing.T, record string, delays []float64, lost []bool) string {
	t.Helper()
	type line struct {
		arrival, delay float64
		forwarded      bool
	}
	var ls []line
	for _, l := range readLines(t, record)[1:] {
		f := strings.Split(l, ",")
		if len(f) < 7 || f[1] != profiles.SensorToController {
			continue
		}
		a, _ := strconv.ParseFloat(f[0], 64)
		d, _ := strconv.ParseFloat(f[4], 64)
		ls = append(ls, line{a, d, f[3] == "forwarded"})
	}
	sort.SliceStable(ls, func(i, j int) bool { return ls[i].arrival < ls[j].arrival })
	if len(ls) != len(lost) {
		return fmt.Sprintf("unknown (record has %d outbound datagrams, trace %d probes)", len(ls), len(lost))
	}
	var diff []float64
	for i, l := range ls {
		if l.forwarded && !lost[i] {
			diff = append(diff, delays[i]-l.delay)
		}
	}
	if len(diff) == 0 {
		return "unknown (nothing delivered)"
	}
	sort.Float64s(diff)
	q := func(p float64) float64 { return diff[int(p*float64(len(diff)-1))] * 1e3 }
	return fmt.Sprintf("median %.3f ms, p90 %.3f ms, p99 %.3f ms", q(0.5), q(0.9), q(0.99))
}
