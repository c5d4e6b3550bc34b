package datagram

import (
	"encoding/binary"
	"errors"
	"math"
	"strings"
	"testing"
)

// The decoder against datagrams encoded by hand with encoding/binary and
// strconv-style text: every binary type in both byte orders, text with
// its separators, and the failures with their reasons.

func binDecode(outType, outOrder string, outOff int, seqType, seqOrder string, seqOff int) *Layout {
	d := &Layout{Format: "binary", Outputs: []Field{{Offset: outOff, Type: outType, Order: outOrder}}}
	if seqType != "" {
		d.Sequence = &Field{Offset: seqOff, Type: seqType, Order: seqOrder}
	}
	return d
}

func order(name string) binary.ByteOrder {
	if name == "big" {
		return binary.BigEndian
	}
	return binary.LittleEndian
}

// put encodes v as typ in the byte order at b[off:].
func put(b []byte, off int, typ, ord string, v float64) {
	o := order(ord)
	switch typ {
	case "float32":
		o.PutUint32(b[off:], math.Float32bits(float32(v)))
	case "float64":
		o.PutUint64(b[off:], math.Float64bits(v))
	case "int16":
		o.PutUint16(b[off:], uint16(int16(v)))
	case "uint16":
		o.PutUint16(b[off:], uint16(v))
	case "int32":
		o.PutUint32(b[off:], uint32(int32(v)))
	case "uint32":
		o.PutUint32(b[off:], uint32(v))
	case "int64":
		o.PutUint64(b[off:], uint64(int64(v)))
	}
}

func TestDecodeBinaryEveryTypeAndOrder(t *testing.T) {
	// Values exactly representable in each type, negative where signed.
	values := map[string]float64{
		"float32": -1.25, "float64": -0.1234567890123, "int16": -12345, "uint16": 54321,
		"int32": -123456789, "uint32": 4000000000, "int64": -1 << 40,
	}
	counters := map[string]uint64{"int16": 32000, "uint16": 65000, "int32": 2000000000, "uint32": 4000000001, "int64": 1 << 50}
	for _, typ := range BinaryTypes {
		for _, ord := range []string{"little", "big"} {
			for seqType, seq := range counters {
				name := typ + "/" + ord + "/seq-" + seqType
				t.Run(name, func(t *testing.T) {
					d := binDecode(typ, ord, 8, seqType, ord, 0)
					b := make([]byte, 16)
					put(b, 8, typ, ord, values[typ])
					put(b, 0, seqType, ord, float64(seq))
					y := make([]float64, 1)
					gotSeq, has, err := d.Output(b, y)
					if err != nil || !has {
						t.Fatalf("err %v has %v", err, has)
					}
					if y[0] != values[typ] {
						t.Errorf("output %v, want %v", y[0], values[typ])
					}
					if gotSeq != seq {
						t.Errorf("sequence %d, want %d", gotSeq, seq)
					}
				})
			}
		}
	}
}

func TestDecodeCases(t *testing.T) {
	text := &Layout{Format: "text", Separator: ",", Outputs: []Field{{Field: 2}, {Field: 3}}, Sequence: &Field{Field: 0}}
	semi := &Layout{Format: "text", Separator: " ; ", Outputs: []Field{{Field: 1}}}
	bin := binDecode("float64", "big", 4, "int32", "little", 0)
	f32 := binDecode("float32", "little", 0, "", "", 0)
	le := binary.LittleEndian
	mk := func(seq int32, v float64) []byte {
		b := make([]byte, 12)
		le.PutUint32(b, uint32(seq))
		binary.BigEndian.PutUint64(b[4:], math.Float64bits(v))
		return b
	}
	nan32 := make([]byte, 4)
	le.PutUint32(nan32, math.Float32bits(float32(math.NaN())))
	cases := []struct {
		name    string
		d       *Layout
		payload []byte
		want    []float64
		seq     uint64
		hasSeq  bool
		err     error
	}{
		{"text", text, []byte("17,0.17,1.5,-2e-3\n"), []float64{1.5, -0.002}, 17, true, nil},
		{"text spaces", text, []byte(" 3 , x ,  +4. , .25 "), []float64{4, 0.25}, 3, true, nil},
		{"text extra fields", text, []byte("1,2,3,4,5,6"), []float64{3, 4}, 1, true, nil},
		{"text multi-byte separator", semi, []byte("a ; 9.5 ; b"), []float64{9.5}, 0, false, nil},
		{"text too few fields", text, []byte("1,2,3"), nil, 0, false, ErrTooShort},
		{"text empty", text, []byte(""), nil, 0, false, ErrTooShort},
		{"text not a number", text, []byte("1,2,abc,4"), nil, 0, false, ErrNotNumber},
		{"text empty field", text, []byte("1,2,,4"), nil, 0, false, ErrNotNumber},
		{"text hex refused", text, []byte("1,2,0x10,4"), nil, 0, false, ErrNotNumber},
		{"text nan refused", text, []byte("1,2,NaN,4"), nil, 0, false, ErrNotNumber},
		{"text exponent without digits", text, []byte("1,2,1e,4"), nil, 0, false, ErrNotNumber},
		{"text overflow", text, []byte("1,2,1e400,4"), nil, 0, false, ErrNotFinite},
		{"text at the bound", text, []byte("1,2,1e50,-1e50"), []float64{MaxOutput, -MaxOutput}, 1, true, nil},
		{"text beyond the bound", text, []byte("1,2,1.0000000001e50,4"), nil, 0, false, ErrOutOfRange},
		{"text 1e200", text, []byte("1,2,0.5,1e200"), nil, 0, false, ErrOutOfRange},
		{"text -1e300", text, []byte("1,2,-1e300,4"), nil, 0, false, ErrOutOfRange},
		{"text inf refused", text, []byte("1,2,Inf,4"), nil, 0, false, ErrNotNumber},
		{"text negative sequence", text, []byte("-1,2,3,4"), nil, 0, false, ErrBadSequence},
		{"text fractional sequence", text, []byte("1.5,2,3,4"), nil, 0, false, ErrBadSequence},
		{"text huge sequence", text, []byte("99999999999999999999,2,3,4"), nil, 0, false, ErrBadSequence},
		{"binary", bin, mk(42, 3.25), []float64{3.25}, 42, true, nil},
		{"binary longer payload", bin, append(mk(7, -1), 1, 2, 3), []float64{-1}, 7, true, nil},
		{"binary truncated", bin, mk(42, 3.25)[:11], nil, 0, false, ErrTooShort},
		{"binary empty", bin, nil, nil, 0, false, ErrTooShort},
		{"binary negative sequence", bin, mk(-5, 1), nil, 0, false, ErrBadSequence},
		{"binary infinite", bin, mk(1, math.Inf(1)), nil, 0, false, ErrNotFinite},
		{"binary nan", bin, mk(1, math.NaN()), nil, 0, false, ErrNotFinite},
		{"binary beyond the bound", bin, mk(1, -1e200), nil, 0, false, ErrOutOfRange},
		{"binary largest float64", bin, mk(1, math.MaxFloat64), nil, 0, false, ErrOutOfRange},
		{"binary at the bound", bin, mk(9, MaxOutput), []float64{MaxOutput}, 9, true, nil},
		{"binary float32 nan", f32, nan32, nil, 0, false, ErrNotFinite},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			y := make([]float64, len(c.d.Outputs))
			seq, has, err := c.d.Output(c.payload, y)
			if !errors.Is(err, c.err) {
				t.Fatalf("err %v, want %v", err, c.err)
			}
			if err != nil {
				return
			}
			for i := range c.want {
				if y[i] != c.want[i] {
					t.Errorf("y[%d] = %v, want %v", i, y[i], c.want[i])
				}
			}
			if seq != c.seq || has != c.hasSeq {
				t.Errorf("sequence %d %v, want %d %v", seq, has, c.seq, c.hasSeq)
			}
		})
	}
}

func TestDecodeDoesNotAllocate(t *testing.T) {
	text := &Layout{Format: "text", Separator: ",", Outputs: []Field{{Field: 2}}, Sequence: &Field{Field: 0}}
	// A separator longer than the 32 bytes a []byte(string) conversion
	// keeps on the stack.
	longSep := " <-- a separator of forty bytes, or so --> "
	long := &Layout{Format: "text", Separator: longSep, Outputs: []Field{{Field: 1}}}
	longGood := []byte("17" + longSep + "0.5")
	bin := binDecode("float64", "big", 4, "uint32", "little", 0)
	good, garbage := []byte("17,0.5,1.5e-3\n"), []byte("17,zz,1.5q")
	b := make([]byte, 12)
	y := make([]float64, 1)
	if _, _, err := long.Output(longGood, y); err != nil || y[0] != 0.5 {
		t.Fatalf("long separator: err %v, y %v; want 0.5", err, y)
	}
	for name, f := range map[string]func(){
		"text":           func() { text.Output(good, y) },
		"text garbage":   func() { text.Output(garbage, y) },
		"text short":     func() { text.Output(good[:3], y) },
		"long separator": func() { long.Output(longGood, y) },
		"binary":         func() { bin.Output(b, y) },
		"binary short":   func() { bin.Output(b[:5], y) },
		"text seq":       func() { text.Seq(good) },
		"binary seq":     func() { bin.Seq(b) },
	} {
		if n := testing.AllocsPerRun(100, f); n != 0 {
			t.Errorf("%s: %v allocations per datagram, want 0", name, n)
		}
	}
}

// FuzzDecode feeds arbitrary payloads to a text and a binary decoder
// (several fields, every integer type for the counter): no panic, and an
// accepted datagram gives finite outputs. Seed corpus in
// testdata/fuzz/FuzzDecode.
func FuzzDecode(f *testing.F) {
	f.Add([]byte("1,2.5,-3e2"), ",")
	f.Add([]byte{0, 0, 0, 1, 0x40, 0x09, 0x21, 0xfb, 0x54, 0x44, 0x2d, 0x18, 0xff}, ";")
	decoders := []*Layout{
		{Format: "binary", Outputs: []Field{{Offset: 4, Type: "float64", Order: "big"}, {Offset: 2, Type: "int16", Order: "little"}},
			Sequence: &Field{Offset: 0, Type: "uint32", Order: "big"}},
		{Format: "binary", Outputs: []Field{{Offset: 1, Type: "float32", Order: "little"}, {Offset: 9, Type: "int64", Order: "big"}},
			Sequence: &Field{Offset: 3, Type: "int64", Order: "little"}},
	}
	f.Fuzz(func(t *testing.T, payload []byte, sep string) {
		if sep == "" || len(sep) > 8 {
			sep = ","
		}
		all := append(decoders, &Layout{Format: "text", Separator: sep,
			Outputs: []Field{{Field: 1}, {Field: 2}}, Sequence: &Field{Field: 0}, SampleTime: &Field{Field: 3}, TimeUnit: 1e9})
		for _, d := range all {
			y := make([]float64, len(d.Outputs))
			// The sequence alone agrees with the whole decode wherever
			// that succeeds.
			seqOnly, hasOnly, errOnly := d.Seq(payload)
			d.Time(payload) // never panics
			seq, has, err := d.Output(payload, y)
			if err == nil && (errOnly != nil || seqOnly != seq || hasOnly != has) {
				t.Fatalf("Seq %d %v %v, Output %d %v on %q", seqOnly, hasOnly, errOnly, seq, has, payload)
			}
			if err == nil {
				for _, v := range y {
					if math.IsNaN(v) || math.IsInf(v, 0) {
						t.Fatalf("accepted non-finite output %v from %q", v, payload)
					}
				}
				continue
			}
			var de *Error
			if !errors.As(err, &de) || strings.TrimSpace(de.Reason) == "" {
				t.Fatalf("error %v is not a Error with a reason", err)
			}
		}
	})
}

// TestDecodeSampleTime: the sample time in every unit and form, text and
// binary, converted to nanoseconds; a field that is not a number, or
// missing, is an error; no allocation.
func TestDecodeSampleTime(t *testing.T) {
	text := func(unit float64) *Layout {
		return &Layout{Format: "text", Separator: ",", Sequence: &Field{Field: 0}, SampleTime: &Field{Field: 1}, TimeUnit: unit}
	}
	cases := []struct {
		name    string
		d       *Layout
		payload []byte
		want    int64
		err     error
	}{
		{"ns integer", text(1), []byte("7,123456789012,0.5"), 123456789012, nil},
		{"seconds, nine decimals", text(1e9), []byte("7,12345.678901234,0.5"), 12345678901234, nil},
		{"milliseconds", text(1e6), []byte("7,1.5,0.5"), 1500000, nil},
		{"not a number", text(1), []byte("7,noon,0.5"), 0, ErrBadTime},
		{"missing", text(1), []byte("7"), 0, ErrTooShort},
		{"binary int64 µs", &Layout{Format: "binary", SampleTime: &Field{Offset: 2, Type: "int64", Order: "big"}, TimeUnit: 1e3},
			[]byte{0, 0, 0, 0, 0, 0, 0, 0, 0x30, 0x39}, 12345000, nil},
		{"binary short", &Layout{Format: "binary", SampleTime: &Field{Offset: 2, Type: "int64"}, TimeUnit: 1}, []byte{1, 2, 3}, 0, ErrTooShort},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got, has, err := c.d.Time(c.payload)
			if err != c.err || (err == nil && (!has || math.Abs(float64(got-c.want)) > 1)) {
				t.Errorf("Time(%q) = %d, %v, %v; want %d, %v", c.payload, got, has, err, c.want, c.err)
			}
		})
	}
	if _, has, err := (&Layout{Format: "text"}).Time([]byte("1,2")); has || err != nil {
		t.Errorf("no sample time in the layout: has %v, err %v", has, err)
	}
	d, p := text(1e9), []byte("7,12345.678901234,0.5")
	if a := testing.AllocsPerRun(100, func() { d.Time(p) }); a != 0 {
		t.Errorf("%v allocations, want 0", a)
	}
}
