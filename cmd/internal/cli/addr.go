package cli

import (
	"net/netip"

	"rigwire/emulate/endpoint"
)

// AddrFlag is a HOST:PORT flag value, resolved by endpoint.Resolve (the
// one address parser of flags and files) when the flag is parsed, so that
// a bad address is reported with the flag's name before anything starts.
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
	ap, err := endpoint.Resolve(s)
	if err != nil {
		return err
	}
	a.Addr, a.Given = ap, true
	return nil
}

// SenderFlag names one sender of datagrams, HOST or HOST:PORT (port 0:
// any port of that host); see endpoint.ParseSender. Who names the sender
// in the messages.
type SenderFlag struct {
	AddrFlag
	Who string
}

func (a *SenderFlag) Set(s string) error {
	ap, err := endpoint.ParseSender(s, a.Who)
	if err != nil {
		return err
	}
	a.Addr, a.Given = ap, true
	return nil
}
