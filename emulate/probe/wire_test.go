package probe

import "testing"

// TestProbeWire: the probe datagram layout round-trips and rejects what
// is not a probe.
func TestProbeWire(t *testing.T) {
	b := make([]byte, 64)
	Put(b, Stamp{Seq: 7, Sent: 1e18})
	StampEcho(b, 1e18+5, 1e18+9)
	got, err := Read(b)
	if err != nil || got != (Stamp{Seq: 7, Sent: 1e18, Echoed: 1e18 + 5, Reply: 1e18 + 9}) {
		t.Errorf("got %+v, %v", got, err)
	}
	if _, err := Read(b[:HeaderLen-1]); err == nil {
		t.Error("a short datagram read as a probe")
	}
	b[0] = 'X'
	if _, err := Read(b); err == nil {
		t.Error("a datagram without the magic read as a probe")
	}
}
