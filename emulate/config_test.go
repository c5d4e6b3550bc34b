package emulate

import (
	"io"
	"log/slog"
	"net/netip"
	"strings"
	"testing"
)

// Addresses of two families that one socket would have to serve are
// refused before anything is opened, with the addresses named.
func TestRelayMixedFamiliesRefused(t *testing.T) {
	v4 := netip.MustParseAddrPort("127.0.0.1:0")
	cases := []struct {
		name string
		mod  func(*Config)
		ok   bool
		want string
	}{
		{name: "IPv6 actuator, IPv4 listen", mod: func(c *Config) { c.Actuator = netip.MustParseAddrPort("[::1]:7000") }, want: "actuator: [::1]:7000 is IPv6"},
		{name: "IPv6 sensor, IPv4 listen", mod: func(c *Config) { c.Sensor = netip.MustParseAddrPort("[::1]:7000") }, want: "sensor: [::1]:7000 is IPv6"},
		{name: "IPv4 actuator, IPv6 listen", mod: func(c *Config) {
			c.Listen = netip.MustParseAddrPort("[::1]:0")
			c.Actuator = netip.MustParseAddrPort("127.0.0.1:7000")
		}, want: "actuator: 127.0.0.1:7000 is IPv4"},
		{name: "IPv6 controller, IPv4 controller-facing socket", mod: func(c *Config) {
			c.Controller = netip.MustParseAddrPort("[::1]:7100")
			c.ControllerBind = v4
		}, want: "but controller [::1]:7100 is IPv6"},
		{name: "unspecified sensor pin", mod: func(c *Config) { c.Sensor = netip.MustParseAddrPort("0.0.0.0:0") }, want: "no datagram comes from an unspecified address"},
		{name: "IPv4-mapped actuator with IPv4 listen is IPv4", mod: func(c *Config) {
			c.Actuator = netip.MustParseAddrPort("[::ffff:127.0.0.1]:7000")
		}, ok: true},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			cfg := Config{Profile: cleanProfile(0), Listen: v4, Controller: netip.MustParseAddrPort("127.0.0.1:7100"),
				Logger: slog.New(slog.NewTextHandler(io.Discard, nil))}
			tc.mod(&cfg)
			r, err := New(cfg)
			if tc.ok {
				if err != nil {
					t.Fatalf("refused: %v", err)
				}
				r.closeSockets()
				return
			}
			if err == nil {
				r.closeSockets()
				t.Fatal("accepted")
			}
			if !strings.Contains(err.Error(), tc.want) {
				t.Errorf("error %q does not say %q", err, tc.want)
			}
		})
	}
}
