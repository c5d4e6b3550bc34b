package tests

import (
	"encoding/json"
	"os"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"
)

var nodeOlder = regexp.MustCompile(`older=(\d+)`)

// TestRigWideArea runs the shipped wide-area example — the shuttle's speed
// loop whose commands come one to four periods late and overtake each
// other (profiles/examples/loops/shuttle-remote.yaml, wide-area.yaml) —
// through impair run for three minutes, the rig node applying commands
// newest-first within the loop's four-period horizon, and `monitor run`
// judging the tap's samples. The verdict must be agree: the exact
// long-delay prediction (estimate/model.md §13) inside the monitor's 95 %
// interval widened by 0.15, with an interval narrow enough to confirm it
// (§9). The widening is TestRigEndToEnd's relTol: the loopback stack and a
// host busy with the other tests add latency that the profile does not
// hold (measured here 3–10 % above the prediction). The node must have
// applied commands older than a period and dropped overtaken ones, or the
// case would not test the policy.
func TestRigWideArea(t *testing.T) {
	if testing.Short() {
		t.Skip("a three-minute run")
	}
	if !hasMonitorRun(t) {
		t.Skip("monitor run is not available")
	}
	t.Parallel()
	r := startRigWith(t, "../profiles/examples/loops/shuttle-remote.yaml", 3*time.Minute, "14", true, []string{"--tolerance", "0.15"})
	var s struct {
		Samples   int      `json:"samples"`
		Measured  *float64 `json:"error_second_moment"`
		Lo        *float64 `json:"ci_low"`
		Hi        *float64 `json:"ci_high"`
		Predicted *float64 `json:"predicted_second_moment"`
		Verdict   string   `json:"verdict"`
		Reason    string   `json:"verdict_reason"`
	}
	b, err := os.ReadFile(r.summary)
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, &s); err != nil {
		t.Fatalf("summary: %v\n%s", err, b)
	}
	if s.Measured == nil || s.Lo == nil || s.Hi == nil || s.Predicted == nil {
		t.Fatalf("summary without a measurement or a prediction:\n%s", b)
	}
	t.Logf("measured %.5g in [%.5g, %.5g] over %d samples, predicted %.5g: %s (%s)",
		*s.Measured, *s.Lo, *s.Hi, s.Samples, *s.Predicted, s.Verdict, s.Reason)
	if s.Verdict != "agree" {
		t.Errorf("verdict %s: %s", s.Verdict, s.Reason)
	}
	older := nodeOlder.FindStringSubmatch(r.nodeOut)
	if older == nil {
		t.Fatalf("no count of older commands in the node's output:\n%s", r.nodeOut)
	}
	if n, _ := strconv.Atoi(older[1]); n == 0 {
		t.Errorf("no command was overtaken: the profile should reorder commands")
	}
	// The log gives each sample's command delay: over this link almost
	// none arrives within its own period, most one to four periods later.
	within, later := 0, 0
	for _, l := range readLines(t, r.logPath)[1:] {
		f := strings.Split(l, ",")
		if f[len(f)-1] == "" {
			continue
		}
		d, err := strconv.ParseFloat(f[len(f)-1], 64)
		if err != nil {
			t.Fatalf("sample log: %q: %v", l, err)
		}
		if d < r.loop.Period {
			within++
		} else {
			later++
		}
	}
	if within > later/10 || later == 0 {
		t.Errorf("%d commands applied within their own period, %d later: the delays should mostly exceed a period", within, later)
	}
}
