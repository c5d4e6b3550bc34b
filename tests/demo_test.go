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
// it ends with the side-by-side comparison and the verdict agree (the
// demo's own criterion: the prediction of MODEL.md §4 inside the 95 %
// batch-means interval widened by its default tolerance, 0.1 of the
// bounds) and exit status 0.
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
	if code := p.wait(t, 60*time.Second); code != 0 {
		t.Fatalf("monitor demo exited %d:\n%s", code, p.out.String())
	}
	out := p.out.String()
	for _, want := range []*regexp.Regexp{
		regexp.MustCompile(`SAFETY: `),
		regexp.MustCompile(`metrics   http://` + regexp.QuoteMeta(metrics) + `/metrics`),
		regexp.MustCompile(`(?m)^\s+\d+s  samples \d+  E\[eᵀe\] \S+ ± \S+ \[\S+, \S+\]  predicted \S+`),
		regexp.MustCompile(`(?m)^E\[eᵀe\]\s+\S+\s+\S+\s+\[\S+, \S+\]$`),
		regexp.MustCompile(`(?m)^verdict: agree `),
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
