package endpoint

import (
	"net/netip"
	"strings"
	"testing"
)

func TestParseSender(t *testing.T) {
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
			ap, err := ParseSender(tc.in, "the rig's sensor node", nil)
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
