package loadkit

import (
	"encoding/binary"
	"errors"
)

// HeaderLen is the number of bytes every load datagram starts with; a
// datagram is at least this long.
const HeaderLen = 24

// magic marks a load datagram: "RWLD" read as a little-endian uint32.
const magic uint32 = 0x444c5752

// Header is what the generator writes at the start of each datagram:
//
//	offset  size  field
//	0       4     magic "RWLD"
//	4       4     run, a number the orchestrator draws per trial
//	8       8     seq, 0, 1, 2, … in send order
//	16      8     sent, CLOCK_MONOTONIC nanoseconds just before the send
//
// all little-endian. The rest of the datagram is filler.
type Header struct {
	Run    uint32
	Seq    uint64
	SentNs int64
}

// Errors returned by ParseHeader.
var (
	ErrShort    = errors.New("shorter than the load header")
	ErrNotLoads = errors.New("no load datagram magic")
)

// Put writes h into b[:HeaderLen]. It panics if b is shorter, as a slice
// index would.
func (h Header) Put(b []byte) {
	_ = b[HeaderLen-1]
	binary.LittleEndian.PutUint32(b[0:], magic)
	binary.LittleEndian.PutUint32(b[4:], h.Run)
	binary.LittleEndian.PutUint64(b[8:], h.Seq)
	binary.LittleEndian.PutUint64(b[16:], uint64(h.SentNs))
}

// ParseHeader reads the header at the start of b.
func ParseHeader(b []byte) (Header, error) {
	if len(b) < HeaderLen {
		return Header{}, ErrShort
	}
	if binary.LittleEndian.Uint32(b[0:]) != magic {
		return Header{}, ErrNotLoads
	}
	return Header{
		Run:    binary.LittleEndian.Uint32(b[4:]),
		Seq:    binary.LittleEndian.Uint64(b[8:]),
		SentNs: int64(binary.LittleEndian.Uint64(b[16:])),
	}, nil
}
