package emulate

import (
	"net/netip"
	"os"
	"sync"
	"time"
)

// fakeConn is an in-memory batchConn, after wireguard-go's conn/bindtest:
// tests push datagrams into it and read what the relay sent, with the
// (possibly fake, under testing/synctest) time of sending.
type fakeConn struct {
	addr netip.AddrPort
	in   chan fakeDatagram

	mu       sync.Mutex
	out      []fakeDatagram
	deadline chan struct{} // closed when the read deadline has passed
	closed   bool
	failTo   netip.AddrPort // writes to this address fail
}

type fakeDatagram struct {
	data []byte
	addr netip.AddrPort // source when pushed, destination when sent
	at   time.Time
}

func newFakeConn(addr string) *fakeConn {
	return &fakeConn{addr: netip.MustParseAddrPort(addr), in: make(chan fakeDatagram, 1<<16), deadline: make(chan struct{})}
}

func (c *fakeConn) push(from netip.AddrPort, data []byte) {
	c.in <- fakeDatagram{data: data, addr: from, at: time.Now()}
}

func (c *fakeConn) readBatch(ms []message) (int, error) {
	var d fakeDatagram
	select {
	case d = <-c.in:
	case <-c.deadline:
		return 0, os.ErrDeadlineExceeded
	}
	n := 0
	for {
		m := &ms[n]
		m.n = copy(m.buf, d.data)
		m.trunc = len(d.data) > len(m.buf)
		m.addr = d.addr
		n++
		if n == len(ms) {
			return n, nil
		}
		select {
		case d = <-c.in:
		default:
			return n, nil
		}
	}
}

func (c *fakeConn) writeBatch(ms []message) (int, error) {
	c.mu.Lock()
	defer c.mu.Unlock()
	for i := range ms {
		if ms[i].addr == c.failTo || !ms[i].addr.IsValid() {
			return i, os.ErrInvalid
		}
		c.out = append(c.out, fakeDatagram{data: append([]byte(nil), ms[i].buf[:ms[i].n]...), addr: ms[i].addr, at: time.Now()})
	}
	return len(ms), nil
}

func (c *fakeConn) sent() []fakeDatagram {
	c.mu.Lock()
	defer c.mu.Unlock()
	return append([]fakeDatagram(nil), c.out...)
}

func (c *fakeConn) localAddr() netip.AddrPort { return c.addr }

func (c *fakeConn) setReadDeadline(t time.Time) error {
	c.mu.Lock()
	defer c.mu.Unlock()
	if !t.IsZero() && !t.After(time.Now()) {
		select {
		case <-c.deadline:
		default:
			close(c.deadline)
		}
	}
	return nil
}

func (c *fakeConn) close() error {
	c.mu.Lock()
	defer c.mu.Unlock()
	c.closed = true
	return nil
}
