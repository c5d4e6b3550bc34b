package main

import (
	"regexp"
	"strings"
	"testing"
)

// twoDefaults finds a flag line that states its default twice, e.g.
// "(default 60s) (default 60)" or "(default: a tenth …) (default -1)".
var twoDefaults = regexp.MustCompile(`\(default[^)]*\).*\(default`)

// TestHelpDefaultsOnce: every flag's help states its default at most once.
func TestHelpDefaultsOnce(t *testing.T) {
	for _, cmd := range helpCommands {
		_, out, errOut := runMonitor(append(append([]string{}, cmd...), "-h")...)
		for _, line := range strings.Split(out+errOut, "\n") {
			if twoDefaults.MatchString(line) {
				t.Errorf("%s -h: a default stated twice: %q", strings.Join(cmd, " "), strings.TrimSpace(line))
			}
		}
	}
}
