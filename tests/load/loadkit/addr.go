package loadkit

import (
	"fmt"
	"net/netip"
)

// ParseLoopback parses HOST:PORT and accepts it only on a loopback address
// (127.0.0.0/8 or ::1): the load tools never send anywhere else.
func ParseLoopback(s string) (netip.AddrPort, error) {
	ap, err := netip.ParseAddrPort(s)
	if err != nil {
		return netip.AddrPort{}, fmt.Errorf("%q: want loopback HOST:PORT such as 127.0.0.1:9000: %w", s, err)
	}
	if !ap.Addr().Unmap().IsLoopback() {
		return netip.AddrPort{}, fmt.Errorf("%q: not a loopback address (want 127.0.0.0/8 or ::1)", s)
	}
	return ap, nil
}
