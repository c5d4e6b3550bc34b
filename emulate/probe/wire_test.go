package probe

import (
	"fmt"
	"testing"
)

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

// TestProgressSeconds: the progress line's time is the %5.1f seconds it
// always was ("  0.0s", " 12.3s", "1234.5s").
func TestProgressSeconds(t *testing.T) {
	for _, c := range []struct {
		in   float64
		want string
	}{{0, "  0.0s"}, {1.04, "  1.0s"}, {12.34, " 12.3s"}, {999.96, "1000.0s"}, {1234.5, "1234.5s"}} {
		if got := fmt.Sprintf("%6s", progressSeconds.Format(c.in)); got != c.want {
			t.Errorf("%g: %q, want %q", c.in, got, c.want)
		}
		if old := fmt.Sprintf("%5.1fs", c.in); old != c.want {
			t.Errorf("%g: the former format gives %q, the test wants %q", c.in, old, c.want)
		}
	}
}
