package report

import (
	"fmt"
	"testing"
)

// The soak's text writes its times with the named laws.Seconds variants
// of report.go; each reads as the fmt verb it replaced, byte for byte:
// a state's mean dwell as "%.4g s", the trip's time in the phase table as
// "%.3fs".
func TestSecondsVariantsMatchFormerVerbs(t *testing.T) {
	cases := []struct {
		name    string
		format  func(float64) string
		verb    string
		seconds []float64
	}{
		{"mean dwell", windowSec.Format, "%.4g s", []float64{0.3, 4, 12.5, 0.000125, 1234.5678, 1e-7, 86400}},
		{"trip time", tripAtSec.Format, "%.3fs", []float64{0, 0.8, 0.0004, 0.0005, 12.3456, 262, 3600.0001}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			for _, s := range c.seconds {
				if got, want := c.format(s), fmt.Sprintf(c.verb, s); got != want {
					t.Errorf("%g s: got %q, want %q", s, got, want)
				}
			}
		})
	}
}
