package trip

import (
	"log/slog"
	"net/netip"
	"testing"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/testutil"
)

// fakeTripper is a latched target that records its first trip.
type fakeTripper struct {
	calls  int
	action Action
	reason string
}

func (f *fakeTripper) Trip(a Action, reason string) bool {
	f.calls++
	if f.calls > 1 {
		return false
	}
	f.action, f.reason = a, reason
	return true
}

func TestTripListenerSources(t *testing.T) {
	loop := &Listener{}
	for s, want := range map[string]bool{"127.0.0.1": true, "127.3.0.9": true, "::1": true, "::ffff:127.0.0.1": true, "10.0.0.1": false, "fe80::1": false} {
		if got := loop.accepts(netip.MustParseAddr(s)); got != want {
			t.Errorf("default source %s: %v, want %v", s, got, want)
		}
	}
	only := &Listener{from: netip.MustParseAddr("10.0.0.7")}
	for s, want := range map[string]bool{"10.0.0.7": true, "::ffff:10.0.0.7": true, "127.0.0.1": false, "10.0.0.8": false} {
		if got := only.accepts(netip.MustParseAddr(s)); got != want {
			t.Errorf("--trip-from 10.0.0.7, source %s: %v, want %v", s, got, want)
		}
	}
}

func TestTripListenerHandle(t *testing.T) {
	reg := prometheus.NewRegistry()
	count := mustRequestsMetric(t, reg)
	ft := &fakeTripper{}
	tl := &Listener{target: ft, action: StopCommands, count: count, log: discardLogger()}
	src := netip.MustParseAddrPort("127.0.0.1:5000")
	tl.handle([]byte("rigwire-trip 1"), src)
	tl.handle(make([]byte, MaxLen+1), src)
	tl.handle(Encode("x"), netip.MustParseAddrPort("192.0.2.1:5000"))
	if ft.calls != 0 {
		t.Fatalf("tripped by an invalid request")
	}
	tl.handle(Encode("max_second_moment"), src)
	tl.handle(Encode("max_second_moment"), src)
	if ft.calls != 2 || ft.action != StopCommands || ft.reason != "max_second_moment" {
		t.Errorf("trip calls %+v", ft)
	}
	for r, want := range map[string]float64{resultMalformed: 2, resultStranger: 1, resultAccepted: 1, resultRepeated: 1} {
		if got := testutil.ToFloat64(count.WithLabelValues(r)); got != want {
			t.Errorf("%s: %v, want %v", r, got, want)
		}
	}
}

// FuzzTripHandle: any datagram from any source is counted exactly once and
// never panics.
func FuzzTripHandle(f *testing.F) {
	f.Add([]byte("rigwire-trip 1 max_ratio"), true)
	f.Add([]byte{0, 1, 2}, false)
	f.Fuzz(func(t *testing.T, p []byte, loopback bool) {
		reg := prometheus.NewRegistry()
		count := mustRequestsMetric(t, reg)
		tl := &Listener{target: &fakeTripper{}, count: count, log: discardLogger()}
		src := netip.MustParseAddrPort("192.0.2.1:9")
		if loopback {
			src = netip.MustParseAddrPort("127.0.0.1:9")
		}
		tl.handle(p, src)
		total := 0.0
		for _, r := range []string{resultAccepted, resultRepeated, resultMalformed, resultStranger} {
			total += testutil.ToFloat64(count.WithLabelValues(r))
		}
		if total != 1 {
			t.Fatalf("counted %v times", total)
		}
	})
}

// mustRequestsMetric registers the listener's metric on reg.
func mustRequestsMetric(t testing.TB, reg prometheus.Registerer) *prometheus.CounterVec {
	t.Helper()
	c, err := newRequestsMetric(reg)
	if err != nil {
		t.Fatal(err)
	}
	return c
}

func discardLogger() *slog.Logger { return slog.New(slog.DiscardHandler) }
