package emulate

import (
	"testing"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/testutil/promlint"
	dto "github.com/prometheus/client_model/go"
)

// The relay's metric names follow Prometheus's naming conventions (base
// units, _total counters), as client_golang's promlint checks them.
func TestMetricsLint(t *testing.T) {
	reg := prometheus.NewRegistry()
	m := NewMetrics(reg)
	for _, d := range []string{"sensor_to_controller", "controller_to_actuator"} {
		dm := m.forDirection(d)
		dm.delay.Observe(0.001)
		dm.lateness.Observe(1e-5)
		dm.lossRuns.Observe(2)
	}
	m.ScenarioPhase.WithLabelValues("0", "calm").Set(1)
	m.ChannelState.WithLabelValues("sensor_to_controller", "clear").Set(1)
	problems, err := promlint.NewWithMetricFamilies(mustGather(t, reg)).Lint()
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range problems {
		t.Errorf("%s: %s", p.Metric, p.Text)
	}
}

func mustGather(t *testing.T, reg *prometheus.Registry) []*dto.MetricFamily {
	t.Helper()
	mfs, err := reg.Gather()
	if err != nil {
		t.Fatal(err)
	}
	return mfs
}

// What dashboards and alert rules look for exists from the start, at 0:
// the tripped outcome of each direction, the tripped gauge, the loss-run
// histograms and the scenario counters.
func TestMetricsPreCreated(t *testing.T) {
	reg := prometheus.NewRegistry()
	m := NewMetrics(reg)
	dirs := []string{"sensor_to_controller", "controller_to_actuator"}
	for _, d := range dirs {
		m.forDirection(d)
	}
	found := map[string]int{}
	for _, mf := range mustGather(t, reg) {
		for _, x := range mf.Metric {
			labels := map[string]string{}
			for _, l := range x.Label {
				labels[l.GetName()] = l.GetValue()
			}
			switch mf.GetName() {
			case "rigwire_relay_datagrams_total":
				if labels["outcome"] == OutcomeTripped && x.Counter.GetValue() == 0 {
					found["tripped outcome"]++
				}
			case "rigwire_relay_loss_run_length":
				if x.Histogram.GetSampleCount() == 0 && len(x.Histogram.Bucket) == len(LossRunBuckets) {
					found["loss runs"]++
				}
			case "rigwire_relay_tripped", "rigwire_relay_scenario_steps_total", "rigwire_relay_scenario_elapsed_seconds":
				found[mf.GetName()]++
			}
		}
	}
	for k, want := range map[string]int{"tripped outcome": 2, "loss runs": 2, "rigwire_relay_tripped": 1,
		"rigwire_relay_scenario_steps_total": 1, "rigwire_relay_scenario_elapsed_seconds": 1} {
		if found[k] != want {
			t.Errorf("%s: %d series at 0, want %d", k, found[k], want)
		}
	}
}
