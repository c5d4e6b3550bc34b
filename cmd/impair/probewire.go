package main

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
	probeMagic  = "RWPB"
	probeHeader = 36
)

var errNotProbe = errors.New("not a probe datagram")

type probeStamp struct {
	seq                 uint64
	sent, echoed, reply int64
}

func putProbe(b []byte, p probeStamp) {
	copy(b, probeMagic)
	binary.BigEndian.PutUint64(b[4:], p.seq)
	binary.BigEndian.PutUint64(b[12:], uint64(p.sent))
	binary.BigEndian.PutUint64(b[20:], uint64(p.echoed))
	binary.BigEndian.PutUint64(b[28:], uint64(p.reply))
}

func readProbe(b []byte) (probeStamp, error) {
	if len(b) < probeHeader || string(b[:4]) != probeMagic {
		return probeStamp{}, errNotProbe
	}
	return probeStamp{
		seq:    binary.BigEndian.Uint64(b[4:]),
		sent:   int64(binary.BigEndian.Uint64(b[12:])),
		echoed: int64(binary.BigEndian.Uint64(b[20:])),
		reply:  int64(binary.BigEndian.Uint64(b[28:])),
	}, nil
}

// stampEcho writes the echo's receive and send times into a probe.
func stampEcho(b []byte, recv, send int64) {
	binary.BigEndian.PutUint64(b[20:], uint64(recv))
	binary.BigEndian.PutUint64(b[28:], uint64(send))
}
