package probe

import (
	"encoding/binary"
	"errors"
)

// A probe datagram, in our own layout (big-endian):
//
//	offset  size  field
//	0       4     magic "RWPB"
//	4       8     sequence number, from 0
//	12      8     prober's send time, Unix ns (wall clock)
//	20      8     echo's receive time, Unix ns (0 until the echo stamps it)
//	28      8     echo's send time, Unix ns (likewise)
//	36      …     padding to the probe size, zeros
//
// The wall-clock stamps give one-way delays only when the two clocks are
// synchronised; round trips use the prober's monotonic clock alone.
const (
	Magic     = "RWPB"
	HeaderLen = 36 // the smallest probe, bytes
)

// ErrNotProbe is Read's error for a datagram that is not a probe.
var ErrNotProbe = errors.New("not a probe datagram")

// Stamp is what a probe datagram carries.
type Stamp struct {
	Seq                 uint64
	Sent, Echoed, Reply int64 // Unix ns: prober's send, echo's receive, echo's send
}

// Put writes p into b's first HeaderLen bytes.
func Put(b []byte, p Stamp) {
	copy(b, Magic)
	binary.BigEndian.PutUint64(b[4:], p.Seq)
	binary.BigEndian.PutUint64(b[12:], uint64(p.Sent))
	binary.BigEndian.PutUint64(b[20:], uint64(p.Echoed))
	binary.BigEndian.PutUint64(b[28:], uint64(p.Reply))
}

// Read reads a probe datagram; ErrNotProbe when b is not one.
func Read(b []byte) (Stamp, error) {
	if len(b) < HeaderLen || string(b[:4]) != Magic {
		return Stamp{}, ErrNotProbe
	}
	return Stamp{
		Seq:    binary.BigEndian.Uint64(b[4:]),
		Sent:   int64(binary.BigEndian.Uint64(b[12:])),
		Echoed: int64(binary.BigEndian.Uint64(b[20:])),
		Reply:  int64(binary.BigEndian.Uint64(b[28:])),
	}, nil
}

// StampEcho writes the echo's receive and send times into a probe.
func StampEcho(b []byte, recv, send int64) {
	binary.BigEndian.PutUint64(b[20:], uint64(recv))
	binary.BigEndian.PutUint64(b[28:], uint64(send))
}
