package tests

import (
	"os/exec"
	"strings"
	"testing"
	"time"
)

// TestExitStatuses runs the built binaries, so that the status a lab
// script sees (through os.Exit) is the one of the table in
// cmd/internal/exitcode: 2 for a bad flag, a missing file or a file that
// does not validate, whose name the message gives; predict --strict 6 for
// a loop that is not mean-square stable; a help request 0.
func TestExitStatuses(t *testing.T) {
	const (
		badLoop    = "../profiles/testdata/loops/shape-d.bad.yaml"
		badProfile = "../profiles/testdata/unknown-key.bad.yaml"
		unstable   = "../cmd/monitor/testdata/unstable.yaml"
		good       = "../profiles/examples/loops/conveyor.yaml"
		missing    = "no-such-loop.yaml"
	)
	cases := []struct {
		name string
		bin  string
		args []string
		code int
		want string // in the output
	}{
		{"monitor bad flag", "monitor", []string{"predict", good, "--jsonn"}, 2, "flag provided but not defined: -jsonn"},
		{"monitor missing loop", "monitor", []string{"simulate", missing}, 2, missing},
		{"monitor bad loop", "monitor", []string{"predict", badLoop}, 2, "shape-d.bad.yaml:10"},
		{"monitor run bad loop", "monitor", []string{"run", "--loop", badLoop, "--listen", "127.0.0.1:0", "--metrics", "off"}, 2, "shape-d.bad.yaml:10"},
		{"monitor predict strict unstable", "monitor", []string{"predict", unstable, "--strict", "--no-margin"}, 6, "NOT mean-square stable"},
		{"monitor predict unstable", "monitor", []string{"predict", unstable, "--no-margin"}, 0, "NOT mean-square stable"},
		{"monitor help", "monitor", []string{"soak", "-h"}, 0, "exit status:"},
		{"impair bad flag", "impair", []string{"check", "--interval", "0", badProfile}, 2, "-interval"},
		{"impair missing profile", "impair", []string{"check", missing}, 2, missing},
		{"impair bad profile", "impair", []string{"run", "--profile", badProfile, "--listen", "127.0.0.1:0", "--controller", "127.0.0.1:9", "--metrics", "off"}, 2, "unknown-key.bad.yaml:4"},
		{"impair help", "impair", []string{"fit", "-h"}, 0, "exit status:"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			cmd := exec.Command(buildCmd(t, c.bin), c.args...)
			done := make(chan struct{})
			var out []byte
			var err error
			go func() { out, err = cmd.CombinedOutput(); close(done) }()
			select {
			case <-done:
			case <-time.After(60 * time.Second):
				cmd.Process.Kill()
				<-done
				t.Fatalf("%s %s still running after 60 s", c.bin, strings.Join(c.args, " "))
			}
			code := 0
			if ee, ok := err.(*exec.ExitError); ok {
				code = ee.ExitCode()
			} else if err != nil {
				t.Fatal(err)
			}
			if code != c.code || !strings.Contains(string(out), c.want) {
				t.Errorf("%s %s: exit %d, output %q; want exit %d and %q", c.bin, strings.Join(c.args, " "), code, out, c.code, c.want)
			}
		})
	}
}
