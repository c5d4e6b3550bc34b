package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// Bad-input fixtures shared with the profiles package's own tests.
const (
	badProfile  = "../../profiles/testdata/unknown-key.bad.yaml" // an unknown key in a direction
	badScenario = "../../profiles/testdata/bad-scenarios/unknown-key.bad.yaml"
	badLinks    = "../../emulate/links/testdata/bad-links/unknown-key.yaml"
	goodProfile = "../../profiles/examples/profiles/switched-cell.yaml"
	missing     = "testdata/no-such-file.yaml"
)

// TestExitStatusBadInput: every command exits 2 for a bad flag, a file
// that does not exist and a file that does not validate, and its message
// names the file; nothing is relayed or sent before the input is checked.
func TestExitStatusBadInput(t *testing.T) {
	dir := t.TempDir()
	write := func(name, text string) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	badTrace := write("cut.csv", "# rigwire probe trace v1\nseq,send_s,status,rtt_s\n0,0.1,delivered,0.003\n1,0.2,deliv")
	linksBadProfile := write("links.yaml", "links:\n  - {name: pump, listen: 127.0.0.1:7001, controller: 127.0.0.1:7101, profile: "+
		filepath.Join("..", "..", "..", "..", mustAbs(t, badProfile))+"}\n")
	badLab := write("lab.yaml", "no_such_key: 1\n")
	addrs := []string{"--listen", "127.0.0.1:0", "--controller", "127.0.0.1:9", "--metrics", "off"}
	with := func(args []string, more ...string) []string { return append(append([]string{}, args...), more...) }
	cases := []struct {
		name string
		args []string
		want string // in stderr
	}{
		{"run bad flag", with([]string{"run", "--profile", goodProfile, "--max-datagram", "0"}, addrs...), "--max-datagram: want 1…65535 bytes"},
		{"run bad metrics", []string{"run", "--profile", goodProfile, "--listen", "127.0.0.1:0", "--controller", "127.0.0.1:9", "--metrics", "9471"}, `--metrics: want HOST:PORT or "off"`},
		{"run missing profile", with([]string{"run", "--profile", missing}, addrs...), missing},
		{"run bad profile", with([]string{"run", "--profile", badProfile}, addrs...), "unknown-key.bad.yaml:4"},
		{"run missing scenario", with([]string{"run", "--scenario", missing}, addrs...), missing},
		{"run bad scenario", with([]string{"run", "--scenario", badScenario}, addrs...), "bad-scenarios/unknown-key.bad.yaml"},
		{"run missing links", []string{"run", "--links", missing, "--metrics", "off"}, missing},
		{"run bad links", []string{"run", "--links", badLinks, "--metrics", "off"}, "unknown-key.yaml:6"},
		{"run links with a bad profile", []string{"run", "--links", linksBadProfile, "--metrics", "off"}, `link "pump": ` + mustAbs(t, badProfile) + ":4"},
		{"check bad flag", []string{"check", goodProfile, "--interval", "-1ms"}, `invalid value "-1ms" for flag -interval`},
		{"check missing profile", []string{"check", missing}, missing},
		{"check bad profile", []string{"check", badProfile}, "unknown-key.bad.yaml:4"},
		{"echo bad flag", []string{"echo", "--listen", "127.0.0.1:0", "--verbose"}, "flag provided but not defined: -verbose"},
		{"probe bad flag", []string{"probe", "--target", "127.0.0.1:9", "--out", filepath.Join(dir, "t.csv"), "--rate", "-5"}, "--rate: want a rate in (0, 100000]"},
		{"fit bad flag", []string{"fit", badTrace, "--halve-rtt", "--direction", "sideways"}, "--direction: want"},
		{"fit missing trace", []string{"fit", missing, "--halve-rtt"}, missing},
		{"fit bad trace", []string{"fit", badTrace, "--halve-rtt"}, "cut.csv:4: want 4 fields"},
		{"lab bad verb", []string{"lab", "sideways"}, "want build or remove"},
		{"lab bad flag", []string{"lab", "build", "--conf", "x"}, "flag provided but not defined: -conf"},
		{"lab missing config", []string{"lab", "build", "--config", missing}, missing},
		{"lab bad config", []string{"lab", "build", "--config", badLab}, "lab.yaml"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var stdout, stderr bytes.Buffer
			code := dispatch(c.args, &stdout, &stderr)
			if code != 2 || !strings.Contains(stderr.String(), c.want) {
				t.Errorf("impair %s: exit %d, stderr %q; want exit 2 and %q", strings.Join(c.args, " "), code, stderr.String(), c.want)
			}
			if strings.Contains(stderr.String(), "SAFETY") {
				t.Errorf("the cautions were printed: the relay started before its input was checked")
			}
		})
	}
}

func mustAbs(t *testing.T, p string) string {
	t.Helper()
	a, err := filepath.Abs(p)
	if err != nil {
		t.Fatal(err)
	}
	return a
}

// helpCommands are every command and subcommand, for the help tests.
var helpCommands = [][]string{{"run"}, {"check"}, {"echo"}, {"probe"}, {"fit"}, {"lab"}, {"lab", "build"}, {"lab", "remove"}}

// TestHelpListsExitStatuses: every command's -h lists its exit statuses
// (on stdout, exit 0); the top-level usage lists the whole table.
func TestHelpListsExitStatuses(t *testing.T) {
	for _, cmd := range helpCommands {
		t.Run(strings.Join(cmd, " "), func(t *testing.T) {
			var stdout, stderr bytes.Buffer
			code := dispatch(append(append([]string{}, cmd...), "-h"), &stdout, &stderr)
			if code != 0 || !strings.Contains(stdout.String(), "exit status") || !strings.Contains(stdout.String(), "  2  ") {
				t.Errorf("exit %d, stdout %q, stderr %q; want 0 and an exit status paragraph", code, stdout.String(), stderr.String())
			}
		})
	}
	var stdout bytes.Buffer
	dispatch([]string{"help"}, &stdout, &stdout)
	for _, code := range []string{"0", "1", "2", "3", "4", "5", "6", "7", "8"} {
		if !strings.Contains(stdout.String(), "\n  "+code+"  ") {
			t.Errorf("top-level usage lacks status %s:\n%s", code, stdout.String())
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
		var out bytes.Buffer
		dispatch(args, &out, &out)
		for _, name := range teamNotes {
			if strings.Contains(out.String(), name) {
				t.Errorf("impair %s help cites %s", strings.Join(cmd, " "), name)
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
