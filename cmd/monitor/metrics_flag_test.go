package main

import (
	"strings"
	"testing"
)

// --metrics "" and an address with no host are bad usage for every
// monitor command that serves metrics, and the message says how to turn
// metrics off.
func TestMetricsAddressRefused(t *testing.T) {
	for _, cmd := range [][]string{
		{"run", "--loop", "examples/conveyor.yaml", "--listen", "127.0.0.1:0"},
		{"serve", "--loop", "examples/conveyor.yaml", "--listen", "127.0.0.1:0", "--controller", "127.0.0.1:9"},
		{"soak", "--loop", "examples/conveyor.yaml", "--scenario", "x.yaml", "--simulated-rig"},
		{"demo"},
	} {
		for _, addr := range []string{"", ":9472"} {
			code, _, errOut := runMonitor(append(append([]string{}, cmd...), "--metrics", addr)...)
			if code != 2 || !strings.Contains(errOut, `"off" for no metrics endpoint`) {
				t.Errorf("monitor %s --metrics %q: status %d, stderr %q; want 2 and how to turn metrics off", cmd[0], addr, code, errOut)
			}
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
