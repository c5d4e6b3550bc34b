//go:build linux

package emulate

import (
	"encoding/binary"
	"errors"
	"fmt"
	"net"
	"net/netip"
	"sync"
	"syscall"
	"time"
	"unsafe"

	"golang.org/x/sys/unix"
)

// mmsgConn moves datagrams with recvmmsg(2) and sendmmsg(2) on the file
// descriptor of a net.UDPConn, through its syscall.RawConn so that the Go
// poller still does the waiting and deadlines still work. The message
// headers, I/O vectors and socket addresses live in arrays owned by the
// connection; a call fills them in place, so nothing is allocated.
//
// A connection has one reader at a time (the relay gives each socket one
// receive goroutine); writers may be several (a receive goroutine sending
// zero-delay datagrams and a release goroutine), and take wmu.
type mmsgConn struct {
	uc     *net.UDPConn
	rc     syscall.RawConn
	family int // AF_INET or AF_INET6: how to spell destinations

	r struct { // reader side
		hdrs  [batchSize]unix.Mmsghdr
		iovs  [batchSize]unix.Iovec
		names [batchSize]unix.RawSockaddrInet6
		n     int
		want  int
		err   error
		fn    func(fd uintptr) bool
	}
	wmu sync.Mutex
	w   struct { // writer side; guarded by wmu
		hdrs  [batchSize]unix.Mmsghdr
		iovs  [batchSize]unix.Iovec
		names [batchSize]unix.RawSockaddrInet6
		n     int
		want  int
		err   error
		fn    func(fd uintptr) bool
	}
}

func newBatchConn(uc *net.UDPConn) (batchConn, error) {
	rc, err := uc.SyscallConn()
	if err != nil {
		return nil, fmt.Errorf("raw socket: %w", err)
	}
	c := &mmsgConn{uc: uc, rc: rc}
	var serr error
	if err := rc.Control(func(fd uintptr) {
		var sa unix.Sockaddr
		sa, serr = unix.Getsockname(int(fd))
		if serr == nil {
			switch sa.(type) {
			case *unix.SockaddrInet4:
				c.family = unix.AF_INET
			default:
				c.family = unix.AF_INET6
			}
		}
	}); err != nil {
		return nil, fmt.Errorf("raw socket: %w", err)
	}
	if serr != nil {
		return nil, fmt.Errorf("getsockname: %w", serr)
	}
	for i := range batchSize {
		c.r.hdrs[i].Hdr.Iov = &c.r.iovs[i]
		c.r.hdrs[i].Hdr.SetIovlen(1)
		c.r.hdrs[i].Hdr.Name = (*byte)(unsafe.Pointer(&c.r.names[i]))
		c.w.hdrs[i].Hdr.Iov = &c.w.iovs[i]
		c.w.hdrs[i].Hdr.SetIovlen(1)
		c.w.hdrs[i].Hdr.Name = (*byte)(unsafe.Pointer(&c.w.names[i]))
	}
	c.r.fn = c.recvmmsg
	c.w.fn = c.sendmmsg
	return c, nil
}

// mmsg makes one recvmmsg or sendmmsg call without blocking. It reports
// false when the socket is not ready (the poller is to wait), else the
// count moved or the error.
//
// The call is a raw system call: with MSG_DONTWAIT it never blocks, so the
// scheduler need not know of it. Through syscall.Syscall6 every call
// entered and left the scheduler's syscall state, and a sendmmsg of a full
// batch on loopback (tens of µs: the kernel delivers each datagram in the
// sender's context) outlasted the runtime monitor's 20 µs tick: the
// monitor kept waking every 20 µs, took the goroutine's P away during the
// call and made it queue for one afterwards. At 64 B and 150 k/s that was
// a third of the relay's CPU (a fifth in the monitor thread alone, perf
// record) and the relay reached 0.75× the batched forwarder's rate; with
// raw calls its receive goroutine spends 99 % in the two calls and it
// matches the batched forwarder (1.00× at 64 B, both at the load
// generator's own ceiling; 0.91× at 1200 B: DEVELOPERS.md, "Load
// figures").
func mmsg(trap, fd uintptr, hdrs *unix.Mmsghdr, want int, n *int, err *error) bool {
	r, _, errno := unix.RawSyscall6(trap, fd, uintptr(unsafe.Pointer(hdrs)), uintptr(want), unix.MSG_DONTWAIT, 0, 0)
	switch errno {
	case unix.EAGAIN, unix.EINTR:
		return false
	case 0:
		*n, *err = int(r), nil
	default:
		*n, *err = 0, errno
	}
	return true
}

// recvmmsg and sendmmsg are the RawConn callbacks.
func (c *mmsgConn) recvmmsg(fd uintptr) bool {
	return mmsg(unix.SYS_RECVMMSG, fd, &c.r.hdrs[0], c.r.want, &c.r.n, &c.r.err)
}

func (c *mmsgConn) sendmmsg(fd uintptr) bool {
	return mmsg(unix.SYS_SENDMMSG, fd, &c.w.hdrs[0], c.w.want, &c.w.n, &c.w.err)
}

func (c *mmsgConn) readBatch(ms []message) (int, error) {
	want := min(len(ms), batchSize)
	for i := range want {
		b := ms[i].buf
		c.r.iovs[i].Base = unsafe.SliceData(b)
		c.r.iovs[i].SetLen(len(b))
		c.r.hdrs[i].Hdr.Namelen = unix.SizeofSockaddrInet6
		c.r.hdrs[i].Hdr.Flags = 0
		c.r.hdrs[i].Len = 0
	}
	c.r.want = want
	if err := c.rc.Read(c.r.fn); err != nil {
		return 0, err
	}
	if c.r.err != nil {
		return 0, c.r.err
	}
	for i := range c.r.n {
		h := &c.r.hdrs[i]
		ms[i].n = int(h.Len)
		ms[i].trunc = h.Hdr.Flags&unix.MSG_TRUNC != 0
		ms[i].addr = sockaddrToAddrPort(&c.r.names[i])
	}
	return c.r.n, nil
}

func (c *mmsgConn) writeBatch(ms []message) (int, error) {
	c.wmu.Lock()
	defer c.wmu.Unlock()
	sent := 0
	for sent < len(ms) {
		want := min(len(ms)-sent, batchSize)
		for i := range want {
			m := &ms[sent+i]
			c.w.iovs[i].Base = unsafe.SliceData(m.buf)
			c.w.iovs[i].SetLen(m.n)
			c.w.hdrs[i].Hdr.Namelen = addrPortToSockaddr(m.addr, c.family, &c.w.names[i])
			c.w.hdrs[i].Hdr.Flags = 0
		}
		c.w.want = want
		if err := c.rc.Write(c.w.fn); err != nil {
			return sent, err
		}
		if c.w.err != nil {
			return sent, c.w.err
		}
		if c.w.n == 0 {
			return sent, errors.New("sendmmsg sent nothing")
		}
		sent += c.w.n
	}
	return sent, nil
}

func (c *mmsgConn) localAddr() netip.AddrPort {
	return c.uc.LocalAddr().(*net.UDPAddr).AddrPort()
}

func (c *mmsgConn) setReadDeadline(t time.Time) error { return c.uc.SetReadDeadline(t) }
func (c *mmsgConn) close() error                      { return c.uc.Close() }

// sockaddrToAddrPort reads the address the kernel wrote, IPv4 or IPv6
// (v4-mapped IPv6 addresses are unmapped).
func sockaddrToAddrPort(sa *unix.RawSockaddrInet6) netip.AddrPort {
	port := binary.BigEndian.Uint16((*[2]byte)(unsafe.Pointer(&sa.Port))[:])
	switch sa.Family {
	case unix.AF_INET:
		sa4 := (*unix.RawSockaddrInet4)(unsafe.Pointer(sa))
		return netip.AddrPortFrom(netip.AddrFrom4(sa4.Addr), port)
	case unix.AF_INET6:
		return netip.AddrPortFrom(netip.AddrFrom16(sa.Addr).Unmap(), port)
	}
	return netip.AddrPort{}
}

// addrPortToSockaddr spells ap for a socket of the given family and
// returns the address length. An address the socket cannot reach (none, or
// of the other family; the relay refuses both before sending) is spelled
// with port 0, which the kernel refuses: a send error, never a panic.
func addrPortToSockaddr(ap netip.AddrPort, family int, sa *unix.RawSockaddrInet6) uint32 {
	var port [2]byte
	a := ap.Addr().Unmap()
	reachable := a.IsValid() && (a.Is4() == (family == unix.AF_INET) || family == unix.AF_INET6)
	if reachable {
		binary.BigEndian.PutUint16(port[:], ap.Port())
	}
	if family == unix.AF_INET {
		var a4 [4]byte
		if reachable {
			a4 = a.As4()
		}
		sa4 := (*unix.RawSockaddrInet4)(unsafe.Pointer(sa))
		*sa4 = unix.RawSockaddrInet4{Family: unix.AF_INET, Addr: a4}
		*(*[2]byte)(unsafe.Pointer(&sa4.Port)) = port
		return unix.SizeofSockaddrInet4
	}
	var a16 [16]byte
	if reachable {
		a16 = ap.Addr().As16()
	}
	*sa = unix.RawSockaddrInet6{Family: unix.AF_INET6, Addr: a16}
	*(*[2]byte)(unsafe.Pointer(&sa.Port)) = port
	return unix.SizeofSockaddrInet6
}
