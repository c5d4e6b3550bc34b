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

// LookupNames lets host names be resolved; the fuzz tests turn it off so
// that no input makes a DNS query.
var LookupNames = true

// ResolveAddr turns HOST:PORT (HOST a name or an address) into one
// address, the one parser of every HOST:PORT flag and key of both
// commands. IPv4-mapped addresses are unmapped, as sockets report them.
func ResolveAddr(s string) (netip.AddrPort, error) {
	if ap, err := netip.ParseAddrPort(s); err == nil {
		return netip.AddrPortFrom(ap.Addr().Unmap(), ap.Port()), nil
	}
	host, _, err := net.SplitHostPort(s)
	if err != nil {
		return netip.AddrPort{}, fmt.Errorf("want HOST:PORT, got %q", s)
	}
	if host == "" {
		return netip.AddrPort{}, fmt.Errorf("want HOST:PORT with a host, got %q", s)
	}
	if !LookupNames {
		return netip.AddrPort{}, fmt.Errorf("want HOST:PORT with an address, got %q", s)
	}
	ua, err := net.ResolveUDPAddr("udp", s)
	if err != nil {
		return netip.AddrPort{}, fmt.Errorf("want HOST:PORT: %w", err)
	}
	ap := ua.AddrPort()
	return netip.AddrPortFrom(ap.Addr().Unmap(), ap.Port()), nil
}

// AddrFlag is a HOST:PORT flag value, resolved when the flag is parsed so
// that a bad address is reported with the flag's name before anything
// starts.
type AddrFlag struct {
	Addr  netip.AddrPort
	Given bool // the flag was on the command line
}

func (a *AddrFlag) String() string {
	if !a.Given {
		return ""
	}
	return a.Addr.String()
}

func (a *AddrFlag) Set(s string) error {
	ap, err := ResolveAddr(s)
	if err != nil {
		return err
	}
	a.Addr, a.Given = ap, true
	return nil
}

// SenderFlag names one sender of datagrams, HOST or HOST:PORT (port 0:
// any port of that host); see ParseSender. Who names the sender in the
// messages.
type SenderFlag struct {
	AddrFlag
	Who string
}

func (a *SenderFlag) Set(s string) error {
	ap, err := ParseSender(s, a.Who, ResolveAddr)
	if err != nil {
		return err
	}
	a.Addr, a.Given = ap, true
	return nil
}
