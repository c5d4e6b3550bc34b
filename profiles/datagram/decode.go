package datagram

import (
	"bytes"
	"math"
	"strconv"
	"unsafe"
)

// Error is why a datagram did not decode. The values are fixed
// (ErrTooShort, …) so that callers count them by Reason without
// allocating.
type Error struct {
	// Reason is a short label, usable as a metric label value.
	Reason string
}

func (e *Error) Error() string { return "datagram " + e.Reason }

// The reasons a datagram does not decode. Oversized datagrams are the
// reader's to detect (it bounds its buffer); ReasonOversized is listed
// here so that all reasons have one spelling.
var (
	// ErrTooShort: the datagram ends before a binary value, or has fewer
	// text fields than the decode section names.
	ErrTooShort = &Error{Reason: "too_short"}
	// ErrNotNumber: a text output field is not a decimal number.
	ErrNotNumber = &Error{Reason: "not_a_number"}
	// ErrNotFinite: an output is NaN or infinite (or out of float64 range).
	ErrNotFinite = &Error{Reason: "not_finite"}
	// ErrOutOfRange: an output is finite but beyond ±MaxOutput, where the
	// square of its squared error, summed over a long run, would no longer
	// be a finite number: one such value must not poison a run's estimate.
	ErrOutOfRange = &Error{Reason: "out_of_range"}
	// ErrBadSequence: the sequence field is not a non-negative integer.
	ErrBadSequence = &Error{Reason: "bad_sequence"}
	// ErrOversized: longer than the reader accepts.
	ErrOversized = &Error{Reason: "oversized"}
)

// Reasons lists every Error, for counters that must exist
// from the start.
var Reasons = []*Error{ErrTooShort, ErrNotNumber, ErrNotFinite, ErrOutOfRange, ErrBadSequence, ErrOversized, ErrBadJSON}

// ErrBadTime is not among Reasons: the sample time is read only by the
// relay's pairing, which counts its own failures.

// MaxOutput bounds the magnitude of a decoded output (and of a setpoint:
// the monitor refuses a loop whose setpoint lies beyond it). The monitor
// squares twice: x = eᵀe for each sample, then x² for the spread of the
// samples and of the batch means behind the interval. With |y|, |r| ≤ B
// and p outputs, |e_i| ≤ 2B, x ≤ 4p·B² and x² ≤ 16p²·B⁴; for B = 1e50,
// p ≤ 10⁶ outputs and a run of up to 10⁹⁰ samples, sums of x² stay below
// 1.6e303, under float64's largest value (1.8e308). A bound of 1e100
// would let x² overflow on one sample (1e400). No physical measurement
// comes near 1e50 in any unit; a value beyond it is a corrupt datagram.
const MaxOutput = 1e50

// checkOutput sorts a decoded value into finite, out of range or valid.
func checkOutput(v float64) error {
	switch {
	case math.IsNaN(v) || math.IsInf(v, 0):
		return ErrNotFinite
	case math.Abs(v) > MaxOutput:
		return ErrOutOfRange
	}
	return nil
}

// Output decodes one sensor datagram: it writes the plant's outputs into
// y (len(y) must be len(d.Outputs)) and returns the sample counter when
// the decode section has one. It never allocates and never panics; a
// datagram that does not decode returns one of the Error values and
// leaves y partly written.
//
// Text: the payload is split at each occurrence of d.Separator; a field
// is trimmed of ASCII white space (so a trailing newline is fine) and must
// be a decimal number, [+-]digits[.digits][(e|E)[+-]digits] (at least one
// digit before the exponent), or, for the sequence, decimal digits only.
// Binary: each value is read at its offset with its type and byte order;
// signed sequence values below zero are ErrBadSequence. JSON: each value
// is found by its pointer (json.go) and must be a JSON number, the
// sequence a non-negative integer.
func (d *Layout) Output(payload []byte, y []float64) (seq uint64, hasSeq bool, err error) {
	if len(y) != len(d.Outputs) {
		return 0, false, ErrTooShort // a caller error; never a panic
	}
	if d.Format == "json" {
		for i, f := range d.Outputs {
			v, err := jsonFloat(payload, f)
			if err == nil {
				err = checkOutput(v)
			}
			if err != nil {
				return 0, false, err
			}
			y[i] = v
		}
		return d.seq(payload, nil)
	}
	if d.Format == "binary" {
		for i, f := range d.Outputs {
			v, ok := binaryValue(payload, f)
			if !ok {
				return 0, false, ErrTooShort
			}
			if err := checkOutput(v); err != nil {
				return 0, false, err
			}
			y[i] = v
		}
		return d.seq(payload, nil)
	}
	// The separator's bytes, read in place: a conversion would copy a
	// separator longer than the compiler's stack buffer (32 bytes) to the
	// heap on every datagram.
	sep := comma
	if d.Separator != "" {
		sep = unsafe.Slice(unsafe.StringData(d.Separator), len(d.Separator))
	}
	for i, f := range d.Outputs {
		b, ok := textField(payload, sep, f.Field)
		if !ok {
			return 0, false, ErrTooShort
		}
		if !isDecimal(b) {
			return 0, false, ErrNotNumber
		}
		// The string aliases payload only for the call; the syntax check
		// above leaves range errors (overflow) as the only failure.
		v, perr := strconv.ParseFloat(unsafe.String(unsafe.SliceData(b), len(b)), 64)
		if perr != nil {
			return 0, false, ErrNotFinite
		}
		if err := checkOutput(v); err != nil {
			return 0, false, err
		}
		y[i] = v
	}
	return d.seq(payload, sep)
}

// Seq decodes only the sequence counter of a datagram (a sample's, or the
// one a command carries of the sample it answers): hasSeq is false when
// the layout has none. Like Output it never allocates and never panics.
func (d *Layout) Seq(payload []byte) (seq uint64, hasSeq bool, err error) {
	sep := comma
	if d.Separator != "" {
		sep = unsafe.Slice(unsafe.StringData(d.Separator), len(d.Separator))
	}
	return d.seq(payload, sep)
}

func (d *Layout) seq(payload, sep []byte) (uint64, bool, error) {
	if d.Sequence == nil {
		return 0, false, nil
	}
	if d.Format == "json" {
		s, err := jsonCounter(payload, *d.Sequence)
		if err != nil {
			return 0, false, err
		}
		return s, true, nil
	}
	if d.Format == "binary" {
		s, ok, neg := binaryCounter(payload, *d.Sequence)
		switch {
		case !ok:
			return 0, false, ErrTooShort
		case neg:
			return 0, false, ErrBadSequence
		}
		return s, true, nil
	}
	b, ok := textField(payload, sep, d.Sequence.Field)
	if !ok {
		return 0, false, ErrTooShort
	}
	s, ok := parseCounter(b)
	if !ok {
		return 0, false, ErrBadSequence
	}
	return s, true, nil
}

var comma = []byte(",")

// textField returns field idx of payload split at sep, trimmed of ASCII
// white space.
func textField(payload, sep []byte, idx int) ([]byte, bool) {
	if idx < 0 {
		return nil, false
	}
	rest := payload
	for i := 0; i < idx; i++ {
		j := bytes.Index(rest, sep)
		if j < 0 {
			return nil, false
		}
		rest = rest[j+len(sep):]
	}
	if j := bytes.Index(rest, sep); j >= 0 {
		rest = rest[:j]
	}
	return bytes.TrimSpace(rest), true
}

// isDecimal reports whether b is [+-]digits[.digits][(e|E)[+-]digits]
// with at least one mantissa digit (".5" and "5." are accepted).
func isDecimal(b []byte) bool {
	i := 0
	if i < len(b) && (b[i] == '+' || b[i] == '-') {
		i++
	}
	digits := 0
	for i < len(b) && b[i] >= '0' && b[i] <= '9' {
		i, digits = i+1, digits+1
	}
	if i < len(b) && b[i] == '.' {
		i++
		for i < len(b) && b[i] >= '0' && b[i] <= '9' {
			i, digits = i+1, digits+1
		}
	}
	if digits == 0 {
		return false
	}
	if i < len(b) && (b[i] == 'e' || b[i] == 'E') {
		i++
		if i < len(b) && (b[i] == '+' || b[i] == '-') {
			i++
		}
		exp := 0
		for i < len(b) && b[i] >= '0' && b[i] <= '9' {
			i, exp = i+1, exp+1
		}
		if exp == 0 {
			return false
		}
	}
	return i == len(b)
}

// parseCounter reads decimal digits into a uint64 (at most 19 digits, so
// it cannot overflow).
func parseCounter(b []byte) (uint64, bool) {
	if len(b) == 0 || len(b) > 19 {
		return 0, false
	}
	var v uint64
	for _, c := range b {
		if c < '0' || c > '9' {
			return 0, false
		}
		v = v*10 + uint64(c-'0')
	}
	return v, true
}

// binaryBytes returns the field's bytes within payload.
func binaryBytes(payload []byte, f Field) ([]byte, bool) {
	size := f.Size()
	if size == 0 || f.Offset < 0 || f.Offset > len(payload)-size {
		return nil, false
	}
	return payload[f.Offset : f.Offset+size], true
}

func binaryValue(payload []byte, f Field) (float64, bool) {
	b, ok := binaryBytes(payload, f)
	if !ok {
		return 0, false
	}
	o := f.ByteOrder()
	switch f.Type {
	case "float32":
		return float64(math.Float32frombits(o.Uint32(b))), true
	case "float64":
		return math.Float64frombits(o.Uint64(b)), true
	case "int16":
		return float64(int16(o.Uint16(b))), true
	case "uint16":
		return float64(o.Uint16(b)), true
	case "int32":
		return float64(int32(o.Uint32(b))), true
	case "uint32":
		return float64(o.Uint32(b)), true
	case "int64":
		return float64(int64(o.Uint64(b))), true
	}
	return 0, false
}

// binaryCounter reads an integer sequence field; neg reports a signed
// value below zero.
func binaryCounter(payload []byte, f Field) (v uint64, ok, neg bool) {
	b, ok := binaryBytes(payload, f)
	if !ok {
		return 0, false, false
	}
	o := f.ByteOrder()
	switch f.Type {
	case "int16":
		s := int16(o.Uint16(b))
		return uint64(s), true, s < 0
	case "uint16":
		return uint64(o.Uint16(b)), true, false
	case "int32":
		s := int32(o.Uint32(b))
		return uint64(s), true, s < 0
	case "uint32":
		return uint64(o.Uint32(b)), true, false
	case "int64":
		s := int64(o.Uint64(b))
		return uint64(s), true, s < 0
	}
	return 0, false, false // float types are refused by the loader
}

// ErrBadTime: the sample time field is not a number.
var ErrBadTime = &Error{Reason: "bad_sample_time"}

// Time decodes the sample time a datagram carries, in nanoseconds on the
// sender's clock (hasTime false when the layout has none). A text field is
// a decimal number; a binary one any of the binary types. Values beyond
// 2⁵³ ns (Unix times in nanoseconds) keep float64's precision, a few
// hundred nanoseconds. Like Output it never allocates and never panics.
func (d *Layout) Time(payload []byte) (ns int64, hasTime bool, err error) {
	if d.SampleTime == nil {
		return 0, false, nil
	}
	var v float64
	switch d.Format {
	case "json":
		x, err := jsonFloat(payload, *d.SampleTime)
		if err != nil {
			return 0, false, ErrBadTime
		}
		v = x
	case "binary":
		x, ok := binaryValue(payload, *d.SampleTime)
		if !ok {
			return 0, false, ErrTooShort
		}
		v = x
	default:
		sep := comma
		if d.Separator != "" {
			sep = unsafe.Slice(unsafe.StringData(d.Separator), len(d.Separator))
		}
		b, ok := textField(payload, sep, d.SampleTime.Field)
		if !ok {
			return 0, false, ErrTooShort
		}
		if !isDecimal(b) {
			return 0, false, ErrBadTime
		}
		x, perr := strconv.ParseFloat(unsafe.String(unsafe.SliceData(b), len(b)), 64)
		if perr != nil {
			return 0, false, ErrBadTime
		}
		v = x
	}
	unit := d.TimeUnit
	if unit == 0 {
		unit = 1
	}
	v *= unit
	if !(v >= -9.2e18 && v <= 9.2e18) {
		return 0, false, ErrBadTime
	}
	return int64(v), true, nil
}
