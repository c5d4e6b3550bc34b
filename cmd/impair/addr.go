package main

import (
	"errors"

	"fmt"
	"net"
	"net/netip"
	"rigwire/cmd/internal/cli"
	"rigwire/emulate"
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

// hostPortFlag names one sender: HOST or HOST:PORT (port 0 when only the
// host is given).
type hostPortFlag struct{ addrFlag }

func (a *hostPortFlag) Set(s string) error {
	ap, err := resolveHostPort(s)
	if err != nil {
		return err
	}
	a.ap, a.set = ap, true
	return nil
}

// resolveHostPort reads one sender: HOST:PORT, or HOST alone (port 0: any
// port); see cli.ParseSender for what is refused.
func resolveHostPort(s string) (netip.AddrPort, error) {
	return cli.ParseSender(s, "the rig's sensor node", resolveAddr)
}

// checkFamilies refuses a link whose addresses one socket would have to
// serve in two families (emulate.CheckFamilies); name spells a key (a
// flag, or a key of the links file).
func checkFamilies(l linkSpec, name func(key string) string) error {
	err := emulate.CheckFamilies(emulate.Config{Listen: l.Listen, Actuator: l.Actuator, Sensor: l.Sensor,
		Controller: l.Controller, ControllerBind: l.ControllerBind})
	var fe *emulate.FamilyError
	if errors.As(err, &fe) {
		return errors.New(fe.Spell(name))
	}
	return err
}
