package links

import (
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"
)

// linksDeadline: the issue asks for a clear error within a second; a
// reader that waits on a named pipe never returns, so the test fails
// instead of hanging.
const linksDeadline = time.Second

// TestLinksFileNotRegular: a links file that is a named pipe, a
// directory, a device or too large is refused at once, naming it.
func TestLinksFileNotRegular(t *testing.T) {
	dir := t.TempDir()
	fifo := filepath.Join(dir, "links.yaml")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Skipf("cannot make a named pipe here: %v", err)
	}
	big := filepath.Join(dir, "big.yaml")
	if err := os.WriteFile(big, make([]byte, 2<<20), 0o644); err != nil {
		t.Fatal(err)
	}
	cases := []struct{ name, path, want string }{
		{"named pipe", fifo, "links file " + fifo + ": not a regular file (a named pipe)"},
		{"directory", dir, "links file " + dir + ": not a regular file (a directory)"},
		{"device", "/dev/null", "links file /dev/null: not a regular file (a character device)"},
		{"too large", big, "links file " + big + ": 2097152 bytes, want at most 1048576 (1 MiB)"},
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
			case <-time.After(linksDeadline):
				t.Fatalf("no answer within %s", linksDeadline)
			}
		})
	}
}
