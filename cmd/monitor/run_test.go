package main

import (
	"strings"
	"testing"

	"rigwire/cmd/internal/exitcode"
	"rigwire/estimate/engine"
)

// Bad flags and loop files end `monitor run` with exit 2 and a message
// naming the flag or the file and what was expected.
func TestRunBadInput(t *testing.T) {
	cases := []struct {
		name string
		args []string
		want string
	}{
		{"no loop", []string{"--listen", "127.0.0.1:0"}, "--loop: required"},
		{"no listen", []string{"--loop", "../../profiles/examples/loops/conveyor.yaml"}, "--listen: required"},
		{"negative tolerance", []string{"--loop", "x.yaml", "--listen", "127.0.0.1:0", "--tolerance", "-0.1"}, "--tolerance: want a number ≥ 0"},
		{"bad duration", []string{"--loop", "x.yaml", "--listen", "127.0.0.1:0", "--duration", "soon"}, `want a duration ≥ 0`},
		{"bad window", []string{"--loop", "x.yaml", "--listen", "127.0.0.1:0", "--windows", "1m,-3s"}, `--windows: want comma-separated durations > 0`},
		{"max datagram", []string{"--loop", "x.yaml", "--listen", "127.0.0.1:0", "--max-datagram", "70000"}, "--max-datagram: want 1…65535 bytes, got 70000"},
		{"missing file", []string{"--loop", "testdata/none.yaml", "--listen", "127.0.0.1:0"}, "testdata/none.yaml"},
		{"no decode section", []string{"--loop", "testdata/marginal.yaml", "--listen", "127.0.0.1:0", "--metrics", "off"},
			"testdata/marginal.yaml: decode: missing"},
		{"window shorter than two periods", []string{"--loop", "../../profiles/examples/checks/monitor-text.yaml", "--listen", "127.0.0.1:0",
			"--metrics", "off", "--windows", "25ms", "--no-margin"}, "window 25ms: want at least two periods"},
		{"stray argument", []string{"loop.yaml"}, `unexpected argument "loop.yaml"`},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			code, _, errOut := runMonitor(append([]string{"run"}, c.args...)...)
			if code != 2 {
				t.Errorf("exit %d, want 2: %s", code, errOut)
			}
			if !strings.Contains(errOut, c.want) {
				t.Errorf("stderr %q lacks %q", errOut, c.want)
			}
		})
	}
}

// The exit codes of --strict, from the one table of exit statuses.
func TestRunExitCodes(t *testing.T) {
	for verdict, want := range map[string]int{
		engine.VerdictAgree: exitcode.OK, engine.VerdictAbove: exitcode.Above, engine.VerdictBelow: exitcode.Below,
		engine.VerdictInconclusive: exitcode.Inconclusive, engine.VerdictUnstable: exitcode.NotStable,
	} {
		s := &engine.Summary{Verdict: verdict}
		if got := exitcode.OfRun(s, true); got != want {
			t.Errorf("%s: strict exit %d, want %d", verdict, got, want)
		}
		if got := exitcode.OfRun(s, false); got != 0 {
			t.Errorf("%s: exit %d without --strict, want 0", verdict, got)
		}
	}
	// The numbers the help and the README give.
	if exitcode.Above != 3 || exitcode.Below != 4 || exitcode.Inconclusive != 5 || exitcode.NotStable != 6 {
		t.Errorf("the --strict statuses are no longer 3, 4, 5, 6")
	}
}
