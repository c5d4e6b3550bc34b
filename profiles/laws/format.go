package laws

import (
	"math"
	"strconv"
)

// Seconds says how to write a time given in seconds. It is the one
// formatter of times in rigwire: every place that writes seconds for a
// person uses FormatSeconds or a named Seconds value beside its code.
//
// The zero value is the compact form: the unit that suits the size (µs
// below a millisecond, ms below a second, else s), four significant
// digits, no space ("12.5ms"). The fields give the variants the outputs
// need.
type Seconds struct {
	// Unit fixes the unit: "s" or "ms"; "" picks µs, ms or s by size.
	Unit string
	// Fixed writes Digits decimals ("%.1f") instead of Digits
	// significant digits ("%.4g").
	Fixed bool
	// Digits is the precision: significant digits, or decimals when
	// Fixed. 0 without Fixed means 4; -1 as many as the value needs.
	Digits int
	// Space puts a space between the number and its unit ("12.5 ms").
	Space bool
	// Micro spells the microsecond; "" is "µs" ("us" suits ASCII text).
	Micro string
	// Zero is what exactly zero reads as; "" writes it as any other value
	// (in µs when the unit is picked by size).
	Zero string
	// Missing is what NaN and ±Inf read as; "" is strconv's spelling
	// ("NaN", "+Inf"), without a unit.
	Missing string
}

// Compact is FormatSeconds' form: "12.5ms", "1.5s", "0s".
var Compact = Seconds{Zero: "0s"}

// Terse is the compact form for tables and status lines: "0" for none,
// "-" for a time that does not exist.
var Terse = Seconds{Zero: "0", Missing: "-"}

// FormatSeconds writes a time in seconds in the unit that suits it (µs,
// ms, s) with up to four significant digits, for descriptions of laws and
// the messages about them (Compact).
func FormatSeconds(s float64) string { return Compact.Format(s) }

// Format writes s as f says.
func (f Seconds) Format(s float64) string {
	if math.IsNaN(s) || math.IsInf(s, 0) {
		if f.Missing != "" {
			return f.Missing
		}
		return strconv.FormatFloat(s, 'g', -1, 64)
	}
	if s == 0 && f.Zero != "" {
		return f.Zero
	}
	unit, v := f.Unit, s
	switch unit {
	case "ms":
		v = s * 1e3
	case "":
		switch a := math.Abs(s); {
		case a < 1e-3:
			unit, v = f.Micro, s*1e6
			if unit == "" {
				unit = "µs"
			}
		case a < 1:
			unit, v = "ms", s*1e3
		default:
			unit = "s"
		}
	}
	verb, prec := byte('g'), f.Digits
	if f.Fixed {
		verb = 'f'
	} else if prec == 0 {
		prec = 4
	}
	num := strconv.FormatFloat(v, verb, prec, 64)
	if f.Space {
		return num + " " + unit
	}
	return num + unit
}

func fmtNum(x float64) string { return strconv.FormatFloat(x, 'g', 4, 64) }
