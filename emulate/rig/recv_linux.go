//go:build linux

package rig

import (
	"fmt"
	"net"
	"net/netip"
	"sync/atomic"

	"golang.org/x/sys/unix"
)

// blockingRecv reads the socket with a plain blocking recvfrom on a
// duplicate of its descriptor, from a goroutine locked to its OS thread:
// the datagram wakes that thread straight from the kernel, not through the
// Go scheduler's poller, which on a busy two-core machine adds tens to
// hundreds of microseconds per hop — latency that would add to every τ of
// the loop (estimate/model.md §10). SO_RCVTIMEO wakes the read every pollEvery to
// look at the stop flag. Writes stay on the net.UDPConn (the descriptor
// is shared, so they block the writing thread for the few microseconds a
// UDP send takes, which is what a rig's socket does anyway).
type blockingRecv struct {
	fd   int
	stop atomic.Bool
}

// newReceiver returns the blocking receiver for c, or the portable one
// when the descriptor cannot be set up.
func newReceiver(c *net.UDPConn) receiver {
	r, err := newBlockingRecv(c)
	if err != nil {
		return &pollRecv{c: c}
	}
	return r
}

func newBlockingRecv(c *net.UDPConn) (*blockingRecv, error) {
	rc, err := c.SyscallConn()
	if err != nil {
		return nil, err
	}
	fd := -1
	var derr error
	if err := rc.Control(func(s uintptr) { fd, derr = unix.Dup(int(s)) }); err != nil {
		return nil, err
	}
	if derr != nil {
		return nil, fmt.Errorf("dup: %w", derr)
	}
	tv := unix.NsecToTimeval(int64(pollEvery))
	if err := unix.SetsockoptTimeval(fd, unix.SOL_SOCKET, unix.SO_RCVTIMEO, &tv); err != nil {
		unix.Close(fd)
		return nil, err
	}
	if err := unix.SetNonblock(fd, false); err != nil {
		unix.Close(fd)
		return nil, err
	}
	return &blockingRecv{fd: fd}, nil
}

func (r *blockingRecv) recv(buf []byte) (int, netip.AddrPort, error) {
	for {
		if r.stop.Load() {
			return 0, netip.AddrPort{}, errStopped
		}
		n, from, err := unix.Recvfrom(r.fd, buf, unix.MSG_TRUNC)
		switch err {
		case nil:
		case unix.EAGAIN, unix.EINTR:
			continue
		default:
			return 0, netip.AddrPort{}, err
		}
		if n > len(buf) {
			n = len(buf) + 1 // truncated: longer than any datagram we take
		}
		switch a := from.(type) {
		case *unix.SockaddrInet4:
			return n, netip.AddrPortFrom(netip.AddrFrom4(a.Addr), uint16(a.Port)), nil
		case *unix.SockaddrInet6:
			return n, netip.AddrPortFrom(netip.AddrFrom16(a.Addr), uint16(a.Port)), nil
		}
		return n, netip.AddrPort{}, nil
	}
}

func (r *blockingRecv) halt()  { r.stop.Store(true) }
func (r *blockingRecv) close() { unix.Close(r.fd) }
