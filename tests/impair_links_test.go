package tests

import (
	"fmt"
	"net"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"
)

// tripFiles writes, in dir, the files the trip-wire tests run on: a
// profile that drops every sensor datagram (loss 1) and the monitor's
// check loop with a trip at |e| > 0.5, which its samples with y = 0
// against the setpoint 1.2 cross at once (tripSamples).
func tripFiles(t *testing.T, dir string) (profile, loop string) {
	t.Helper()
	profile = filepath.Join(dir, "block.yaml")
	if err := os.WriteFile(profile, []byte("name: block\nsensor_to_controller: {loss: 1}\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	loopSrc, err := os.ReadFile(monitorLoop)
	if err != nil {
		t.Fatal(err)
	}
	loop = filepath.Join(dir, "loop.yaml")
	if err := os.WriteFile(loop, append(loopSrc, []byte("trip: {max_abs_error: 0.5}\n")...), 0o644); err != nil {
		t.Fatal(err)
	}
	return profile, loop
}

// tripSamples sends samples from … from+n−1 of the check loop with y = 0
// (|e| = 1.2 > 0.5: each one trips) from c to addr.
func tripSamples(t *testing.T, c *net.UDPConn, addr *net.UDPAddr, from, n int) {
	t.Helper()
	for k := from; k < from+n; k++ {
		if _, err := c.WriteToUDP([]byte(fmt.Sprintf("%d,%.3f,0", k, float64(k)*0.02)), addr); err != nil {
			t.Fatal(err)
		}
	}
}

// arrivals reads datagrams from c until want have come (0: no bound) or
// none came for quiet, and returns how many came.
func arrivals(c *net.UDPConn, want int, quiet time.Duration) int {
	buf := make([]byte, 256)
	n := 0
	for want == 0 || n < want {
		c.SetReadDeadline(time.Now().Add(quiet))
		if _, _, err := c.ReadFromUDP(buf); err != nil {
			break
		}
		n++
	}
	return n
}

// The monitor's safety trip reaches the relay over the trip wire: `monitor
// run --trip-to` sends "rigwire-trip 1 abs_error" (three copies) to
// `impair run --trip-listen`; the relay, which dropped every sensor
// datagram (loss 1), forwards them clean from then on, counts one request
// accepted and two repeated, and the monitor exits with status 8.
func TestMonitorTripsRelay(t *testing.T) {
	impair, monitor := buildCmd(t, "impair"), buildCmd(t, "monitor")
	dir := t.TempDir()
	block, loop := tripFiles(t, dir)
	ctl := udpLoopback(t)
	relayListen, trip, relayMetrics := freePort(t, "udp"), freePort(t, "udp"), freePort(t, "tcp")
	relay := start(t, impair, "run", "--profile", block, "--listen", relayListen, "--controller", ctl.LocalAddr().String(),
		"--metrics", relayMetrics, "--trip-listen", trip, "--on-trip", "clean")
	relayURL := "http://" + relayMetrics + "/metrics"
	waitHTTP(t, relayURL, relay)

	monListen, monMetrics := freePort(t, "udp"), freePort(t, "tcp")
	summary := filepath.Join(dir, "summary.json")
	mon := start(t, monitor, "run", "--loop", loop, "--listen", monListen, "--metrics", monMetrics,
		"--summary", summary, "--progress", "0", "--no-margin", "--trip-to", trip)
	waitHTTP(t, "http://"+monMetrics+"/metrics", mon)

	sensor := udpLoopback(t)
	relayAddr, _ := net.ResolveUDPAddr("udp4", relayListen)
	monAddr, _ := net.ResolveUDPAddr("udp4", monListen)
	sendRelay := func(n int) {
		for i := range n {
			if _, err := sensor.WriteToUDP([]byte(fmt.Sprintf("x%d", i)), relayAddr); err != nil {
				t.Fatal(err)
			}
		}
	}
	sendRelay(10)
	if n := arrivals(ctl, 0, 300*time.Millisecond); n != 0 {
		t.Fatalf("loss 1 forwarded %d before the trip", n)
	}

	tripSamples(t, sensor, monAddr, 0, 5)
	deadline := time.Now().Add(20 * time.Second)
	for {
		s := scrape(t, relayURL)["rigwire_relay_trip_requests_total"]
		if s["result=accepted"] == 1 && s["result=repeated"] == 2 {
			if s["result=malformed"] != 0 || s["result=stranger"] != 0 {
				t.Errorf("trip requests %v", s)
			}
			break
		}
		if time.Now().After(deadline) {
			t.Fatalf("trip requests %v, want 1 accepted and 2 repeated", s)
		}
		time.Sleep(20 * time.Millisecond)
	}
	sendRelay(10)
	if n := arrivals(ctl, 10, 3*time.Second); n != 10 {
		t.Errorf("after the trip the controller got %d of 10", n)
	}

	mon.signal(t, syscall.SIGTERM)
	if code := mon.wait(t, 20*time.Second); code != 8 {
		t.Errorf("monitor exit status %d, want 8 (tripped)", code)
	}
	if out := mon.out.String(); !strings.Contains(out, "SAFETY TRIP fired") || !strings.Contains(out, "reason=abs_error") {
		t.Errorf("monitor did not log the trip:\n%s", out)
	}
	relay.signal(t, syscall.SIGTERM)
	if code := relay.wait(t, 20*time.Second); code != 0 {
		t.Errorf("relay exit status %d", code)
	}
}
