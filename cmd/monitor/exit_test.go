package main

import (
	"encoding/json"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// Bad-input fixtures shared with the profiles package's own tests.
const (
	badLoop     = "../../profiles/testdata/loops/shape-d.bad.yaml" // controller.d of the wrong shape
	badProfile  = "../../profiles/testdata/unknown-key.bad.yaml"   // an unknown key in a direction
	badScenario = "../../profiles/testdata/bad-scenarios/unknown-key.bad.yaml"
	badInline   = "../../profiles/testdata/loops/profile-inline-bad.bad.yaml" // a loop whose inline profile is bad
	goodLoop    = "../../profiles/examples/loops/conveyor.yaml"
	missing     = "testdata/no-such-file.yaml"
)

// TestExitStatusBadInput: every command exits 2 for a bad flag, a file
// that does not exist and a file that does not validate, and its message
// names the file (the files are read before any socket is opened).
func TestExitStatusBadInput(t *testing.T) {
	relay := []string{"--listen", "127.0.0.1:0", "--controller", "127.0.0.1:9", "--metrics", "off"}
	with := func(args []string, more ...string) []string { return append(append([]string{}, args...), more...) }
	cases := []struct {
		name string
		args []string
		want string // in stderr
	}{
		{"predict bad flag", []string{"predict", goodLoop, "--no-such-flag"}, "flag provided but not defined: -no-such-flag"},
		{"predict missing loop", []string{"predict", missing}, missing},
		{"predict bad loop", []string{"predict", badLoop}, "shape-d.bad.yaml:10: controller.d"},
		{"predict bad inline profile", []string{"predict", badInline}, "profile-inline-bad.bad.yaml"},
		{"simulate bad flag", []string{"simulate", goodLoop, "--runs", "many"}, `invalid value "many" for flag -runs`},
		{"simulate missing loop", []string{"simulate", missing}, missing},
		{"simulate bad loop", []string{"simulate", badLoop}, "shape-d.bad.yaml:10"},
		{"rig bad subcommand", []string{"rig", "sensor"}, `unknown rig command "sensor"`},
		{"rig node bad flag", []string{"rig", "node", "--loop", goodLoop, "--relay", "nowhere"}, `want HOST:PORT, got "nowhere"`},
		{"rig node missing loop", []string{"rig", "node", "--loop", missing, "--relay", "127.0.0.1:9"}, missing},
		{"rig node bad loop", []string{"rig", "node", "--loop", badLoop, "--relay", "127.0.0.1:9"}, "shape-d.bad.yaml:10"},
		{"rig controller bad loop", []string{"rig", "controller", "--loop", badLoop, "--listen", "127.0.0.1:0"}, "shape-d.bad.yaml:10"},
		{"run bad flag", []string{"run", "--loop", goodLoop, "--listen", "127.0.0.1:0", "--tolerance", "-1"}, "--tolerance: want a number ≥ 0"},
		{"run min samples too few", []string{"run", "--loop", goodLoop, "--listen", "127.0.0.1:0", "--min-samples", "5"}, "--min-samples: want 20…1000000000 samples"},
		{"run bad metrics", []string{"run", "--loop", goodLoop, "--listen", "127.0.0.1:0", "--metrics", "9472"}, `--metrics: want HOST:PORT or "off"`},
		{"run missing loop", []string{"run", "--loop", missing, "--listen", "127.0.0.1:0", "--metrics", "off"}, missing},
		{"run bad loop", []string{"run", "--loop", badLoop, "--listen", "127.0.0.1:0", "--metrics", "off"}, "shape-d.bad.yaml:10"},
		{"run loop without decode", []string{"run", "--loop", "testdata/marginal.yaml", "--listen", "127.0.0.1:0", "--metrics", "off"}, "marginal.yaml: decode: missing"},
		{"demo bad flag", []string{"demo", "--duration", "-1s"}, `invalid value "-1s" for flag -duration`},
		{"demo bad loop", []string{"demo", "--loop", badLoop, "--metrics", "off"}, "shape-d.bad.yaml:10"},
		{"demo bad profile", []string{"demo", "--profile", badProfile, "--metrics", "off"}, "unknown-key.bad.yaml:4"},
		{"serve bad flag", []string{"serve", "--loop", goodLoop}, "--listen: required"},
		{"serve missing loop", with([]string{"serve", "--loop", missing}, relay...), missing},
		{"serve bad loop", with([]string{"serve", "--loop", badLoop}, relay...), "shape-d.bad.yaml:10"},
		{"serve bad profile", with([]string{"serve", "--loop", goodLoop, "--profile", badProfile}, relay...), "unknown-key.bad.yaml:4"},
		{"soak bad flag", with([]string{"soak", "--loop", goodLoop, "--scenario", badScenario, "--time-scale", "0"}, relay...), "--time-scale"},
		{"soak missing scenario", with([]string{"soak", "--loop", goodLoop, "--scenario", missing}, relay...), missing},
		{"soak bad scenario", with([]string{"soak", "--loop", goodLoop, "--scenario", badScenario}, relay...), "unknown-key.bad.yaml"},
		{"soak bad loop", with([]string{"soak", "--loop", badLoop, "--scenario", badScenario}, relay...), "shape-d.bad.yaml:10"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			code, out, errOut := runMonitor(c.args...)
			if code != 2 || !strings.Contains(errOut, c.want) {
				t.Errorf("monitor %s: exit %d, stderr %q; want exit 2 and %q", strings.Join(c.args, " "), code, errOut, c.want)
			}
			if strings.Contains(out, "SAFETY") || strings.Contains(errOut, "SAFETY") {
				t.Errorf("the cautions were printed: the command started before its input was checked")
			}
		})
	}
}

// TestPredictStrict: with --strict the status is the stability verdict;
// without it 0 whatever the verdict. The marginal loop is an undamped
// oscillator with a zero controller: its spectral radius is exactly 1
// (its sampled poles lie on the unit circle whatever the network does),
// which no computation can tell from 1, so it must not be called stable.
func TestPredictStrict(t *testing.T) {
	cases := []struct {
		name      string
		file      string
		stability string
		strict    int
	}{
		{"stable", "../../profiles/examples/loops/conveyor.yaml", "stable", 0},
		{"unstable", "testdata/unstable.yaml", "unstable", 6},
		{"marginal", "testdata/marginal.yaml", "marginal", 5},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			code, out, errOut := runMonitor("predict", c.file, "--json", "--no-margin")
			if code != 0 {
				t.Fatalf("without --strict: exit %d, want 0: %s", code, errOut)
			}
			var m map[string]any
			if err := json.Unmarshal([]byte(out), &m); err != nil {
				t.Fatal(err)
			}
			if m["stability"] != c.stability {
				t.Errorf("stability %v (spectral radius %v ± %v), want %s", m["stability"], m["spectral_radius"], m["spectral_radius_error"], c.stability)
			}
			if c.stability != "stable" && m["mean_square_stable"] != false {
				t.Errorf("mean_square_stable %v for a %s loop", m["mean_square_stable"], c.stability)
			}
			code, out, errOut = runMonitor("predict", c.file, "--strict", "--no-margin")
			if code != c.strict {
				t.Errorf("--strict: exit %d, want %d\n%s%s", code, c.strict, out, errOut)
			}
			if c.strict != 0 && !strings.Contains(errOut, "--strict: ") {
				t.Errorf("--strict: no message on stderr: %q", errOut)
			}
		})
	}
}

// TestVerdictLines: the verdict line of predict and simulate never says
// a radius below 1 is at or above it, or the reverse.
func TestVerdictLines(t *testing.T) {
	num := regexp.MustCompile(`spectral radius ([0-9.e+-]+)`)
	for _, file := range []string{"../../profiles/examples/loops/conveyor.yaml", "../../profiles/examples/loops/pump.yaml", "testdata/unstable.yaml", "testdata/marginal.yaml"} {
		t.Run(filepath.Base(file), func(t *testing.T) {
			_, out, _ := runMonitor("predict", file, "--no-margin")
			_, sim, _ := runMonitor("simulate", file, "--periods", "200", "--runs", "2")
			for _, line := range strings.Split(out+sim, "\n") {
				if !strings.Contains(line, "spectral radius") {
					continue
				}
				m := num.FindStringSubmatch(line)
				if m == nil {
					t.Errorf("no radius in %q", line)
					continue
				}
				rho, err := strconv.ParseFloat(m[1], 64)
				if err != nil {
					t.Errorf("%q: %v", line, err)
					continue
				}
				if strings.Contains(line, "below 1") && !(rho < 1) {
					t.Errorf("%q: a radius of %s said to be below 1", line, m[1])
				}
				if strings.Contains(line, "at or above 1") && !(rho >= 1) {
					t.Errorf("%q: a radius of %s said to be at or above 1", line, m[1])
				}
				for _, bad := range []string{"< 1)", "≥ 1)"} {
					if strings.Contains(line, bad) {
						t.Errorf("%q: a bare comparison with 1", line)
					}
				}
			}
		})
	}
}

// helpCommands are every command and subcommand, for the help tests.
var helpCommands = [][]string{
	{"predict"}, {"simulate"}, {"rig"}, {"rig", "node"}, {"rig", "controller"},
	{"run"}, {"demo"}, {"serve"}, {"soak"},
}

// TestHelpListsExitStatuses: every command's -h lists its exit statuses
// (on stdout, exit 0); the top-level usage lists the whole table.
func TestHelpListsExitStatuses(t *testing.T) {
	for _, cmd := range helpCommands {
		t.Run(strings.Join(cmd, " "), func(t *testing.T) {
			code, out, errOut := runMonitor(append(cmd, "-h")...)
			if code != 0 || !strings.Contains(out, "exit status") || !strings.Contains(out, "  2  ") {
				t.Errorf("exit %d, stdout %q, stderr %q; want 0 and an exit status paragraph", code, out, errOut)
			}
		})
	}
	_, out, _ := runMonitor("help")
	for code := 0; code <= 8; code++ {
		if !strings.Contains(out, "\n  "+string(rune('0'+code))+"  ") {
			t.Errorf("top-level usage lacks status %d:\n%s", code, out)
		}
	}
}

// TestHelpCitesNoTeamNotes: help texts speak for themselves; they cite no
// document outside the repository.
func TestHelpCitesNoTeamNotes(t *testing.T) {
	for _, cmd := range append(helpCommands, []string{"help"}) {
		args := append(append([]string{}, cmd...), "-h")
		if cmd[0] == "help" {
			args = cmd
		}
		_, out, errOut := runMonitor(args...)
		for _, name := range teamNotes {
			if strings.Contains(out+errOut, name) {
				t.Errorf("monitor %s help cites %s", strings.Join(cmd, " "), name)
			}
		}
	}
}

// teamNotes are the names of the team's working notes, which live outside
// the repository: no help text may send a reader to them. Built from parts
// so that this file does not cite them either.
var teamNotes = func() []string {
	var out []string
	for _, n := range []string{"MODEL", "INTERFACES", "DESIGN", "STYLE"} {
		out = append(out, n+".md")
	}
	return out
}()
