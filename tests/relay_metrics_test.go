package tests

import (
	"bytes"
	"io"
	"net/http"
	"os/exec"
	"strings"
	"testing"
	"time"
)

// The relay's endpoint passes Prometheus's own linter (promtool check
// metrics, from Debian's prometheus package) once traffic has crossed it,
// and every outcome the relay counts is there.
func TestRelayMetricsPassPromtool(t *testing.T) {
	promtool := needTool(t, "promtool", "prometheus")
	rig := startRelay(t, "name: m\nsensor_to_controller: {loss: 0.5, delay: 1ms}\n")
	for range 50 {
		rig.sensor.WriteToUDPAddrPort([]byte("x"), rig.listen)
	}
	time.Sleep(100 * time.Millisecond)
	resp, err := http.Get(rig.metrics)
	if err != nil {
		t.Fatal(err)
	}
	body, _ := io.ReadAll(resp.Body)
	resp.Body.Close()
	cmd := exec.Command(promtool, "check", "metrics")
	cmd.Stdin = bytes.NewReader(body)
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Errorf("promtool check metrics: %v\n%s", err, out)
	}
	for _, want := range []string{
		`rigwire_relay_datagrams_total{direction="sensor_to_controller",outcome="dropped"}`,
		`rigwire_relay_datagrams_total{direction="sensor_to_controller",outcome="forwarded"}`,
		`rigwire_relay_release_lateness_seconds_bucket{direction="sensor_to_controller"`,
		`rigwire_relay_delay_seconds_count{direction="sensor_to_controller"}`,
		`rigwire_relay_in_flight{direction="controller_to_actuator"}`,
		`rigwire_relay_channel_state{direction="sensor_to_controller",state=`,
	} {
		if !strings.Contains(string(body), want) {
			t.Errorf("metrics lack %s", want)
		}
	}
}
