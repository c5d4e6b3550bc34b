package tests

import (
	"os"
	"os/exec"
	"testing"
)

// needTool returns the path of an outside program a test relies on. Where
// it is missing the test is skipped with a clear message, except under CI
// (RIGWIRE_REQUIRE=1, set by .ci/run), where it fails.
func needTool(t testing.TB, name, debianPackage string) string {
	t.Helper()
	path, err := exec.LookPath(name)
	if err == nil {
		return path
	}
	msg := name + " not found: install Debian's " + debianPackage + " package (apt-get install " + debianPackage + ")"
	if os.Getenv("RIGWIRE_REQUIRE") == "1" {
		t.Fatal(msg)
	}
	t.Skip(msg)
	return ""
}
