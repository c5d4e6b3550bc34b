package cli

import (
	"fmt"
	"net"
	"net/netip"
	"strings"
)

// ParseSender reads a flag or key that names one sender of datagrams
// (impair run --sensor, monitor run --from): HOST or HOST:PORT, port 0
// when only the host is given (any port of that host). An empty value (an
// unset variable in an env file), a port without a host and an
// unspecified address (0.0.0.0, ::) are refused: none names a sender, and
// a pin on one would let nothing in. resolve turns a HOST:PORT with a host
// name into an address (nil: addresses only). who names the sender in
// the messages ("the relay's tap"). IPv4-mapped addresses are unmapped,
// as sockets report sources.
func ParseSender(s, who string, resolve func(hostPort string) (netip.AddrPort, error)) (netip.AddrPort, error) {
	want := "want HOST or HOST:PORT of " + who + " (such as 127.0.0.1 or 10.0.0.5:7000)"
	if strings.TrimSpace(s) == "" {
		return netip.AddrPort{}, fmt.Errorf("empty; %s; leave the flag out to take any source", want)
	}
	hostPort := s
	if host, _, err := net.SplitHostPort(s); err == nil {
		if host == "" {
			return netip.AddrPort{}, fmt.Errorf("%q has no host; %s", s, want)
		}
	} else {
		hostPort = net.JoinHostPort(s, "0")
	}
	ap, err := netip.ParseAddrPort(hostPort)
	if err != nil && resolve != nil {
		ap, err = resolve(hostPort)
	}
	switch {
	case err != nil || !ap.Addr().IsValid():
		return netip.AddrPort{}, fmt.Errorf("%s, got %q", want, s)
	case ap.Addr().IsUnspecified():
		return netip.AddrPort{}, fmt.Errorf("%q is no sender's address; %s", s, want)
	}
	return netip.AddrPortFrom(ap.Addr().Unmap(), ap.Port()), nil
}
