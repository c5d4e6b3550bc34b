package emulate

import (
	"net/netip"
	"time"
)

// message is one datagram of a batch. For reads, buf is the buffer to fill
// (its full length is offered to the kernel) and n, addr and trunc are set;
// for writes, buf[:n] is sent to addr.
type message struct {
	buf   []byte
	n     int
	addr  netip.AddrPort
	trunc bool // the datagram was longer than buf and was cut
}

// batchConn is a UDP socket read and written in batches. On Linux one
// system call moves a whole batch (recvmmsg/sendmmsg); elsewhere a batch is
// one message. Implementations do not allocate per call.
type batchConn interface {
	// readBatch blocks until at least one datagram is there, fills up to
	// len(ms) messages and returns how many.
	readBatch(ms []message) (int, error)
	// writeBatch sends ms in order. It returns how many were handed to
	// the kernel; on an error, ms[sent] is the message that failed and the
	// caller decides whether to go on with ms[sent+1:].
	writeBatch(ms []message) (sent int, err error)
	localAddr() netip.AddrPort
	setReadDeadline(t time.Time) error
	close() error
}

// batchSize is how many datagrams one system call moves at most.
const batchSize = 64
