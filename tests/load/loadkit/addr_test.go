package loadkit

import (
	"strings"
	"testing"
)

func TestParseLoopback(t *testing.T) {
	cases := []struct {
		name, in, wantErr string
	}{
		{"v4", "127.0.0.1:9000", ""},
		{"v4 other loopback", "127.1.2.3:1", ""},
		{"v6", "[::1]:9000", ""},
		{"private range", "10.0.0.1:9000", "not a loopback address"},
		{"public", "8.8.8.8:53", "not a loopback address"},
		{"name", "localhost:9000", "want loopback HOST:PORT"},
		{"no port", "127.0.0.1", "want loopback HOST:PORT"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := ParseLoopback(c.in)
			switch {
			case c.wantErr == "" && err != nil:
				t.Fatalf("unexpected error %v", err)
			case c.wantErr != "" && (err == nil || !strings.Contains(err.Error(), c.wantErr)):
				t.Fatalf("got %v, want an error containing %q", err, c.wantErr)
			}
		})
	}
}
