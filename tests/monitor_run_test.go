package tests

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"net"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"rigwire/estimate"
	"rigwire/profiles"
)

// monitorRun is `monitor run` started as its own process on loopback.
type monitorRun struct {
	p       *proc
	listen  *net.UDPAddr
	metrics string
	summary string
	sender  *net.UDPConn
}

const monitorLoop = "../profiles/examples/checks/monitor-text.yaml"

func startMonitorRun(t *testing.T, extra ...string) *monitorRun {
	t.Helper()
	bin := buildCmd(t, "monitor")
	listen := freePort(t, "udp")
	metrics := freePort(t, "tcp")
	m := &monitorRun{metrics: "http://" + metrics + "/metrics", summary: filepath.Join(t.TempDir(), "summary.json")}
	args := append([]string{"run", "--loop", monitorLoop, "--listen", listen, "--metrics", metrics,
		"--summary", m.summary, "--progress", "0", "--no-margin"}, extra...)
	m.p = start(t, bin, args...)
	waitHTTP(t, m.metrics, m.p)
	var err error
	if m.listen, err = net.ResolveUDPAddr("udp", listen); err != nil {
		t.Fatal(err)
	}
	if m.sender, err = net.DialUDP("udp", nil, m.listen); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { m.sender.Close() })
	return m
}

// send writes datagrams, pausing now and then so that loopback's socket
// buffers never overflow (the exact counts below rely on it).
func (m *monitorRun) send(t *testing.T, dgs [][]byte) {
	t.Helper()
	for i, d := range dgs {
		if _, err := m.sender.Write(d); err != nil {
			t.Fatal(err)
		}
		if i%200 == 199 {
			time.Sleep(2 * time.Millisecond)
		}
	}
}

// waitCounter polls the metrics until name{labels} reaches want.
func (m *monitorRun) waitCounter(t *testing.T, name string, want float64) map[string]map[string]float64 {
	t.Helper()
	deadline := time.Now().Add(20 * time.Second)
	for {
		s := scrape(t, m.metrics)
		if s[name][""] >= want || time.Now().After(deadline) {
			return s
		}
		time.Sleep(50 * time.Millisecond)
	}
}

type runSummary struct {
	Samples               int64            `json:"samples"`
	ErrorSecondMoment     *float64         `json:"error_second_moment"`
	CILow                 *float64         `json:"ci_low"`
	CIHigh                *float64         `json:"ci_high"`
	PredictedSecondMoment *float64         `json:"predicted_second_moment"`
	ErrorMean             []float64        `json:"error_mean"`
	ErrorStd              *float64         `json:"error_std"`
	Effective             *float64         `json:"effective_samples"`
	Verdict               string           `json:"verdict"`
	VerdictReason         string           `json:"verdict_reason"`
	Batches               int              `json:"batches"`
	BatchCorrelationZ     *float64         `json:"batch_correlation_z"`
	Tolerance             float64          `json:"tolerance"`
	Gaps                  int64            `json:"gaps"`
	Late                  int64            `json:"late_samples"`
	Duplicates            int64            `json:"duplicate_samples"`
	Datagrams             int64            `json:"datagrams"`
	DecodeFailures        map[string]int64 `json:"decode_failures"`
	SkippedWarmup         int64            `json:"skipped_warmup_samples"`
}

func readSummary(t *testing.T, path string) runSummary {
	t.Helper()
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var s runSummary
	if err := json.Unmarshal(data, &s); err != nil {
		t.Fatalf("%s: %v\n%s", path, err, data)
	}
	return s
}

// The monitor's measured values equal a direct computation from the very
// datagrams the test sent (the sums of e = r − y over the samples it
// kept), sequence gaps, reorders and duplicates are counted as
// sent, every rejected datagram is counted by its reason, the prediction
// in the summary is estimate.Predict's, and SIGTERM writes the summary
// and exits 0.
func TestMonitorRunMeasuresWhatWasSent(t *testing.T) {
	loop, err := profiles.LoadLoop(monitorLoop)
	if err != nil {
		t.Fatal(err)
	}
	pr, err := estimate.Predict(loop, estimate.PredictOptions{SkipMargin: true})
	if err != nil || pr.Error == nil {
		t.Fatalf("prediction: %v", err)
	}
	const warmupSamples = 10 // --warmup 0.2s at a 20 ms period
	m := startMonitorRun(t, "--warmup", "200ms", "--tolerance", "0.25")

	// Samples: sequence 0…N−1 with every 97th missing (a gap), every
	// 101st sent twice (a duplicate) and every 211th swapped with its
	// successor (late), speeds around the setpoint (seeded, invented).
	const n = 6000
	rng := rand.New(rand.NewPCG(11, 12))
	type sample struct {
		seq int
		y   float64
	}
	var order []sample
	gaps, dups, lates := 0, 0, 0
	for k := 0; k < n; k++ {
		if k%97 == 50 {
			gaps++
			continue
		}
		s := sample{k, 1.2 + 0.05*rng.NormFloat64() + 0.01}
		order = append(order, s)
		if k%101 == 7 {
			order = append(order, s)
			dups++
		}
	}
	for i := 300; i+1 < len(order); i += 211 {
		if order[i].seq+1 == order[i+1].seq && order[i].seq != order[i-1].seq && (i+2 >= len(order) || order[i+1].seq != order[i+2].seq) {
			order[i], order[i+1] = order[i+1], order[i]
			lates++
		}
	}
	var dgs [][]byte
	seen := map[int]bool{}
	var kept []float64 // errors of the samples the monitor must estimate, in arrival order
	unique := 0
	for _, s := range order {
		dgs = append(dgs, []byte(fmt.Sprintf("%d,%.3f,%s\n", s.seq, float64(s.seq)*0.02, strconv.FormatFloat(s.y, 'g', -1, 64))))
		if seen[s.seq] {
			continue
		}
		seen[s.seq] = true
		unique++
		if unique > warmupSamples {
			kept = append(kept, loop.Setpoint[0]-s.y)
		}
	}
	// Rejected datagrams, each with the reason it must be counted under.
	bad := map[string][][]byte{
		"too_short":    {[]byte("1,2"), []byte(""), []byte("12")},
		"not_a_number": {[]byte("5,0.1,fast"), []byte("5,0.1,"), []byte("\x00\xff\x10,\x01,\x02")},
		"not_finite":   {[]byte("5,0.1,1e999")},
		"out_of_range": {[]byte("5,0.1,3e200"), []byte("5,0.1,-1e300")},
		"bad_sequence": {[]byte("-3,0.1,1.2"), []byte("x,0.1,1.2")},
		"oversized":    {bytes.Repeat([]byte("9"), 5000), bytes.Repeat([]byte("1,"), 4000)},
	}
	rejected := 0
	for i, reason := range []string{"too_short", "not_a_number", "not_finite", "out_of_range", "bad_sequence", "oversized"} {
		for _, d := range bad[reason] {
			pos := 1000 + 700*i + rejected
			dgs = append(dgs[:pos], append([][]byte{d}, dgs[pos:]...)...)
			rejected++
		}
	}
	m.send(t, dgs)
	s := m.waitCounter(t, "rigwire_monitor_datagrams_total", float64(len(dgs)))
	if got := s["rigwire_monitor_datagrams_total"][""]; got != float64(len(dgs)) {
		t.Fatalf("monitor received %v datagrams of %d sent over loopback", got, len(dgs))
	}
	for reason, list := range bad {
		if got := s["rigwire_monitor_decode_failures_total"]["reason="+reason]; got != float64(len(list)) {
			t.Errorf("decode failures %s: metric %v, sent %d", reason, got, len(list))
		}
	}
	for name, want := range map[string]int{
		"rigwire_monitor_samples_total":                len(kept),
		"rigwire_monitor_sample_gaps_total":            gaps + lates, // each swap skips one number first
		"rigwire_monitor_missing_samples":              gaps,
		"rigwire_monitor_late_samples_total":           lates,
		"rigwire_monitor_duplicate_samples_total":      dups,
		"rigwire_monitor_warmup_skipped_samples_total": warmupSamples,
	} {
		if got := s[name][""]; got != float64(want) {
			t.Errorf("%s = %v, want %d", name, got, want)
		}
	}

	m.p.signal(t, syscall.SIGTERM)
	if code := m.p.wait(t, 20*time.Second); code != 0 {
		t.Fatalf("exit code %d after SIGTERM, want 0", code)
	}
	sum := readSummary(t, m.summary)

	// Direct computation from what was sent (the reference).
	var mean, second float64
	for _, e := range kept {
		mean += e
		second += e * e
	}
	mean /= float64(len(kept))
	second /= float64(len(kept))
	const sumTol = 1e-12 // relative; the same sums in the same order, up to rounding
	if sum.Samples != int64(len(kept)) || sum.ErrorSecondMoment == nil ||
		math.Abs(*sum.ErrorSecondMoment-second) > sumTol*second || math.Abs(sum.ErrorMean[0]-mean) > 1e-9 {
		t.Errorf("summary: %d samples, E[eᵀe] %v, mean %v; direct: %d, %v, %v",
			sum.Samples, sum.ErrorSecondMoment, sum.ErrorMean, len(kept), second, mean)
	}
	if math.Abs(*sum.ErrorStd-math.Sqrt(second-mean*mean)) > 1e-9 {
		t.Errorf("error_std %v, direct %v", *sum.ErrorStd, math.Sqrt(second-mean*mean))
	}
	if sum.PredictedSecondMoment == nil || *sum.PredictedSecondMoment != pr.Error.SecondMoment {
		t.Errorf("predicted %v, estimate.Predict %v", sum.PredictedSecondMoment, pr.Error.SecondMoment)
	}
	if sum.CILow == nil || sum.CIHigh == nil || !(0 < *sum.CILow && *sum.CILow < second && second < *sum.CIHigh) {
		t.Errorf("interval [%v, %v] does not hold the estimate %v (or reaches below zero)", sum.CILow, sum.CIHigh, second)
	}
	// The verdict follows from the interval and the tolerance: the
	// samples are independent (seeded normal speeds), so the batch means
	// are too and the rule's batch checks pass; agreement needs the
	// widened interval within a factor 2 of the measured value.
	if sum.BatchCorrelationZ == nil || *sum.BatchCorrelationZ > 2.326 || sum.Batches < 20 {
		t.Fatalf("independent samples: %d batches, correlation z %v (%s)", sum.Batches, sum.BatchCorrelationZ, sum.VerdictReason)
	}
	lo, hi := *sum.CILow*(1-0.25), *sum.CIHigh*(1+0.25)
	want := "agree"
	switch p := pr.Error.SecondMoment; {
	case p < lo:
		want = "above"
	case p > hi:
		want = "below"
	case !(lo > second/2 && hi < 2*second):
		want = "inconclusive"
	}
	if sum.Verdict != want || sum.Tolerance != 0.25 || sum.VerdictReason == "" {
		t.Errorf("verdict %q (%s; tolerance %v), want %q", sum.Verdict, sum.VerdictReason, sum.Tolerance, want)
	}
	if sum.Gaps != int64(gaps) || sum.Late != int64(lates) || sum.Duplicates != int64(dups) ||
		sum.SkippedWarmup != warmupSamples || sum.Datagrams != int64(len(dgs)) {
		t.Errorf("summary counts %+v; sent gaps %d late %d duplicates %d", sum, gaps, lates, dups)
	}
	for reason, list := range bad {
		if sum.DecodeFailures[reason] != int64(len(list)) {
			t.Errorf("summary decode_failures[%s] = %d, sent %d", reason, sum.DecodeFailures[reason], len(list))
		}
	}
}

// rss reads a process's resident set size from /proc (Linux), bytes.
func rss(t *testing.T, pid int) int64 {
	t.Helper()
	data, err := os.ReadFile(fmt.Sprintf("/proc/%d/status", pid))
	if err != nil {
		t.Skipf("no /proc: %v", err)
	}
	for _, line := range strings.Split(string(data), "\n") {
		if f := strings.Fields(line); len(f) >= 2 && f[0] == "VmRSS:" {
			kb, _ := strconv.ParseInt(f[1], 10, 64)
			return kb << 10
		}
	}
	t.Fatal("no VmRSS")
	return 0
}

// A flood of garbage, truncated, oversized and valid datagrams (bounded:
// 300 000 datagrams, loopback only) leaves the monitor running with its
// memory bounded; every datagram that reached it is accounted for (the
// kernel may drop some of a flood before the socket: the monitor counts
// what it reads). Its endpoint then passes promtool check metrics.
func TestMonitorRunFloodAndPromtool(t *testing.T) {
	m := startMonitorRun(t)
	// Warm the process up with normal traffic first.
	var warm [][]byte
	for k := 0; k < 2000; k++ {
		warm = append(warm, []byte(fmt.Sprintf("%d,0,%g", k, 1.2+0.01*float64(k%7))))
	}
	m.send(t, warm)
	m.waitCounter(t, "rigwire_monitor_samples_total", 2000)
	before := rss(t, m.p.cmd.Process.Pid)

	payloads := [][]byte{
		[]byte("1,2,garbage"), {0xff, 0x00, 0x13}, []byte("1,2"), bytes.Repeat([]byte{'x'}, 60000),
		bytes.Repeat([]byte("1,"), 2100), []byte("1e3,2,3"),
	}
	const flood = 300_000
	for i := 0; i < flood; i++ {
		var d []byte
		if i%7 == 0 {
			d = []byte(strconv.Itoa(2000+i) + ",0,1.21")
		} else {
			d = payloads[i%len(payloads)]
		}
		m.sender.Write(d) // loopback may refuse some under load; the monitor counts what it reads
	}
	time.Sleep(500 * time.Millisecond)
	s := scrape(t, m.metrics)
	after := rss(t, m.p.cmd.Process.Pid)
	const rssBound = 32 << 20 // growth allowed: the Go runtime's heap settling, not per datagram
	t.Logf("RSS %d KiB before, %d KiB after %d datagrams (%v read)", before>>10, after>>10, flood, s["rigwire_monitor_datagrams_total"][""])
	if after-before > rssBound {
		t.Errorf("RSS grew by %d KiB during the flood, bound %d KiB", (after-before)>>10, rssBound>>10)
	}
	select {
	case <-m.p.done:
		t.Fatal("monitor exited during the flood")
	default:
	}
	// Accounting: every datagram read is a sample, a warm-up skip, a
	// duplicate/stale sample or a decode failure.
	total := s["rigwire_monitor_datagrams_total"][""]
	acc := s["rigwire_monitor_samples_total"][""] + s["rigwire_monitor_duplicate_samples_total"][""] +
		s["rigwire_monitor_stale_samples_total"][""] + s["rigwire_monitor_warmup_skipped_samples_total"][""]
	for _, v := range s["rigwire_monitor_decode_failures_total"] {
		acc += v
	}
	if total != acc || total < 2000 {
		t.Errorf("datagrams %v, accounted %v", total, acc)
	}
	if s["rigwire_monitor_decode_failures_total"]["reason=oversized"] == 0 || s["rigwire_monitor_decode_failures_total"]["reason=not_a_number"] == 0 {
		t.Errorf("flood left no oversized or not_a_number counts: %v", s["rigwire_monitor_decode_failures_total"])
	}

	promtool := needTool(t, "promtool", "prometheus")
	body := promtoolCheck(t, promtool, m.metrics)
	for _, want := range []string{
		`rigwire_monitor_error_second_moment{window="run"}`,
		`rigwire_monitor_error_second_moment{window="1m"}`,
		`rigwire_monitor_error_second_moment_ci_low{window="10m"}`,
		`rigwire_monitor_error_second_moment_ci_high{window="run"}`,
		`rigwire_monitor_predicted_error_second_moment `,
		`rigwire_monitor_measured_to_predicted_ratio{window="run"}`,
		`rigwire_monitor_predicted_mean_square_stable 1`,
		`rigwire_monitor_predicted_spectral_radius `,
		`rigwire_monitor_predicted_loss_margin `,
		`rigwire_monitor_predicted_command_age_ratio{age="0"} `,
		`rigwire_monitor_predicted_command_age_ratio{age="stale"} `,
		`rigwire_monitor_predicted_method{method="exact"} 1`,
		`rigwire_monitor_sample_gaps_total `,
		`rigwire_monitor_decode_failures_total{reason="too_short"}`,
	} {
		if !strings.Contains(string(body), want) {
			t.Errorf("metrics lack %s", want)
		}
	}
	m.p.signal(t, syscall.SIGINT)
	if code := m.p.wait(t, 20*time.Second); code != 0 {
		t.Errorf("exit code %d after SIGINT, want 0", code)
	}
}

// Exit codes: 0 by default whatever the verdict, the verdict's code with
// --strict (5: inconclusive, here for want of samples).
func TestMonitorRunExitCodes(t *testing.T) {
	cases := []struct {
		name string
		args []string
		code int
	}{
		{"default exits 0 without samples", nil, 0},
		{"strict: no samples", []string{"--strict"}, 5},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			m := startMonitorRun(t, append([]string{"--duration", "300ms"}, c.args...)...)
			if code := m.p.wait(t, 20*time.Second); code != c.code {
				t.Errorf("exit code %d, want %d", code, c.code)
			}
			if s := readSummary(t, m.summary); s.Verdict != "inconclusive" || s.Samples != 0 ||
				s.VerdictReason != "only 0 judged samples, want ≥ 400" {
				t.Errorf("summary %+v", s)
			}
		})
	}
}
