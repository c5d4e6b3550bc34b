package rig

import (
	"errors"
	"net"
	"net/netip"
	"sync/atomic"
	"time"
)

// errStopped ends a receive loop: the receiver was stopped.
var errStopped = errors.New("receiver stopped")

// errTruncated: a datagram longer than the receive buffer.
var errTruncated = errors.New("datagram too long")

// pollRecv is the portable receiver: reads on the net.UDPConn, waking
// every pollEvery to look at the stop flag.
type pollRecv struct {
	c    *net.UDPConn
	stop atomic.Bool
}

const pollEvery = 50 * time.Millisecond

func (r *pollRecv) recv(buf []byte) (int, netip.AddrPort, error) {
	for {
		if r.stop.Load() {
			return 0, netip.AddrPort{}, errStopped
		}
		_ = r.c.SetReadDeadline(time.Now().Add(pollEvery))
		n, from, err := r.c.ReadFromUDPAddrPort(buf)
		if err == nil {
			return n, from, nil
		}
		var ne net.Error
		if errors.As(err, &ne) && ne.Timeout() {
			continue
		}
		if errors.Is(err, net.ErrClosed) {
			return 0, netip.AddrPort{}, errStopped
		}
		return 0, netip.AddrPort{}, err
	}
}

func (r *pollRecv) halt()  { r.stop.Store(true) }
func (r *pollRecv) close() {}

// receiver reads datagrams for a rig end's receive loop; halt makes recv
// return errStopped within pollEvery.
type receiver interface {
	recv(buf []byte) (n int, from netip.AddrPort, err error)
	halt()
	close()
}
