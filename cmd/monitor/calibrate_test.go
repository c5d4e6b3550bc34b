package main

import (
	"path/filepath"
	"strings"
	"testing"
)

// TestCalibrateRefusals: monitor calibrate refuses a loop without the
// numbers it pairs by (status 2, naming what is missing) and, when no rig
// sends, ends with status 1 and says what the relay saw instead of
// fitting nothing.
func TestCalibrateRefusals(t *testing.T) {
	cases := []struct {
		name string
		args []string
		code int
		want string
	}{
		{"no command_decode", []string{"--loop", "../../emulate/links/testdata/loops/no-command-decode.yaml", "--listen", "127.0.0.1:0", "--controller", "127.0.0.1:9"},
			2, "no command_decode"},
		{"no sample sequence", []string{"--loop", "../../emulate/links/testdata/loops/no-sample-seq.yaml", "--listen", "127.0.0.1:0", "--controller", "127.0.0.1:9"},
			2, "no decode.sequence"},
		{"not a timing file name", []string{"--loop", "../../profiles/examples/checks/rig-late.yaml", "--listen", "127.0.0.1:0", "--controller", "127.0.0.1:9", "--write", "out.txt"},
			2, "want a file ending in .yaml"},
		{"no rig sends", []string{"--loop", "../../profiles/examples/checks/rig-late.yaml", "--listen", "127.0.0.1:0", "--controller", "127.0.0.1:9",
			"--duration", "300ms", "--every", "100ms", "--cautions-read", "--write", filepath.Join(t.TempDir(), "x.timing.yaml")},
			1, "no sensor datagram reached the relay"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			code, _, errOut := runMonitor(append([]string{"calibrate"}, tc.args...)...)
			if code != tc.code || !strings.Contains(errOut, tc.want) {
				t.Errorf("exit %d, want %d with %q:\n%s", code, tc.code, tc.want, errOut)
			}
		})
	}
}

// TestRigComputeFlagRefusesABadLaw: --compute is read with the profile
// format's parser and a bad law is bad input (status 2) naming the flag
// and the key.
func TestRigComputeFlagRefusesABadLaw(t *testing.T) {
	code, _, errOut := runMonitor("rig", "controller", "--loop", "../../profiles/examples/checks/rig-late.yaml",
		"--listen", "127.0.0.1:0", "--compute", "{kind: gamma, shape: 2}")
	if code != 2 || !strings.Contains(errOut, "--compute:1: missing scale for kind gamma") {
		t.Errorf("exit %d, want 2 naming --compute and the missing key:\n%s", code, errOut)
	}
}
