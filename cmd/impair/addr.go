package main

import (
	"fmt"
	"net"
	"net/netip"
)

// addrFlag is a HOST:PORT flag value, resolved at parse time so that a bad
// address is reported with the flag's name before anything starts.
type addrFlag struct {
	ap  netip.AddrPort
	set bool
}

func (a *addrFlag) String() string {
	if !a.set {
		return ""
	}
	return a.ap.String()
}

func (a *addrFlag) Set(s string) error {
	ap, err := resolveAddr(s)
	if err != nil {
		return err
	}
	a.ap, a.set = ap, true
	return nil
}

// lookupNames lets host names be resolved; the fuzz tests turn it off so
// that no input makes a DNS query.
var lookupNames = true

// resolveAddr turns HOST:PORT (HOST a name or an address) into one address.
func resolveAddr(s string) (netip.AddrPort, error) {
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
	if !lookupNames {
		return netip.AddrPort{}, fmt.Errorf("want HOST:PORT with an address, got %q", s)
	}
	ua, err := net.ResolveUDPAddr("udp", s)
	if err != nil {
		return netip.AddrPort{}, fmt.Errorf("want HOST:PORT: %w", err)
	}
	ap := ua.AddrPort()
	return netip.AddrPortFrom(ap.Addr().Unmap(), ap.Port()), nil
}
