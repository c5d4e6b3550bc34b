package summary

import (
	"fmt"
	"math"

	"rigwire/profiles/laws"
)

// The report's times are written with the one seconds formatter
// (laws.Seconds) in two variants of its own, which differ from the
// compact form on purpose: the report is ASCII, a table a person scans.
var (
	// dwellTime: three significant digits, a space before the unit, "us"
	// for the microsecond, "-" for a state never left (+Inf):
	// "6 s", "400 ms", "10 ms".
	dwellTime = laws.Seconds{Digits: 3, Space: true, Micro: "us", Missing: "-"}
)

// fmtDur writes a time in seconds in the unit that suits it (dwellTime).
func fmtDur(s float64) string { return dwellTime.Format(s) }

// fmtMS writes a delay in milliseconds with three significant digits as
// fixed decimals, so a column's decimal points sit where a reader expects
// ("0.171 ms", "1.63 ms", "12.9 ms", "250 ms"); "inf" for an infinite one.
func fmtMS(s float64) string {
	if math.IsInf(s, 1) {
		return "inf"
	}
	decimals := 0
	switch v := s * 1e3; {
	case v < 1:
		decimals = 3
	case v < 10:
		decimals = 2
	case v < 100:
		decimals = 1
	}
	return laws.Seconds{Unit: "ms", Fixed: true, Digits: decimals, Space: true}.Format(s)
}

// fmtPct writes a probability as a percentage.
func fmtPct(p float64) string {
	if p == 0 {
		return "0 %"
	}
	return fmt.Sprintf("%.3g %%", 100*p)
}

func fmtNum(x float64) string {
	if math.IsInf(x, 1) {
		return "inf"
	}
	return fmt.Sprintf("%.3g", x)
}
