package emulate

import (
	"errors"
	"net"
	"net/netip"
	"os"
	"time"
)

// side is one socket's receive loop: which direction its datagrams take and
// which sources count as the rig's.
type side struct {
	in     batchConn
	dir    *direction
	from   netip.AddrPort // command side: the only source accepted (the controller)
	sensor bool           // sensor side: the source lock, the tap, send to the controller
}

// rxBatch is a receive loop's read buffers and per-batch scratch, made
// once per loop.
type rxBatch struct {
	ms   []message
	acc  []message
	taps []message
	imm  []message
	meta []immediate
}

func (r *Relay) newRxBatch() *rxBatch {
	bufLen := r.cfg.MaxDatagram + 1
	backing := make([]byte, batchSize*bufLen)
	b := &rxBatch{
		ms:   make([]message, batchSize),
		acc:  make([]message, 0, batchSize),
		taps: make([]message, 0, batchSize),
		imm:  make([]message, 0, batchSize),
		meta: make([]immediate, 0, batchSize),
	}
	for i := range b.ms {
		b.ms[i].buf = backing[i*bufLen : (i+1)*bufLen : (i+1)*bufLen]
	}
	return b
}

// receiveLoop reads batches from s.in until the relay closes.
func (r *Relay) receiveLoop(s *side) {
	b := r.newRxBatch()
	for {
		n, err := s.in.readBatch(b.ms)
		if err != nil {
			if r.closing.Load() || errors.Is(err, net.ErrClosed) {
				return
			}
			if errors.Is(err, os.ErrDeadlineExceeded) {
				continue
			}
			r.log.Warn("read failed", "direction", s.dir.name, "err", err)
			time.Sleep(10 * time.Millisecond)
			continue
		}
		r.handleBatch(s, b, n)
	}
}

// handleBatch settles the n datagrams just read into b.ms: each is
// rejected (oversized, stranger, no actuator known yet) or handed to the
// direction; those with no delay are sent at once, from the read buffers,
// and on the sensor side the tap gets its copies.
func (r *Relay) handleBatch(s *side, b *rxBatch, n int) {
	d := s.dir
	now := d.now()
	b.acc = b.acc[:0]
	for i := range n {
		m := &b.ms[i]
		if m.trunc || m.n > r.cfg.MaxDatagram {
			d.m.outcome[oOversized].Inc()
			d.record(rec{arrival: now, outcome: oOversized})
			continue
		}
		if !r.fromRig(s, m.addr, now) {
			d.m.outcome[oStranger].Inc()
			d.record(rec{arrival: now, outcome: oStranger})
			continue
		}
		b.acc = append(b.acc, *m)
	}
	if len(b.acc) == 0 {
		return
	}
	dst := r.cfg.Controller
	if !s.sensor {
		dst = r.cfg.Actuator
		if !dst.IsValid() {
			r.srcMu.Lock()
			dst = r.sensorSrc
			r.srcMu.Unlock()
		}
		if !dst.IsValid() {
			// A controller that kept sending across a relay restart: no
			// sensor datagram yet says where the actuator is.
			for range b.acc {
				d.m.outcome[oNoActuator].Inc()
				d.record(rec{arrival: now, outcome: oNoActuator})
			}
			return
		}
	}
	b.imm, b.meta = d.admit(b.acc, dst, now, b.imm[:0], b.meta[:0])
	d.sendImmediate(b.imm, b.meta, now)
	if s.sensor {
		b.taps = r.sendTaps(b.acc, b.taps[:0])
	}
}

// fromRig reports whether a datagram from src read at now on side s comes
// from the rig: the controller on the command side, the locked sensor
// source on the sensor side (which it may lock onto first).
func (r *Relay) fromRig(s *side, src netip.AddrPort, now int64) bool {
	if !s.sensor {
		return src == s.from
	}
	ok, c := r.lock.admit(src, now)
	switch {
	case !ok:
		r.strangerSeen(src, now)
	case c.why != "":
		r.lockChanged(src, c)
	}
	return ok
}

// sendTaps hands copies of the accepted sensor datagrams to the tap.
func (r *Relay) sendTaps(acc, taps []message) []message {
	if r.cfg.TapFunc != nil {
		t := time.Now()
		for i := range acc {
			r.cfg.TapFunc(acc[i].buf[:acc[i].n], t)
		}
	}
	if r.tap == nil {
		return taps
	}
	for i := range acc {
		taps = append(taps, message{buf: acc[i].buf, n: acc[i].n, addr: r.cfg.Tap})
	}
	base := 0
	for base < len(taps) {
		sent, err := r.tap.writeBatch(taps[base:])
		r.tapSent.Add(float64(sent))
		base += sent
		if err != nil && base < len(taps) {
			r.tapFailed.Inc()
			base++
		}
	}
	return taps
}
