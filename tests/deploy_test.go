package tests

import (
	"os/exec"
	"path/filepath"
	"testing"
)

// promDir holds the shipped scrape configuration, alert rules and their
// unit tests.
const promDir = "../deploy/prometheus"

// The shipped Prometheus files pass Prometheus's own checker (promtool,
// from Debian's prometheus package), and the alert rules pass their unit
// tests on synthetic series (rigwire.rules.test.yml).
func TestPrometheusFilesPassPromtool(t *testing.T) {
	promtool := needTool(t, "promtool", "prometheus")
	cases := []struct {
		name string
		args []string
	}{
		{"check config", []string{"check", "config", "prometheus.yml"}},
		{"check rules", []string{"check", "rules", "rigwire.rules.yml"}},
		{"test rules", []string{"test", "rules", "rigwire.rules.test.yml"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			cmd := exec.Command(promtool, c.args...)
			cmd.Dir = promDir
			out, err := cmd.CombinedOutput()
			if err != nil {
				t.Fatalf("promtool %v in %s: %v\n%s", c.args, filepath.Clean(promDir), err, out)
			}
		})
	}
}
