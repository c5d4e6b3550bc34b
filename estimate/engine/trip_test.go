package engine

import (
	"math"
	"math/rand/v2"
	"strconv"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/testutil"

	"rigwire/emulate/trip"
	"rigwire/profiles"
)

// The abs bound fires on exactly the first sample above it, in the
// warm-up too, once; fire runs outside the lock (it reads the summary).
func TestTripAbsError(t *testing.T) {
	c := &clock{t: time.Unix(0, 0)}
	m := newClocked(t, c, Options{Warmup: time.Second})
	var got []trip.Event
	var inFire *Summary
	if err := m.SetTrip(trip.Rule{Enabled: true, MaxAbsError: 0.5, Action: trip.StopCommands}, func(ev trip.Event) {
		got = append(got, ev)
		inFire = m.Summary() // would deadlock under the lock
	}); err != nil {
		t.Fatal(err)
	}
	es := []float64{0.1, -0.3, 0.5, -0.5, 0.25, -0.6, 0.7, 0.9}
	for k, e := range es {
		feedErr(m, k, e, c.t)
		if k < 5 && m.Tripped() != nil {
			t.Fatalf("fired at sample %d (|e| %v)", k, e)
		}
	}
	if len(got) != 1 || got[0].Reason != trip.ReasonAbsError || got[0].Sequence == nil || *got[0].Sequence != 5 ||
		math.Abs(got[0].Value-0.6) > 1e-12 || got[0].Bound != 0.5 || got[0].Action != "stop_commands" {
		t.Fatalf("events %+v", got)
	}
	if inFire == nil || inFire.Trip == nil {
		t.Errorf("summary from fire: %+v", inFire)
	}
	if m.Tripped() == nil || m.Tripped().Reason != trip.ReasonAbsError {
		t.Errorf("Tripped %+v", m.Tripped())
	}
}

// The windowed mean fires on the exact sample where the mean of the
// last ⌈Window/period⌉ x_k first exceeds the bound (brute force).
func TestTripSecondMomentBruteForce(t *testing.T) {
	for seed := range uint64(20) {
		c := &clock{t: time.Unix(0, 0)}
		m := newClocked(t, c, Options{})
		var ev *trip.Event
		if err := m.SetTrip(trip.Rule{MaxSecondMoment: 0.05, Window: 0.07}, func(e trip.Event) { ev = &e }); err != nil {
			t.Fatal(err)
		}
		const w = 7 // 70 ms at 10 ms
		r := rand.New(rand.NewPCG(seed, 1))
		var xs []float64
		want := -1
		for k := 0; k < 2000 && ev == nil; k++ {
			e := (r.Float64()*2 - 1) * (0.1 + 0.3*float64(k)/2000)
			// The value the monitor decodes: y = 0.8 − e, e = 0.8 − y.
			y, _ := strconv.ParseFloat(strconv.FormatFloat(0.8-e, 'g', -1, 64), 64)
			d := 0.8 - y
			xs = append(xs, d*d)
			if want < 0 && len(xs) >= w {
				s := 0.0
				for _, x := range xs[len(xs)-w:] {
					s += x
				}
				if s/w > 0.05 {
					want = k
				}
			}
			feedErr(m, k, e, c.t)
		}
		if want < 0 || ev == nil || ev.Reason != trip.ReasonSecondMoment || int(*ev.Sequence) != want {
			t.Fatalf("seed %d: fired %+v, brute force at %d", seed, ev, want)
		}
	}
}

// The ratio uses the prediction in force and needs a stable one.
func TestTripRatio(t *testing.T) {
	c := &clock{t: time.Unix(0, 0)}
	m := newClocked(t, c, Options{})
	m.UpdatePrediction(stablePred(0.01))
	fired := 0
	if err := m.SetTrip(trip.Rule{MaxRatio: 2, Window: 0.05}, func(trip.Event) { fired++ }); err != nil {
		t.Fatal(err)
	}
	// Five samples of x = 0.01 (ratio 1), then x = 0.04: the mean after
	// j of them is 0.01 + 0.006 j, above 0.02 from j = 2: sample 6.
	for k := 0; k < 5; k++ {
		feedErr(m, k, 0.1, c.t)
	}
	for k := 5; k < 12; k++ {
		feedErr(m, k, 0.2, c.t)
	}
	ev := m.Tripped()
	if fired != 1 || ev == nil || ev.Reason != trip.ReasonRatio || *ev.Sequence != 6 || ev.Bound != 2 {
		t.Fatalf("fired %d, %+v", fired, ev)
	}
	// Not with an unstable prediction.
	m2 := newClocked(t, c, Options{})
	m2.StartPhase(0, "p", stablePred(0.01), 0, profiles.Check{})
	m2.UpdatePrediction(nil)
	m2.SetTrip(trip.Rule{MaxRatio: 2, Window: 0.05}, nil)
	for k := 0; k < 50; k++ {
		feedErr(m2, k, 1, c.t)
	}
	if m2.Tripped() != nil {
		t.Errorf("ratio tripped on an unstable prediction: %+v", m2.Tripped())
	}
}

func TestSetTripValidates(t *testing.T) {
	m := newClocked(t, &clock{}, Options{})
	for _, tr := range []trip.Rule{{MaxSecondMoment: 1, Window: 0.01}, {MaxAbsError: -1}, {MaxRatio: math.NaN()}} {
		if err := m.SetTrip(tr, nil); err == nil {
			t.Errorf("%+v accepted", tr)
		}
	}
	if err := m.SetTrip(trip.Rule{MaxAbsError: 1, Window: 0.01}, nil); err != nil {
		t.Errorf("abs bound with a short window: %v", err)
	}
}

// Feed stays allocation-free with every trip bound armed.
func TestFeedDoesNotAllocateWithTrip(t *testing.T) {
	m := newClocked(t, &clock{t: time.Unix(0, 0)}, Options{})
	m.StartPhase(0, "p", nil, time.Second, profiles.Check{})
	if err := m.SetTrip(trip.Rule{MaxAbsError: 10, MaxSecondMoment: 10, MaxRatio: 1e6, Window: 0.05}, func(trip.Event) {}); err != nil {
		t.Fatal(err)
	}
	payloads := [][]byte{[]byte("1,0.75\n"), []byte("2,0.85\n"), []byte("1,zz")}
	i := 0
	if n := testing.AllocsPerRun(1000, func() { m.Feed(payloads[i%len(payloads)], time.Unix(0, 0)); i++ }); n != 0 {
		t.Errorf("%v allocations per datagram", n)
	}
	if m.Tripped() != nil {
		t.Errorf("tripped: %+v", m.Tripped())
	}
}

func TestTripAndPhaseMetrics(t *testing.T) {
	c := &clock{t: time.Unix(0, 0)}
	m := newClocked(t, c, Options{})
	reg := prometheus.NewRegistry()
	if err := m.RegisterMetrics(reg); err != nil {
		t.Fatal(err)
	}
	m.SetTrip(trip.Rule{MaxAbsError: 0.5}, nil)
	m.StartPhase(0, "calm", nil, 0, profiles.Check{MinSamples: 2})
	feedErr(m, 0, 0.1, c.t)
	feedErr(m, 1, 0.1, c.t)
	m.StartPhase(1, "storm", nil, 0, profiles.Check{})
	feedErr(m, 2, 0.9, c.t)
	for name, want := range map[string]int{
		"rigwire_monitor_trip_active": 1, "rigwire_monitor_trips_total": 3, "rigwire_monitor_phase": 2,
		"rigwire_monitor_phase_error_second_moment": 2, "rigwire_monitor_phase_predicted_error_second_moment": 2,
		"rigwire_monitor_phase_passed":       1, // the running phase has none
		"rigwire_monitor_phase_inconclusive": 1, "rigwire_monitor_after_trip_samples_total": 1,
	} {
		if n, err := testutil.GatherAndCount(reg, name); err != nil || n != want {
			t.Errorf("%s: %d series (%v), want %d", name, n, err, want)
		}
	}
	problems, err := testutil.GatherAndLint(reg)
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range problems {
		t.Errorf("promlint: %s: %s", p.Metric, p.Text)
	}
	if v := testutil.ToFloat64(gatherOne(t, reg, "rigwire_monitor_trip_active")); v != 1 {
		t.Errorf("trip_active %v", v)
	}
}

// gatherOne is the single series of a metric as a collector.
func gatherOne(t *testing.T, reg *prometheus.Registry, name string) prometheus.Collector {
	t.Helper()
	fams, err := reg.Gather()
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range fams {
		if f.GetName() == name {
			g := prometheus.NewGauge(prometheus.GaugeOpts{Name: name, Help: "copy"})
			g.Set(f.GetMetric()[0].GetGauge().GetValue())
			return g
		}
	}
	t.Fatalf("%s not gathered", name)
	return nil
}
