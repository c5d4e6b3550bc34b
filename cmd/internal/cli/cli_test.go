package cli

import (
	"errors"
	"strings"
	"testing"

	"rigwire/cmd/internal/exitcode"
)

// CheckMetricsAddr: "off" and HOST:PORT with a host pass; an empty value
// (an unset variable in an env file) and an address without a host (which
// would bind every interface) are bad usage that says how to turn metrics
// off; every interface is there only when asked for by address.
func TestCheckMetricsAddr(t *testing.T) {
	cases := []struct {
		name, addr string
		want       string // "" when accepted; else a part of the message
	}{
		{"off", "off", ""},
		{"loopback", "127.0.0.1:9471", ""},
		{"ephemeral port", "127.0.0.1:0", ""},
		{"host name", "localhost:9471", ""},
		{"IPv6 loopback", "[::1]:9471", ""},
		{"every IPv4 interface, explicit", "0.0.0.0:9471", ""},
		{"every interface, explicit", "[::]:9471", ""},
		{"empty", "", `--metrics: empty; want HOST:PORT (such as 127.0.0.1:9471), or "off" for no metrics endpoint`},
		{"blanks", "  ", `"off" for no metrics endpoint`},
		{"no host", ":9471", `--metrics: ":9471" has no host; give one (127.0.0.1 for this machine only, 0.0.0.0 or [::] for every interface), or "off" for no metrics endpoint`},
		{"no host, ephemeral port", ":0", `has no host`},
		{"no port", "127.0.0.1", `want HOST:PORT or "off", got "127.0.0.1"`},
		{"port out of range", "127.0.0.1:70000", `want HOST:PORT or "off"`},
		{"port a name", "127.0.0.1:http", `want HOST:PORT or "off"`},
		{"Off in capitals", "OFF", `want HOST:PORT or "off"`},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			err := CheckMetricsAddr(c.addr)
			if c.want == "" {
				if err != nil {
					t.Fatalf("refused: %v", err)
				}
				return
			}
			var ue UsageError
			if !errors.As(err, &ue) {
				t.Fatalf("err %v, want a usage error", err)
			}
			if !strings.Contains(err.Error(), c.want) {
				t.Errorf("message %q lacks %q", err.Error(), c.want)
			}
			if code := Status(err, "x", &strings.Builder{}, &strings.Builder{}); code != exitcode.BadInput {
				t.Errorf("status %d, want %d (bad usage)", code, exitcode.BadInput)
			}
		})
	}
}
