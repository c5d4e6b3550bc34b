package summary

import (
	"math"
	"testing"
)

// TestTimeFormats pins the report's two time formats (the golden report
// of `impair check` depends on them byte for byte), which are variants of
// laws.Seconds.
func TestTimeFormats(t *testing.T) {
	cases := []struct {
		name string
		f    func(float64) string
		in   float64
		want string
	}{
		{"dwell seconds", fmtDur, 6, "6 s"},
		{"dwell ms", fmtDur, 0.4, "400 ms"},
		{"dwell us", fmtDur, 500e-6, "500 us"},
		{"dwell zero", fmtDur, 0, "0 us"},
		{"dwell large", fmtDur, 2000, "2e+03 s"},
		{"dwell never left", fmtDur, math.Inf(1), "-"},
		{"delay below 1 ms", fmtMS, 0.000171, "0.171 ms"},
		{"delay below 10 ms", fmtMS, 0.00163, "1.63 ms"},
		{"delay below 100 ms", fmtMS, 0.0129, "12.9 ms"},
		{"delay 100 ms and more", fmtMS, 2.1544, "2154 ms"},
		{"delay zero", fmtMS, 0, "0.000 ms"},
		{"delay infinite", fmtMS, math.Inf(1), "inf"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := c.f(c.in); got != c.want {
				t.Errorf("%g: %q, want %q", c.in, got, c.want)
			}
		})
	}
}
