package laws

import (
	"math"
	"strconv"
)

// FormatSeconds writes a time in seconds in the unit that suits it (µs,
// ms, s) with up to four significant digits, for descriptions of laws and
// the messages about them.
func FormatSeconds(s float64) string {
	a := math.Abs(s)
	switch {
	case math.IsInf(s, 0) || math.IsNaN(s):
		return strconv.FormatFloat(s, 'g', -1, 64)
	case a == 0:
		return "0s"
	case a < 1e-3:
		return strconv.FormatFloat(s*1e6, 'g', 4, 64) + "µs"
	case a < 1:
		return strconv.FormatFloat(s*1e3, 'g', 4, 64) + "ms"
	}
	return strconv.FormatFloat(s, 'g', 4, 64) + "s"
}

func fmtNum(x float64) string { return strconv.FormatFloat(x, 'g', 4, 64) }
