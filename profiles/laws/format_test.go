package laws

import (
	"math"
	"testing"
)

// Every variant of the one seconds formatter, on the values its users
// give it: the unit picked by size or fixed, significant digits or
// decimals, the space, the ASCII microsecond, zero and missing values.
func TestSecondsFormat(t *testing.T) {
	cases := []struct {
		name string
		f    Seconds
		s    float64
		want string
	}{
		{"compact µs", Compact, 25e-6, "25µs"},
		{"compact ms", Compact, 0.0125, "12.5ms"},
		{"compact s", Compact, 1.5, "1.5s"},
		{"compact four digits", Compact, 123.456, "123.5s"},
		{"compact zero", Compact, 0, "0s"},
		{"compact negative ms", Compact, -0.002, "-2ms"},
		{"compact NaN", Compact, math.NaN(), "NaN"},
		{"compact Inf", Compact, math.Inf(1), "+Inf"},
		{"zero as any value", Seconds{}, 0, "0µs"},
		{"terse zero", Terse, 0, "0"},
		{"terse missing", Terse, math.NaN(), "-"},
		{"terse ms", Terse, 0.0125, "12.5ms"},
		{"fixed tenths", Seconds{Unit: "s", Fixed: true, Digits: 1, Space: true}, 54, "54.0 s"},
		{"fixed tenths rounds", Seconds{Unit: "s", Fixed: true, Digits: 1, Space: true}, 0.849, "0.8 s"},
		{"fixed shortest", Seconds{Unit: "s", Fixed: true, Digits: -1, Space: true}, 12.25, "12.25 s"},
		{"milliseconds", Seconds{Unit: "ms", Space: true, Missing: "—"}, 0.0081234, "8.123 ms"},
		{"milliseconds missing", Seconds{Unit: "ms", Space: true, Missing: "—"}, math.Inf(-1), "—"},
		{"seconds shortest", Seconds{Unit: "s", Digits: -1}, 60, "60s"},
		{"seconds four digits", Seconds{Unit: "s", Space: true}, 0.5, "0.5 s"},
		{"ascii three digits", Seconds{Digits: 3, Space: true, Micro: "us"}, 12.34e-6, "12.3 us"},
		{"ascii three digits ms", Seconds{Digits: 3, Space: true, Micro: "us"}, 0.01234, "12.3 ms"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := c.f.Format(c.s); got != c.want {
				t.Errorf("Format(%g) = %q, want %q", c.s, got, c.want)
			}
		})
	}
	if FormatSeconds(0.0125) != Compact.Format(0.0125) {
		t.Errorf("FormatSeconds is not the compact form")
	}
}
