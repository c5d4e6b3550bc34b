package tests

import (
	"encoding/json"
	"fmt"
	"net/http"
	"net/url"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// A real Prometheus server (Debian's prometheus package), started by the
// test on loopback, scrapes the relay and the monitor; both targets are up
// and their rigwire series are in its database.
func TestPrometheusScrapesRelayAndMonitor(t *testing.T) {
	server := needTool(t, "prometheus", "prometheus")
	relay := startRelay(t, "name: scrape\nsensor_to_controller: {loss: 0.1, delay: 2ms}\n")
	mon := startMonitorRun(t)
	for range 20 {
		relay.sensor.WriteToUDPAddrPort([]byte("x"), relay.listen)
	}

	dir := t.TempDir()
	web := freePort(t, "tcp")
	target := func(u string) string { return strings.TrimSuffix(strings.TrimPrefix(u, "http://"), "/metrics") }
	cfg := fmt.Sprintf(`global:
  scrape_interval: 1s
  scrape_timeout: 900ms
scrape_configs:
  - job_name: rigwire-relay
    static_configs: [{targets: [%q]}]
  - job_name: rigwire-monitor
    static_configs: [{targets: [%q]}]
`, target(relay.metrics), target(mon.metrics))
	cfgPath := filepath.Join(dir, "prometheus.yml")
	if err := os.WriteFile(cfgPath, []byte(cfg), 0o644); err != nil {
		t.Fatal(err)
	}
	p := start(t, server, "--config.file="+cfgPath, "--storage.tsdb.path="+filepath.Join(dir, "data"),
		"--web.listen-address="+web)
	waitHTTP(t, "http://"+web+"/-/ready", p)
	for ready := time.Now().Add(30 * time.Second); ; time.Sleep(100 * time.Millisecond) {
		resp, err := http.Get("http://" + web + "/-/ready")
		if err == nil {
			resp.Body.Close()
			if resp.StatusCode == http.StatusOK {
				break
			}
		}
		if time.Now().After(ready) {
			t.Fatal("Prometheus did not become ready")
		}
	}

	query := func(q string) []map[string]any {
		resp, err := http.Get("http://" + web + "/api/v1/query?query=" + url.QueryEscape(q))
		if err != nil {
			t.Fatal(err)
		}
		defer resp.Body.Close()
		var r struct {
			Status string
			Data   struct{ Result []map[string]any }
		}
		if err := json.NewDecoder(resp.Body).Decode(&r); err != nil || r.Status != "success" {
			t.Fatalf("query %s: %v (status %q)", q, err, r.Status)
		}
		return r.Data.Result
	}
	want := map[string]string{
		`up{job="rigwire-relay"} == 1`:                                                    "relay target up",
		`up{job="rigwire-monitor"} == 1`:                                                  "monitor target up",
		`rigwire_relay_datagrams_total{direction="sensor_to_controller"}`:                 "relay counters",
		`rigwire_monitor_predicted_error_second_moment`:                                   "monitor prediction",
		`rigwire_relay_release_lateness_seconds_bucket{direction="sensor_to_controller"}`: "relay lateness histogram",
	}
	deadline := time.Now().Add(30 * time.Second)
	for q, what := range want {
		for len(query(q)) == 0 {
			if time.Now().After(deadline) {
				t.Fatalf("%s: Prometheus has no result for %s", what, q)
			}
			time.Sleep(250 * time.Millisecond)
		}
	}
}
