package emulate

import (
	"testing"
	"testing/synctest"
	"time"

	dto "github.com/prometheus/client_model/go"

	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// Every outcome has a field of its own in DirectionStats.
func TestStatsOutcomeFields(t *testing.T) {
	var d DirectionStats
	seen := map[*uint64]string{}
	for i, name := range outcomeIndex {
		p := d.outcome(outcomeID(i))
		if other, ok := seen[p]; ok {
			t.Errorf("outcomes %s and %s share a field", other, name)
		}
		seen[p] = name
	}
}

// After traffic that ends in every kind of outcome, the snapshot says what
// a scrape of the relay's registry says, series by series, and each
// direction's outcomes add up to the datagrams it read.
func TestStatsAgreeWithMetrics(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		p := &profiles.Profile{
			SensorToController:   oneState(0.3, laws.Constant{Value: 0.001}),
			ControllerToActuator: oneState(0, nil),
		}
		rig := startFake(t, p, func(c *Config) {
			c.Sensor = sensorAddr
			c.MaxDatagram = 100
			c.MaxInFlight = 3
		})
		const sensors, commands = 40, 7
		rig.listen.push(strangerAddr, []byte("not the rig"))
		rig.listen.push(sensorAddr, make([]byte, 101)) // oversized
		for range sensors {
			rig.listen.push(sensorAddr, []byte("sensor"))
		}
		synctest.Wait()
		rig.up.push(strangerAddr, []byte("not the controller"))
		for range commands {
			rig.up.push(controllerAddr, []byte("command"))
		}
		synctest.Wait()
		rig.relay.Reload(p)
		time.Sleep(5 * time.Millisecond)
		synctest.Wait()
		rig.stop(t)

		s := rig.relay.Stats()
		sc, ca := s.SensorToController, s.ControllerToActuator
		if sc.Direction != profiles.SensorToController || ca.Direction != profiles.ControllerToActuator {
			t.Fatalf("directions %q, %q", sc.Direction, ca.Direction)
		}
		for _, c := range []struct {
			name string
			got  uint64
			want uint64
		}{
			{"sensor_to_controller read", sc.Read(), 1 + 1 + sensors},
			{"controller_to_actuator read", ca.Read(), 1 + commands},
			{"sensor strangers", sc.Stranger, 1},
			{"command strangers", ca.Stranger, 1},
			{"oversized", sc.Oversized, 1},
			{"commands forwarded", ca.Forwarded, commands},
			{"reloads ok", s.ReloadsOK, 1},
			{"sensor source locked", s.SensorSourceFirst, 1},
			{"tap copies", s.TapSent, sensors},
		} {
			if c.got != c.want {
				t.Errorf("%s: %d, want %d", c.name, c.got, c.want)
			}
		}
		// The traffic must reach the outcomes compared below, or the
		// comparison proves little.
		if sc.Forwarded == 0 || sc.Dropped == 0 || sc.Overflow == 0 || sc.Delay.Count == 0 || sc.LossRuns.Count == 0 {
			t.Fatalf("traffic missed an outcome: %+v", sc)
		}
		compareWithMetrics(t, s, mustGather(t, rig.reg))
	})
}

// compareWithMetrics checks every series of the relay's registry against
// the snapshot, and that every field of the snapshot was compared.
func compareWithMetrics(t *testing.T, s Stats, fams []*dto.MetricFamily) {
	t.Helper()
	dirs := map[string]DirectionStats{}
	for _, d := range s.Directions() {
		dirs[d.Direction] = d
	}
	compared := map[string]int{}
	eq := func(what string, got uint64, want float64) {
		compared[what]++
		if float64(got) != want {
			t.Errorf("%s: snapshot %d, metrics %g", what, got, want)
		}
	}
	hist := func(what string, got Histogram, want *dto.Histogram) {
		compared[what]++
		if got.Count != want.GetSampleCount() || got.Sum != want.GetSampleSum() || len(got.Buckets) != len(want.GetBucket()) {
			t.Errorf("%s: snapshot count %d sum %g buckets %d, metrics %d, %g, %d", what, got.Count, got.Sum,
				len(got.Buckets), want.GetSampleCount(), want.GetSampleSum(), len(want.GetBucket()))
			return
		}
		for i, b := range want.GetBucket() {
			if got.Buckets[i].UpperBound != b.GetUpperBound() || got.Buckets[i].Count != b.GetCumulativeCount() {
				t.Errorf("%s bucket %d: snapshot %+v, metrics le %g count %d", what, i, got.Buckets[i], b.GetUpperBound(), b.GetCumulativeCount())
			}
		}
	}
	for _, f := range fams {
		for _, m := range f.GetMetric() {
			l := map[string]string{}
			for _, p := range m.GetLabel() {
				l[p.GetName()] = p.GetValue()
			}
			d := dirs[l["direction"]]
			v := m.GetCounter().GetValue()
			switch f.GetName() {
			case "rigwire_relay_datagrams_total":
				found := false
				for _, o := range d.Outcomes() {
					if o.Outcome == l["outcome"] {
						eq(d.Direction+" "+o.Outcome, o.Count, v)
						found = true
					}
				}
				if !found {
					t.Errorf("outcome %s of %s: not in the snapshot", l["outcome"], l["direction"])
				}
			case "rigwire_relay_forwarded_bytes_total":
				eq(d.Direction+" bytes", d.ForwardedBytes, v)
			case "rigwire_relay_reordered_datagrams_total":
				eq(d.Direction+" reordered", d.Reordered, v)
			case "rigwire_relay_in_flight":
				eq(d.Direction+" in flight", uint64(d.InFlight), m.GetGauge().GetValue())
			case "rigwire_relay_delay_seconds":
				hist(d.Direction+" delay", d.Delay, m.GetHistogram())
			case "rigwire_relay_release_lateness_seconds":
				hist(d.Direction+" lateness", d.Lateness, m.GetHistogram())
			case "rigwire_relay_loss_run_length":
				hist(d.Direction+" loss runs", d.LossRuns, m.GetHistogram())
			case "rigwire_relay_tap_datagrams_total":
				eq("tap "+l["outcome"], map[string]uint64{"sent": s.TapSent, OutcomeSendError: s.TapSendErrors}[l["outcome"]], v)
			case "rigwire_relay_record_lost_total":
				eq("record lost", s.RecordLost, v)
			case "rigwire_relay_profile_reloads_total":
				eq("reloads "+l["result"], map[string]uint64{"ok": s.ReloadsOK, "error": s.ReloadErrors, "ignored": s.ReloadsIgnored}[l["result"]], v)
			case "rigwire_relay_scenario_steps_total":
				eq("scenario steps", s.ScenarioSteps, v)
			case "rigwire_relay_sensor_source_changes_total":
				eq("source "+l["reason"], map[string]uint64{lockFirst: s.SensorSourceFirst, lockQuiet: s.SensorSourceQuiet}[l["reason"]], v)
			case "rigwire_relay_tripped":
				tripped := uint64(0)
				if s.Tripped {
					tripped = 1
				}
				eq("tripped", tripped, m.GetGauge().GetValue())
			}
		}
	}
	// Per direction: the outcomes, bytes, in flight and three histograms;
	// then tap (2), record lost, reloads (3), steps, source changes (2),
	// tripped.
	want := 2*(len(outcomeIndex)+6) + 2 + 1 + 3 + 1 + 2 + 1
	if len(compared) != want {
		t.Errorf("compared %d series, want %d: %v", len(compared), want, compared)
	}
}
