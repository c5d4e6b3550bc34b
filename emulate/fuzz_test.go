package emulate

import (
	"encoding/binary"
	"net/netip"
	"testing"

	"github.com/prometheus/client_golang/prometheus/testutil"

	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// FuzzDatagramPath feeds arbitrary datagrams, of any size and from any
// source, through the relay's datagram path (classification, draws, pool,
// schedule, release) on fake sockets, synchronously so that runs are
// deterministic. The relay must not panic, and every datagram must end in
// exactly one counted outcome.
//
// The input is a stream of records: a control byte (bit 0: the side; bits
// 1–2: the source — sensor, controller or stranger; bit 7: release what is
// scheduled afterwards), a two-byte big-endian length, then that many
// payload bytes (fewer if the input ends); at most 64 records are used.
func FuzzDatagramPath(f *testing.F) {
	f.Add([]byte{0, 0, 3, 'a', 'b', 'c'})
	f.Add([]byte{1, 0, 1, 'x', 0, 2, 0, 'y', 'y'})
	f.Add(append([]byte{2, 0x10, 0}, make([]byte, 4096)...)) // oversized
	f.Add([]byte{0, 0, 0})                                   // empty datagram
	f.Add([]byte{3, 0xff, 0xff, 1})
	f.Fuzz(fuzzBody)
}

func fuzzBody(t *testing.T, stream []byte) {
	lossy, _ := laws.NewUniform(0, 200e-6)
	p := &profiles.Profile{SensorToController: oneState(0.3, lossy), ControllerToActuator: oneState(0.3, lossy)}
	listen, up, tap := newFakeConn("127.0.0.1:4000"), newFakeConn("127.0.0.1:4001"), newFakeConn("127.0.0.1:4002")
	r, err := New(Config{
		Profile: p, Listen: listen.addr, Controller: controllerAddr, Tap: tapAddr, Sensor: sensorAddr,
		MaxDatagram: 512, MaxInFlight: 4, SeedSet: true, portableTimers: true,
		conns: &testConns{listen: listen, ctlSide: up, tap: tap},
	})
	if err != nil {
		t.Fatal(err)
	}
	sides := []*side{
		{in: listen, dir: r.sc, from: sensorAddr, sensor: true},
		{in: up, dir: r.ca, from: controllerAddr},
	}
	rx := r.newRxBatch()
	var batch [batchSize]*packet
	var out [batchSize]message
	pushed := [2]int{}
	for records := 0; len(stream) >= 3 && records < 64; records++ {
		which := stream[0]
		n := int(binary.BigEndian.Uint16(stream[1:3]))
		stream = stream[3:]
		n = min(n, len(stream))
		payload := stream[:n]
		stream = stream[n:]
		from := []netip.AddrPort{sensorAddr, controllerAddr, strangerAddr}[int(which>>1)%3]
		s := sides[which&1]
		m := &rx.ms[0]
		m.n = copy(m.buf, payload)
		m.trunc = len(payload) > len(m.buf)
		m.addr = from
		r.handleBatch(s, rx, 1)
		pushed[which&1]++
		if which&0x80 != 0 { // now and then, release everything scheduled
			releaseAll(r.sc, batch[:], out[:])
			releaseAll(r.ca, batch[:], out[:])
		}
	}
	for i, d := range []*direction{r.sc, r.ca} {
		d.mu.Lock()
		d.abortLocked()
		d.mu.Unlock()
		total := 0
		for _, o := range outcomeIndex {
			total += int(testutil.ToFloat64(r.m.Datagrams.WithLabelValues(d.name, o)))
		}
		if total != pushed[i] {
			t.Errorf("%s: %d outcomes counted for %d datagrams", d.name, total, pushed[i])
		}
	}
	r.closeSockets()
}
