package tests

import (
	"bytes"
	"io"
	"net/http"
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

// promtoolCheck fetches the metrics page at url and runs promtool check
// metrics (the binary at promtool) on it; it returns the page.
func promtoolCheck(t *testing.T, promtool, url string) []byte {
	t.Helper()
	resp, err := http.Get(url)
	if err != nil {
		t.Fatal(err)
	}
	body, _ := io.ReadAll(resp.Body)
	resp.Body.Close()
	cmd := exec.Command(promtool, "check", "metrics")
	cmd.Stdin = bytes.NewReader(body)
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Errorf("promtool check metrics: %v\n%s", err, out)
	}
	return body
}
