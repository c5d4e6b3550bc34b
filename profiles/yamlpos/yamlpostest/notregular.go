package yamlpostest

import (
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"
)

// Deadline is how long a refusal may take: the issue asks for a clear
// error within a second; a reader that waits on a named pipe never
// returns, so the test fails instead of hanging.
const Deadline = time.Second

// RefusesNonRegular checks that load, given a path where a YAML input file
// of kind what ("links file", "lab topology") should be, refuses within
// Deadline a named pipe (called name), a directory, a character device and
// a file of 2 MiB (over yamlpos.MaxYAMLBytes), each with an error that
// says "WHAT PATH: " and why. It skips where a named pipe cannot be made.
func RefusesNonRegular(t *testing.T, what, name string, load func(path string) error) {
	t.Helper()
	dir := t.TempDir()
	fifo := filepath.Join(dir, name)
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Skipf("cannot make a named pipe here: %v", err)
	}
	big := filepath.Join(dir, "big.yaml")
	if err := os.WriteFile(big, make([]byte, 2<<20), 0o644); err != nil {
		t.Fatal(err)
	}
	cases := []struct{ name, path, want string }{
		{"named pipe", fifo, what + " " + fifo + ": not a regular file (a named pipe)"},
		{"directory", dir, what + " " + dir + ": not a regular file (a directory)"},
		{"device", "/dev/null", what + " /dev/null: not a regular file (a character device)"},
		{"too large", big, what + " " + big + ": 2097152 bytes, want at most 1048576 (1 MiB)"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			done := make(chan error, 1)
			go func() { done <- load(c.path) }()
			select {
			case err := <-done:
				if err == nil || !strings.Contains(err.Error(), c.want) {
					t.Fatalf("got  %v\nwant %s", err, c.want)
				}
			case <-time.After(Deadline):
				t.Fatalf("no answer within %s", Deadline)
			}
		})
	}
}
