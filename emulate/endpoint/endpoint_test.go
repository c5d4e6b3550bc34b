package endpoint

import (
	"net/netip"
	"strings"
	"testing"
)

func TestParseSender(t *testing.T) {
	// Addresses only: "rig-node" is refused without a DNS query.
	LookupNames = false
	t.Cleanup(func() { LookupNames = true })
	for _, tc := range []struct {
		in, want, err string
	}{
		{in: "127.0.0.1", want: "127.0.0.1:0"},
		{in: "10.0.0.5:7000", want: "10.0.0.5:7000"},
		{in: "::1", want: "[::1]:0"},
		{in: "[::1]:7000", want: "[::1]:7000"},
		{in: "[::ffff:10.0.0.5]:7000", want: "10.0.0.5:7000"},
		{in: "", err: "empty"},
		{in: "  ", err: "empty"},
		{in: ":7000", err: "has no host"},
		{in: "0.0.0.0", err: "no sender's address"},
		{in: "[::]:7000", err: "no sender's address"},
		{in: "rig-node", err: "want HOST or HOST:PORT"},
	} {
		t.Run(tc.in, func(t *testing.T) {
			ap, err := ParseSender(tc.in, "the rig's sensor node")
			switch {
			case tc.err != "":
				if err == nil || !strings.Contains(err.Error(), tc.err) {
					t.Errorf("got %v, %v; want an error saying %q", ap, err, tc.err)
				}
			case err != nil || ap != netip.MustParseAddrPort(tc.want):
				t.Errorf("got %v, %v; want %s", ap, err, tc.want)
			}
		})
	}
}

// TestSenderText: what ParseSender reads is spelled back for the log, the
// port-0 pin as any port of its host.
func TestSenderText(t *testing.T) {
	for _, tc := range []struct {
		name, in, want string
	}{
		{"no pin", "", "none"},
		{"host only", "10.0.0.5", "10.0.0.5 (any port)"},
		{"host and port", "10.0.0.5:7000", "10.0.0.5:7000"},
		{"IPv6 host only", "::1", "::1 (any port)"},
		{"IPv6 host and port", "[::1]:7000", "[::1]:7000"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var p netip.AddrPort
			if tc.in != "" {
				var err error
				if p, err = ParseSender(tc.in, "the rig's sensor node"); err != nil {
					t.Fatal(err)
				}
			}
			if got := SenderText(p, "none"); got != tc.want {
				t.Errorf("got %q, want %q", got, tc.want)
			}
		})
	}
}
