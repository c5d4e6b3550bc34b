package emulate

import "net/netip"

// packet is a datagram held by the relay until its release time. Packets
// come from a direction's pool and go back to it once sent; buf keeps its
// capacity across uses.
type packet struct {
	buf     []byte
	n       int
	dst     netip.AddrPort
	arrival int64 // ns on the relay clock
	due     int64 // ns on the relay clock
	delay   float64
	state   string // channel state at arrival
	seq     uint64 // arrival number in its direction
	pair    pairNote
}

// schedule is a min-heap of pending packets keyed on due time, after the
// container/heap priority-queue example, written out for *packet so that
// pushes and pops neither box nor allocate. Packets due at the same
// instant leave in arrival order (a batch read at once shares one arrival
// time, so a constant delay gives equal due times): a link that does not
// reorder must not reorder them.
type schedule struct {
	h []*packet
}

// before says whether a leaves before b: earlier due time, then earlier
// arrival.
func before(a, b *packet) bool {
	return a.due < b.due || (a.due == b.due && a.seq < b.seq)
}

func (s *schedule) len() int      { return len(s.h) }
func (s *schedule) peek() *packet { return s.h[0] }

func (s *schedule) push(p *packet) {
	s.h = append(s.h, p) // capacity is reserved up to the pool size
	i := len(s.h) - 1
	for i > 0 {
		parent := (i - 1) / 2
		if !before(s.h[i], s.h[parent]) {
			break
		}
		s.h[parent], s.h[i] = s.h[i], s.h[parent]
		i = parent
	}
}

func (s *schedule) pop() *packet {
	n := len(s.h) - 1
	top := s.h[0]
	s.h[0] = s.h[n]
	s.h[n] = nil
	s.h = s.h[:n]
	i := 0
	for {
		l := 2*i + 1
		if l >= n {
			break
		}
		m := l
		if r := l + 1; r < n && before(s.h[r], s.h[l]) {
			m = r
		}
		if !before(s.h[m], s.h[i]) {
			break
		}
		s.h[i], s.h[m] = s.h[m], s.h[i]
		i = m
	}
	return top
}

// pool is a bounded free list of packets; its size is the direction's
// in-flight bound. Guarded by the direction's lock.
type pool struct {
	free []*packet
	size int
}

func newPool(size, bufLen int) *pool {
	p := &pool{free: make([]*packet, size), size: size}
	backing := make([]byte, size*bufLen)
	for i := range p.free {
		p.free[i] = &packet{buf: backing[i*bufLen : (i+1)*bufLen : (i+1)*bufLen]}
	}
	return p
}

// get returns a free packet, or nil when all are in flight.
func (p *pool) get() *packet {
	n := len(p.free)
	if n == 0 {
		return nil
	}
	pk := p.free[n-1]
	p.free = p.free[:n-1]
	return pk
}

func (p *pool) put(pk *packet) { p.free = append(p.free, pk) }

// inUse is how many packets are out of the pool.
func (p *pool) inUse() int { return p.size - len(p.free) }
