package main

import (
	"bytes"
	"flag"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata")

// TestCheckShipped runs `impair check` on a shipped profile, compares the
// report with its golden file (rewrite with -update after a deliberate
// change) and checks the figures that can be worked out by hand from the
// file: warehouse-wifi's sensor direction dwells 6 s clear and 400 ms
// fading, so π = (6, 0.4)/6.4 = (0.9375, 0.0625) and the long-run loss is
// 0.9375·0.002 + 0.0625·0.25 = 0.0175.
func TestCheckShipped(t *testing.T) {
	var out, errOut bytes.Buffer
	code := dispatch([]string{"check", "--interval", "10ms", "../../profiles/examples/profiles/warehouse-wifi.yaml"}, &out, &errOut)
	if code != 0 {
		t.Fatalf("exit %d, stderr %q", code, errOut.String())
	}
	for _, want := range []string{
		"profile warehouse-wifi",
		"sensor_to_controller: Markov channel, 2 states",
		"93.8 %", "6.25 %", // π by hand
		"long-run loss 1.75 %", // by hand
		"stationary: clear 0.938, fading 0.0625",
		"fading delay: gamma shape 2 scale 1.8ms + 1ms",
		"profile is valid",
	} {
		if !strings.Contains(out.String(), want) {
			t.Errorf("report lacks %q:\n%s", want, out.String())
		}
	}
	golden := filepath.Join("testdata", "check_warehouse-wifi.golden")
	if *update {
		if err := os.WriteFile(golden, out.Bytes(), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(golden)
	if err != nil {
		t.Fatal(err)
	}
	if out.String() != string(want) {
		t.Errorf("report differs from %s (run with -update after a deliberate change):\n%s", golden, out.String())
	}
}

// TestCheckErrors checks the exit status 2 and the one-line message for a
// bad profile and for bad arguments.
func TestCheckErrors(t *testing.T) {
	tests := []struct {
		name string
		args []string
		want string // first line of stderr
	}{
		{"bad profile", []string{"../../profiles/testdata/unknown-key.bad.yaml"},
			`impair check: ../../profiles/testdata/unknown-key.bad.yaml:4: sensor_to_controller: unknown key "lossy" (want one of: loss, delay, states, trace)`},
		{"missing file", []string{"no-such.yaml"}, "impair check: reading profile: open no-such.yaml: no such file or directory"},
		{"no profile", nil, "impair check: want one profile, got 0"},
		{"two profiles", []string{"a.yaml", "b.yaml"}, "impair check: want one profile, got 2"},
		{"bad interval", []string{"--interval", "0", "../../profiles/examples/profiles/switched-cell.yaml"},
			`impair check: invalid value "0" for flag -interval: want a duration > 0 and ≤ 1h, got "0"`},
		{"interval not a duration", []string{"../../profiles/examples/profiles/switched-cell.yaml", "--interval", "soon"},
			`impair check: invalid value "soon" for flag -interval: want a duration ("3ms") or seconds, got "soon"`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			var out, errOut bytes.Buffer
			if code := dispatch(append([]string{"check"}, tt.args...), &out, &errOut); code != 2 {
				t.Errorf("exit %d, want 2", code)
			}
			first, _, _ := strings.Cut(errOut.String(), "\n")
			if first != tt.want {
				t.Errorf("stderr %q, want first line %q", errOut.String(), tt.want)
			}
			if out.Len() != 0 {
				t.Errorf("stdout %q, want nothing", out.String())
			}
		})
	}
}

// TestCheckFlagAfterProfile checks that flags may follow the profile.
func TestCheckFlagAfterProfile(t *testing.T) {
	var out, errOut bytes.Buffer
	if code := dispatch([]string{"check", "../../profiles/examples/profiles/switched-cell.yaml", "--interval", "1ms"}, &out, &errOut); code != 0 {
		t.Fatalf("exit %d: %s", code, errOut.String())
	}
	if !strings.Contains(out.String(), "one datagram every 1 ms") {
		t.Errorf("interval not applied:\n%s", out.String())
	}
}
