package endpoint

import (
	"errors"
	"fmt"
	"net"
	"net/netip"
	"strconv"
	"strings"
)

// LookupNames lets host names be resolved; the fuzz tests turn it off so
// that no input makes a DNS query.
var LookupNames = true

// Resolve turns HOST:PORT (HOST a name or an address) into one address,
// the one parser of every HOST:PORT flag and key of both commands.
// IPv4-mapped addresses are unmapped, as sockets report them.
func Resolve(s string) (netip.AddrPort, error) {
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

// ParseSender reads a flag or key that names one sender of datagrams
// (impair run --sensor, monitor run --from): HOST or HOST:PORT, port 0
// when only the host is given (any port of that host). An empty value (an
// unset variable in an env file), a port without a host and an
// unspecified address (0.0.0.0, ::) are refused: none names a sender, and
// a pin on one would let nothing in. A host name is looked up as Resolve
// does (unless LookupNames is off). who names the sender in the messages
// ("the relay's tap"). IPv4-mapped addresses are unmapped, as sockets
// report sources.
func ParseSender(s, who string) (netip.AddrPort, error) {
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
	ap, err := Resolve(hostPort)
	switch {
	case err != nil || !ap.Addr().IsValid():
		return netip.AddrPort{}, fmt.Errorf("%s, got %q", want, s)
	case ap.Addr().IsUnspecified():
		return netip.AddrPort{}, fmt.Errorf("%q is no sender's address; %s", s, want)
	}
	return ap, nil
}

// SenderText spells a sender ParseSender read, for a log line: HOST:PORT,
// "HOST (any port)" for port 0, or none when p is not set (no pin).
func SenderText(p netip.AddrPort, none string) string {
	switch {
	case !p.IsValid():
		return none
	case p.Port() == 0:
		return p.Addr().String() + " (any port)"
	}
	return p.String()
}

// ResolveHost turns a host (an address or a name) into one address
// (impair run --trip-from, trip_from in a links file).
func ResolveHost(s string) (netip.Addr, error) {
	if a, err := netip.ParseAddr(s); err == nil {
		return a.Unmap(), nil
	}
	if s == "" {
		return netip.Addr{}, fmt.Errorf("want a host, got nothing")
	}
	if !LookupNames {
		return netip.Addr{}, fmt.Errorf("want a host address, got %q", s)
	}
	ia, err := net.ResolveIPAddr("ip", s)
	if err != nil {
		return netip.Addr{}, fmt.Errorf("want a host: %w", err)
	}
	a, ok := netip.AddrFromSlice(ia.IP)
	if !ok {
		return netip.Addr{}, fmt.Errorf("want a host, got %q", s)
	}
	return a.Unmap(), nil
}

// CheckMetrics checks the address of a metrics endpoint: "off", or
// HOST:PORT with a host and a port number (whether it can be bound is
// found out when it is bound). An empty value (an unset variable in an
// env file; blanks alone too) and an empty host (":9471", which would
// bind every interface) are refused, each with how to turn metrics off:
// the endpoint is reachable from other hosts only when an address such as
// 0.0.0.0 or [::] says so. The message does not name the flag or key;
// the caller does.
func CheckMetrics(s string) error {
	if s == "off" {
		return nil
	}
	if strings.TrimSpace(s) == "" {
		return errors.New("empty; want HOST:PORT (such as 127.0.0.1:9471), or \"off\" for no metrics endpoint")
	}
	host, port, err := net.SplitHostPort(s)
	if err == nil {
		_, err = strconv.ParseUint(port, 10, 16)
	}
	if err != nil {
		return fmt.Errorf("want HOST:PORT or \"off\", got %q", s)
	}
	if host == "" {
		return fmt.Errorf("%q has no host; give one (127.0.0.1 for this machine only, 0.0.0.0 or [::] for every interface), or \"off\" for no metrics endpoint", s)
	}
	return nil
}
