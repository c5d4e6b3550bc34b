package main

import (
	"bufio"
	"encoding/json"
	"fmt"
	"math"
	"net"
	"net/http"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"
)

// freeAddr is a loopback HOST:PORT free a moment ago (network "udp" or
// "tcp").
func freeAddr(t *testing.T, network string) string {
	t.Helper()
	if network == "udp" {
		c, err := net.ListenUDP("udp4", &net.UDPAddr{IP: net.IPv4(127, 0, 0, 1)})
		if err != nil {
			t.Fatal(err)
		}
		defer c.Close()
		return c.LocalAddr().String()
	}
	l, err := net.Listen("tcp4", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	return l.Addr().String()
}

// scrape reads the value of each series of the metrics text at url whose
// line starts with one of prefixes (name and labels as printed).
func scrape(url string, prefixes ...string) (map[string]float64, error) {
	resp, err := http.Get(url)
	if err != nil {
		return nil, err
	}
	defer resp.Body.Close()
	got := map[string]float64{}
	sc := bufio.NewScanner(resp.Body)
	for sc.Scan() {
		line := sc.Text()
		for _, p := range prefixes {
			if strings.HasPrefix(line, p+" ") {
				v, err := strconv.ParseFloat(strings.TrimSpace(line[len(p):]), 64)
				if err != nil {
					return nil, fmt.Errorf("%s: %v", line, err)
				}
				got[p] = v
			}
		}
	}
	return got, sc.Err()
}

// End to end over real UDP sockets: `monitor run --from` decodes only what
// the relay's tap sends. A stranger — another host, or with a port in
// --from another port of the tap's host — sends as many datagrams with
// absurd outputs; none is decoded (the measured E[eᵀe] is the tap's
// alone, computed directly), each is counted as a stranger under its
// reason in the metrics and the summary, and none is a datagram or a
// decode failure.
func TestRunFromDecodesOnlyTheTap(t *testing.T) {
	const loop = "../../profiles/examples/checks/monitor-text.yaml" // setpoint 1.2, text "seq,t,y"
	cases := []struct {
		name       string
		strangerIP net.IP
		pinPort    bool   // --from HOST:PORT (else HOST)
		reason     string // the strangers' reason label
	}{
		{"HOST, a stranger on another host", net.IPv4(127, 0, 0, 2), false, "other_host"},
		{"HOST:PORT, a stranger on another host", net.IPv4(127, 0, 0, 2), true, "other_host"},
		{"HOST:PORT, a stranger on another port of the tap's host", net.IPv4(127, 0, 0, 1), true, "other_port"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			tap, err := net.ListenUDP("udp4", &net.UDPAddr{IP: net.IPv4(127, 0, 0, 1)})
			if err != nil {
				t.Fatal(err)
			}
			defer tap.Close()
			stranger, err := net.ListenUDP("udp4", &net.UDPAddr{IP: c.strangerIP})
			if err != nil {
				t.Skipf("cannot bind %s here: %v", c.strangerIP, err)
			}
			defer stranger.Close()
			from := "127.0.0.1"
			if c.pinPort {
				from = tap.LocalAddr().String()
			}
			listen, metrics := freeAddr(t, "udp"), freeAddr(t, "tcp")
			summary := filepath.Join(t.TempDir(), "summary.json")
			type result struct {
				code   int
				stderr string
			}
			done := make(chan result, 1)
			go func() {
				code, _, errOut := runMonitor("run", "--loop", loop, "--listen", listen, "--from", from, "--metrics", metrics,
					"--duration", "1s", "--summary", summary, "--progress", "0", "--no-margin", "--cautions-read", "--windows", "1s")
				done <- result{code, errOut}
			}()
			// The metrics endpoint starts once the tap socket is bound.
			url := "http://" + metrics + "/metrics"
			deadline := time.Now().Add(5 * time.Second)
			for {
				if _, err := scrape(url); err == nil {
					break
				}
				select {
				case r := <-done:
					t.Fatalf("monitor run ended early: status %d, %s", r.code, r.stderr)
				default:
				}
				if time.Now().After(deadline) {
					t.Fatal("monitor run did not start serving metrics within 5 s")
				}
				time.Sleep(20 * time.Millisecond)
			}
			to, err := net.ResolveUDPAddr("udp4", listen)
			if err != nil {
				t.Fatal(err)
			}
			const n = 200
			sum := 0.0
			for i := range n {
				y := 1.2 + 0.01*float64(i%7-3)
				sum += (1.2 - y) * (1.2 - y)
				if _, err := tap.WriteToUDP(fmt.Appendf(nil, "%d,%d,%v", i, i, y), to); err != nil {
					t.Fatal(err)
				}
				// Absurd outputs, and the next sequence numbers: decoded,
				// they would show in every count and estimate.
				if _, err := stranger.WriteToUDP(fmt.Appendf(nil, "%d,%d,%v", i+1, i, 1e6), to); err != nil {
					t.Fatal(err)
				}
				if i%50 == 49 {
					time.Sleep(5 * time.Millisecond)
				}
			}
			series := []string{
				`rigwire_monitor_stranger_datagrams_total{reason="other_host"}`,
				`rigwire_monitor_stranger_datagrams_total{reason="other_port"}`,
				`rigwire_monitor_datagrams_total`,
			}
			var m map[string]float64
			for {
				if m, err = scrape(url, series...); err != nil {
					t.Fatal(err)
				}
				if m[series[0]]+m[series[1]]+m[series[2]] >= 2*n || time.Now().After(deadline) {
					break
				}
				time.Sleep(20 * time.Millisecond)
			}
			for _, s := range series {
				want := 0.0
				if s == series[2] || strings.Contains(s, c.reason) {
					want = n
				}
				if m[s] != want {
					t.Errorf("%s = %v, want %v", s, m[s], want)
				}
			}
			r := <-done
			if r.code != 0 {
				t.Fatalf("status %d: %s", r.code, r.stderr)
			}
			if !strings.Contains(r.stderr, "from=") {
				t.Errorf("the start-up log does not name the pinned source: %s", r.stderr)
			}
			b, err := os.ReadFile(summary)
			if err != nil {
				t.Fatal(err)
			}
			var s struct {
				Samples        int64            `json:"samples"`
				Datagrams      int64            `json:"datagrams"`
				Strangers      int64            `json:"stranger_datagrams"`
				Second         *float64         `json:"error_second_moment"`
				DecodeFailures map[string]int64 `json:"decode_failures"`
			}
			if err := json.Unmarshal(b, &s); err != nil {
				t.Fatal(err)
			}
			if s.Samples != n || s.Datagrams != n || s.Strangers != n {
				t.Errorf("samples %d, datagrams %d, strangers %d; want %d each", s.Samples, s.Datagrams, s.Strangers, n)
			}
			for reason, k := range s.DecodeFailures {
				if k != 0 {
					t.Errorf("decode failures %s: %d, want 0 (a stranger's datagram is never decoded)", reason, k)
				}
			}
			const tol = 1e-12 // relative: the same sum of the same values
			if want := sum / n; s.Second == nil || math.Abs(*s.Second-want) > tol*want {
				t.Errorf("E[eᵀe] %v, want %v from the tap's outputs alone", s.Second, want)
			}
		})
	}
}

// --from names one sender: an empty value, a port alone, an unspecified
// address and an address of the other family than --listen are bad
// usage, each saying what was expected.
func TestRunFromRefused(t *testing.T) {
	cases := []struct {
		name, listen, from string
		want               string
	}{
		{"empty", "127.0.0.1:0", "", `flag -from: empty; want HOST or HOST:PORT of the relay's tap`},
		{"blanks", "127.0.0.1:0", " ", `flag -from: empty`},
		{"port alone", "127.0.0.1:0", ":9473", `":9473" has no host`},
		{"unspecified IPv4", "127.0.0.1:0", "0.0.0.0", `"0.0.0.0" is no sender's address`},
		{"unspecified IPv6", "[::1]:0", "::", `"::" is no sender's address`},
		{"not an address", "127.0.0.1:0", "no such host!", `want HOST or HOST:PORT of the relay's tap`},
		{"IPv6 source, IPv4 listen", "127.0.0.1:0", "::1", `--from ::1: an IPv6 address, but --listen 127.0.0.1:0 takes IPv4 datagrams only`},
		{"IPv4 source, IPv6 listen", "[::1]:0", "127.0.0.1:9473", `an IPv4 address, but --listen [::1]:0 takes IPv6 datagrams only`},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			code, _, errOut := runMonitor("run", "--loop", "../../profiles/examples/checks/monitor-text.yaml", "--listen", c.listen,
				"--metrics", "off", "--from", c.from)
			if code != 2 || !strings.Contains(errOut, c.want) {
				t.Errorf("status %d, stderr %q; want 2 and %q", code, errOut, c.want)
			}
		})
	}
}
