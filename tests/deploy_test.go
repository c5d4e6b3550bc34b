package tests

import (
	"os"
	"os/exec"
	"path/filepath"
	"strings"
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

// The shipped service units pass systemd's own checker (systemd-analyze
// verify, from Debian's systemd package) without a single warning. verify
// insists that ExecStart's program exists, so the units are checked as
// copies whose /usr/local/bin/ points at the binaries this test run built.
func TestSystemdUnitsVerify(t *testing.T) {
	analyze := needTool(t, "systemd-analyze", "systemd")
	bins := map[string]string{"impair": buildCmd(t, "impair"), "monitor": buildCmd(t, "monitor")}
	dir := t.TempDir()
	units := []string{"rigwire-relay.service", "rigwire-monitor.service"}
	var paths []string
	for _, u := range units {
		b, err := os.ReadFile(filepath.Join("../deploy/systemd", u))
		if err != nil {
			t.Fatal(err)
		}
		s := string(b)
		for name, path := range bins {
			s = strings.ReplaceAll(s, "/usr/local/bin/"+name+" ", path+" ")
		}
		p := filepath.Join(dir, u)
		if err := os.WriteFile(p, []byte(s), 0o644); err != nil {
			t.Fatal(err)
		}
		paths = append(paths, p)
	}
	out, err := exec.Command(analyze, append([]string{"verify"}, paths...)...).CombinedOutput()
	if err != nil {
		t.Fatalf("systemd-analyze verify: %v\n%s", err, out)
	}
	// verify exits 0 on unknown keys and misplaced settings and only warns:
	// any line about our units is a failure.
	for _, line := range strings.Split(string(out), "\n") {
		if strings.Contains(line, dir) || strings.Contains(line, "rigwire-") {
			t.Errorf("systemd-analyze verify: %s", line)
		}
	}
}

// The relay unit keeps the hardening and the restart policy the README
// describes; a later edit that drops one fails here, not on a lab PC.
func TestSystemdUnitsHardening(t *testing.T) {
	want := []string{
		"DynamicUser=yes", "NoNewPrivileges=yes", "CapabilityBoundingSet=\n",
		"ProtectSystem=strict", "ProtectHome=yes", "PrivateTmp=yes",
		"RestrictAddressFamilies=AF_INET AF_INET6 AF_UNIX\n", "MemoryMax=",
		"Restart=on-failure", "RestartSec=", "EnvironmentFile=/etc/rigwire/",
	}
	cases := []struct {
		unit  string
		extra []string
	}{
		{"rigwire-relay.service", []string{"ExecReload=/bin/kill -HUP $MAINPID", "ExecStart=/usr/local/bin/impair run "}},
		{"rigwire-monitor.service", []string{"ExecStart=/usr/local/bin/monitor run "}},
	}
	for _, c := range cases {
		t.Run(c.unit, func(t *testing.T) {
			b, err := os.ReadFile(filepath.Join("../deploy/systemd", c.unit))
			if err != nil {
				t.Fatal(err)
			}
			for _, w := range append(want, c.extra...) {
				if !strings.Contains(string(b), w) {
					t.Errorf("%s lacks %q", c.unit, w)
				}
			}
		})
	}
}
