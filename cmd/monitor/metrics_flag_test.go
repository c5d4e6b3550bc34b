package main

import (
	"strings"
	"testing"
)

// --metrics "" (an unset variable in an env file) and an address with no
// host (which would bind every interface) are bad usage (status 2) for
// every monitor command that serves metrics, and the message says how to
// turn metrics off ("off"); the check runs before any socket is opened.
func TestMetricsAddressRefused(t *testing.T) {
	commands := []struct {
		name string
		args []string
	}{
		{"run", []string{"run", "--loop", "../../profiles/examples/loops/conveyor.yaml", "--listen", "127.0.0.1:0"}},
		{"serve", []string{"serve", "--loop", "../../profiles/examples/loops/conveyor.yaml", "--listen", "127.0.0.1:0", "--controller", "127.0.0.1:9"}},
		{"soak", []string{"soak", "--loop", "../../profiles/examples/loops/conveyor.yaml", "--scenario", "x.yaml", "--simulated-rig"}},
		{"demo", []string{"demo"}},
	}
	values := []struct {
		name, addr, want string
	}{
		{"empty", "", `--metrics: empty; want HOST:PORT (such as 127.0.0.1:9471), or "off" for no metrics endpoint`},
		{"no host", ":9471", `--metrics: ":9471" has no host; give one (127.0.0.1 for this machine only, 0.0.0.0 or [::] for every interface), or "off" for no metrics endpoint`},
	}
	for _, c := range commands {
		for _, v := range values {
			t.Run(c.name+" "+v.name, func(t *testing.T) {
				code, _, errOut := runMonitor(append(append([]string{}, c.args...), "--metrics", v.addr)...)
				if code != 2 || !strings.Contains(errOut, v.want) {
					t.Errorf("monitor %s --metrics %q: status %d, stderr %q; want 2 and %q", c.name, v.addr, code, errOut, v.want)
				}
			})
		}
	}
}

// Every monitor command that starts a run prints its safety cautions in
// full by default and as one line with --cautions-read.
func TestCautionsRead(t *testing.T) {
	for _, tc := range []struct {
		flags []string
		want  string
	}{
		{nil, "Keep an emergency stop that does not depend on the emulated link"},
		{[]string{"--cautions-read"}, "SAFETY (cautions acknowledged)"},
	} {
		args := append([]string{"demo", "--duration", "0.3s", "--metrics", "off", "--progress", "0"}, tc.flags...)
		_, out, errOut := runMonitor(args...)
		if !strings.Contains(out+errOut, tc.want) {
			t.Errorf("monitor %v: output lacks %q", args, tc.want)
		}
	}
}
