package lab

import (
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"
)

// loadDeadline: the issue asks for a clear error within a second; a
// reader that waits on a named pipe never returns, so the test fails
// instead of hanging.
const loadDeadline = time.Second

func TestLoadNotRegular(t *testing.T) {
	dir := t.TempDir()
	fifo := filepath.Join(dir, "lab.yaml")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Skipf("cannot make a named pipe here: %v", err)
	}
	big := filepath.Join(dir, "big.yaml")
	if err := os.WriteFile(big, make([]byte, 2<<20), 0o644); err != nil {
		t.Fatal(err)
	}
	cases := []struct{ name, path, want string }{
		{"named pipe", fifo, "lab topology " + fifo + ": not a regular file (a named pipe)"},
		{"directory", dir, "lab topology " + dir + ": not a regular file (a directory)"},
		{"device", "/dev/null", "lab topology /dev/null: not a regular file (a character device)"},
		{"too large", big, "lab topology " + big + ": 2097152 bytes, want at most 1048576 (1 MiB)"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			done := make(chan error, 1)
			go func() { _, err := Load(c.path); done <- err }()
			select {
			case err := <-done:
				if err == nil || !strings.Contains(err.Error(), c.want) {
					t.Fatalf("got  %v\nwant %s", err, c.want)
				}
			case <-time.After(loadDeadline):
				t.Fatalf("no answer within %s", loadDeadline)
			}
		})
	}
}
