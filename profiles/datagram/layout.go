package datagram

import "encoding/binary"

// Layout says where a rig's outputs sit in each sensor datagram (loop file
// key decode), for the monitor engine (estimate/engine), which decodes
// the tapped datagrams in monitor run and on the in-process bench (serve,
// soak, demo).
type Layout struct {
	// Format is "text" (fields split by Separator), "binary" (fixed
	// offsets) or "json" (values by JSON pointer); "" when the loop file
	// has no decode section.
	Format string
	// Separator splits a text datagram into fields (default ",").
	Separator string
	// Outputs locates the plant's p outputs, in order.
	Outputs []Field
	// Sequence locates the sample counter; nil when the datagrams carry
	// none.
	Sequence *Field
	// SampleTime locates the sample time t_k a sensor datagram carries;
	// nil when it carries none. TimeUnit is its unit in nanoseconds (1 for
	// ns, 1e9 for s).
	SampleTime *Field
	TimeUnit   float64
}

// TimeUnits are the units a sample time may be given in, in nanoseconds.
var TimeUnits = map[string]float64{"ns": 1, "us": 1e3, "ms": 1e6, "s": 1e9}

// Field is one value in a datagram: a text field by index, or a
// binary value by offset, type and byte order.
type Field struct {
	// Field is the 0-based index of a text field.
	Field int
	// Offset is the byte offset of a binary value.
	Offset int
	// Type is the binary value's type: float32, float64, int16, int32,
	// int64, uint16 or uint32.
	Type string
	// Order is the binary value's byte order ("little" or "big").
	Order string
	// Pointer is a JSON value's pointer (RFC 6901); tokens its reference
	// tokens, set with it by SetPointer.
	Pointer string
	tokens  []string
}

// Size is the width in bytes of a binary field's type (0 for a text
// field or an unknown type).
func (f Field) Size() int {
	switch f.Type {
	case "int16", "uint16":
		return 2
	case "float32", "int32", "uint32":
		return 4
	case "float64", "int64":
		return 8
	}
	return 0
}

// ByteOrder is the binary field's byte order.
func (f Field) ByteOrder() binary.ByteOrder {
	if f.Order == "big" {
		return binary.BigEndian
	}
	return binary.LittleEndian
}

// BinaryTypes are the types a binary field can have.
var BinaryTypes = []string{"float32", "float64", "int16", "int32", "int64", "uint16", "uint32"}
