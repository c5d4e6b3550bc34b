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
	}
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
