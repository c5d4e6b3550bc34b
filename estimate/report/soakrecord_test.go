package report

import (
	"math"
	"testing"
	"time"

	"rigwire/emulate"
	"rigwire/estimate"
	"rigwire/estimate/engine"
	"rigwire/profiles"
)

// recorderMonitor is a monitor of a scalar loop of our own (a pump's flow
// loop, invented) for the recorder, which reads only its start time.
func recorderMonitor(t *testing.T) *engine.Monitor {
	t.Helper()
	loop, err := profiles.ParseLoop([]byte(`period: 10ms
plant: {a: [[-1]], b: [[2]], c: [[1]], process_noise: [[0.01]], sensor_noise: [[1e-4]]}
controller: {d: [[0.5]]}
setpoint: [0.8]
profile: {name: t, sensor_to_controller: {loss: 0.02}}
decode: {format: text, sequence: {field: 0}, outputs: [{field: 1}]}
`), "pump.yaml", ".")
	if err != nil {
		t.Fatal(err)
	}
	m, err := engine.New(loop, &estimate.Prediction{MeanSquareStable: true, Error: &estimate.ErrorStats{SecondMoment: 0.04, Mean: []float64{0}}},
		engine.Options{Now: func() time.Time { return time.Unix(0, 0) }})
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// relayStats is a relay snapshot with n datagrams read per direction, d of
// them dropped and o ended otherwise, every forwarded one delayed 1 ms or
// 3 ms (half each), and loss runs of length 1 and 3.
func relayStats(n, d, o uint64) emulate.Stats {
	dir := func(name string) emulate.DirectionStats {
		fw := n - d - o
		return emulate.DirectionStats{Direction: name, Forwarded: fw, Dropped: d, Overflow: o,
			Delay: emulate.Histogram{Count: fw, Sum: 0.002 * float64(fw),
				Buckets: []emulate.Bucket{{UpperBound: 0.002, Count: fw / 2}, {UpperBound: 0.004, Count: fw}}},
			LossRuns: emulate.Histogram{Count: 3, Sum: 5,
				Buckets: []emulate.Bucket{{UpperBound: 1, Count: 1}, {UpperBound: 2, Count: 1}, {UpperBound: 4, Count: 3}}}}
	}
	return emulate.Stats{SensorToController: dir(profiles.SensorToController), ControllerToActuator: dir(profiles.ControllerToActuator)}
}

// The recorder's per-phase counts are the differences of the relay's
// counters between the phase's start and the next mark (a later phase's
// start, the trip, the end); a phase after the trip has none; the delays
// drawn are counted up to the trip, those after it apart; the loss runs
// come out as non-cumulative counts with the overflow bucket.
func TestRecorderPhases(t *testing.T) {
	now := relayStats(0, 0, 0)
	rec := NewRecorder(recorderMonitor(t), func() emulate.Stats { return now })
	rec.PhaseStart(0)
	now = relayStats(100, 4, 0)
	rec.PhaseStart(1)
	now = relayStats(160, 10, 2)
	rec.Tripped()
	now = relayStats(200, 10, 2)
	rec.PhaseStart(2) // after the trip: not recorded
	rec.Finish()

	cases := []struct {
		name                      string
		phase                     int
		datagrams, dropped, other int64
		delays                    int64
	}{
		{"first phase", 0, 100, 4, 0, 96},
		{"phase the trip cut", 1, 60, 6, 2, 148 - 96},
	}
	const tol = 1e-12
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			ms := rec.phaseMeasure(c.phase)
			if len(ms) != 2 {
				t.Fatalf("%d directions, want 2", len(ms))
			}
			for _, m := range ms {
				if m.Datagrams != c.datagrams || m.Dropped != c.dropped || m.Other != c.other || m.Delays != c.delays {
					t.Errorf("%s: %+v, want %d datagrams, %d dropped, %d other, %d delays", m.Direction, m, c.datagrams, c.dropped, c.other, c.delays)
				}
				if math.Abs(m.DelaySum-0.002*float64(c.delays)) > tol || !(m.DelayMedian > 0 && m.DelayMedian <= 0.004) {
					t.Errorf("%s: delay sum %g, median %g", m.Direction, m.DelaySum, m.DelayMedian)
				}
			}
		})
	}
	if ms := rec.phaseMeasure(2); ms != nil {
		t.Errorf("phase started after the trip: %+v, want none", ms)
	}
	during, after := rec.delays()
	for _, dir := range []string{profiles.SensorToController, profiles.ControllerToActuator} {
		if got := histTotal(during[dir]); got != 148 {
			t.Errorf("%s: %g delays up to the trip, want 148", dir, got)
		}
		if got := histTotal(after[dir]); got != 188-148 {
			t.Errorf("%s: %g delays after the trip, want %d", dir, got, 188-148)
		}
		lr := rec.LossRuns()[dir]
		want := []float64{1, 0, 2, 0}
		if len(lr.Counts) != len(want) || !math.IsInf(lr.Upper[len(lr.Upper)-1], 1) {
			t.Fatalf("%s: loss runs %+v", dir, lr)
		}
		for i, w := range want {
			if lr.Counts[i] != w {
				t.Errorf("%s: loss-run bucket %d counts %g, want %g", dir, i, lr.Counts[i], w)
			}
		}
	}
}
