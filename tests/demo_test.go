package tests

import (
	"regexp"
	"strings"
	"testing"
	"time"
)

// TestDemo runs `monitor demo` — the simulated rig node, the relay, the
// rig controller and the monitor on loopback UDP in one process — for a
// short run, scrapes its metrics endpoint while it runs, and checks that
// it ends with the side-by-side comparison, a verdict with its reason, and
// the exit status of that verdict (0 agree, 5 inconclusive, 3 above, 4
// below: the statuses of run --strict). Which verdict 15 s give is itself
// statistics: the built-in diverter's lightly damped loop forgets its past
// only over about a second, so 1500 samples are about 20 correlation
// times; over 60 simulated runs of that length (estimate.Simulate and the
// engine's rule, tolerance 0.1) 31 agreed, 23 were inconclusive and 6 were
// above or below. The verdict's statistics are tested in
// estimate/engine (TestVerdictRates); here the plumbing is.
func TestDemo(t *testing.T) {
	metrics := freePort(t, "tcp")
	url := "http://" + metrics + "/metrics"
	p := start(t, buildCmd(t, "monitor"), "demo", "--duration", "15s", "--metrics", metrics)
	waitHTTP(t, url, p)
	time.Sleep(3 * time.Second)
	got := scrape(t, url)
	for _, name := range []string{
		"rigwire_relay_datagrams_total",
		"rigwire_monitor_samples_total",
	} {
		if _, ok := got[name]; !ok {
			t.Errorf("the demo's endpoint lacks %s", name)
		}
	}
	code := p.wait(t, 60*time.Second)
	out := p.out.String()
	v := regexp.MustCompile(`(?m)^verdict: (\S+) \(prediction against the measured interval widened by 0\.1 of its bounds\): \S.*$`).FindStringSubmatch(out)
	if v == nil {
		t.Fatalf("no verdict line (exit %d):\n%s", code, out)
	}
	if want, ok := map[string]int{"agree": 0, "above": 3, "below": 4, "inconclusive": 5}[v[1]]; !ok || code != want {
		t.Fatalf("verdict %s, exit %d (want %d):\n%s", v[1], code, want, out)
	}
	t.Logf("%s", v[0])
	for _, want := range []*regexp.Regexp{
		regexp.MustCompile(`SAFETY: `),
		regexp.MustCompile(`metrics   http://` + regexp.QuoteMeta(metrics) + `/metrics`),
		regexp.MustCompile(`(?m)^\s+\d+s  samples \d+  E\[eᵀe\] \S+ \[\S+, \S+\]  predicted \S+  (agree|above|below|inconclusive)`),
		regexp.MustCompile(`(?m)^E\[eᵀe\]\s+\S+\s+\S+\s+\[\S+, \S+\]$`),
		regexp.MustCompile(`(?m)^  sensor_to_controller\s+dropped \d+, forwarded \d+`),
		regexp.MustCompile(`(?m)^  controller_to_actuator\s+dropped \d+, forwarded \d+`),
		regexp.MustCompile(`(?m)^  node\s+samples 1500, `),
	} {
		if !want.MatchString(out) {
			t.Errorf("the demo's output lacks %s:\n%s", want, out)
		}
	}
	if n := strings.Count(out, " predicted "); n < 10 {
		t.Errorf("%d progress lines in a 15 s run, want about one a second", n)
	}
}
