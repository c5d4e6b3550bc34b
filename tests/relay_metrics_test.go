package tests

import (
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
	body := promtoolCheck(t, promtool, rig.metrics)
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
