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

// hostPortFlag is HOST or HOST:PORT (port 0 when only the host is given).
type hostPortFlag struct{ addrFlag }

func (a *hostPortFlag) Set(s string) error {
	ap, err := resolveHostPort(s)
	if err != nil {
		return err
	}
	a.ap, a.set = ap, true
	return nil
}

// resolveHostPort reads HOST:PORT, or HOST alone (port 0: any port).
func resolveHostPort(s string) (netip.AddrPort, error) {
	if _, _, err := net.SplitHostPort(s); err == nil {
		return resolveAddr(s)
	}
	a, err := resolveHost(s)
	if err != nil {
		return netip.AddrPort{}, fmt.Errorf("want HOST or HOST:PORT, got %q", s)
	}
	return netip.AddrPortFrom(a, 0), nil
}

// ipFamily is 4 or 6: the family of socket that reaches a.
func ipFamily(a netip.Addr) int {
	if a.Unmap().Is4() {
		return 4
	}
	return 6
}

// checkFamilies refuses a link whose addresses one socket would have to
// serve in two families: the listen socket receives from the sensor and
// sends to the actuator, the controller-facing one sends to the
// controller. name spells a key (a flag, or a key of the links file).
func checkFamilies(l linkSpec, name func(key string) string) error {
	lf := ipFamily(l.Listen.Addr())
	for _, a := range []struct {
		key string
		ap  netip.AddrPort
	}{{"actuator", l.Actuator}, {"sensor", l.Sensor}} {
		if a.ap.IsValid() && ipFamily(a.ap.Addr()) != lf {
			return fmt.Errorf("%s: %s is IPv%d but %s %s is IPv%d (one socket serves both); use addresses of one family",
				name(a.key), a.ap.Addr(), ipFamily(a.ap.Addr()), name("listen"), l.Listen, lf)
		}
	}
	if l.ControllerBind.IsValid() && ipFamily(l.ControllerBind.Addr()) != ipFamily(l.Controller.Addr()) {
		return fmt.Errorf("%s: %s is IPv%d but %s %s is IPv%d (that socket sends to the controller); use addresses of one family",
			name("controller_bind"), l.ControllerBind, ipFamily(l.ControllerBind.Addr()), name("controller"), l.Controller, ipFamily(l.Controller.Addr()))
	}
	return nil
}
