package engine

import (
	"math"
	"math/rand/v2"
	"sort"
	"strings"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"rigwire/profiles"
)

// scraped is a gathered registry: metric name → label pairs ("k=v,k=v",
// sorted) → value.
type scraped map[string]map[string]float64

func gatherAll(t *testing.T, reg *prometheus.Registry) scraped {
	t.Helper()
	fams, err := reg.Gather()
	if err != nil {
		t.Fatal(err)
	}
	out := scraped{}
	for _, f := range fams {
		out[f.GetName()] = map[string]float64{}
		for _, m := range f.GetMetric() {
			var ls []string
			for _, l := range m.GetLabel() {
				ls = append(ls, l.GetName()+"="+l.GetValue())
			}
			sort.Strings(ls)
			v := m.GetGauge().GetValue()
			if m.GetCounter() != nil {
				v = m.GetCounter().GetValue()
			}
			out[f.GetName()][strings.Join(ls, ",")] = v
		}
	}
	return out
}

// get is one series' value and whether it was served.
func (s scraped) get(name, labels string) (float64, bool) {
	v, ok := s[name][labels]
	return v, ok
}

func registered(t *testing.T, m *Monitor) *prometheus.Registry {
	t.Helper()
	reg := prometheus.NewPedanticRegistry()
	if err := m.RegisterMetrics(reg); err != nil {
		t.Fatal(err)
	}
	return reg
}

// The window label is spelled as --windows spells a duration, not as a
// number of seconds.
func TestWindowLabel(t *testing.T) {
	cases := []struct {
		name string
		in   time.Duration
		want string
	}{
		{"one minute", time.Minute, "1m"},
		{"ten minutes", 10 * time.Minute, "10m"},
		{"one hour", time.Hour, "1h"},
		{"hour and a half", 90 * time.Minute, "1h30m"},
		{"minute and a half", 90 * time.Second, "1m30s"},
		{"seconds", 30 * time.Second, "30s"},
		{"fraction of a second", 1500 * time.Millisecond, "1.5s"},
		{"milliseconds", 500 * time.Millisecond, "500ms"},
		{"hours, minutes and seconds", time.Hour + 30*time.Second, "1h0m30s"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := windowLabel(c.in); got != c.want {
				t.Errorf("windowLabel(%s) = %q, want %q", c.in, got, c.want)
			}
		})
	}
}

// Predicted values the Help says may be NaN; every other gauge must be a
// number or absent.
var mayBeNaN = map[string]bool{
	"rigwire_monitor_predicted_error_second_moment":          true,
	"rigwire_monitor_predicted_error_second_moment_in_force": true,
	"rigwire_monitor_predicted_spectral_radius":              true,
	"rigwire_monitor_predicted_loss_margin":                  true,
	"rigwire_monitor_phase_predicted_error_second_moment":    true,
}

// A window's interval is absent, not NaN, until the window holds two
// complete batches of a thirtieth of its length; its batches gauge says
// how many it has. With the default windows (1m, 10m) at a 10 ms period,
// 10 s of samples make five 2 s batches of the 1m window and none of the
// 10m window's 20 s batches (the reason a 10m window has no interval
// while the 1m window over the same samples has one).
func TestWindowIntervalAbsentUntilTwoBatches(t *testing.T) {
	c := &clock{t: time.Unix(0, 0)}
	m := newClocked(t, c, Options{})
	reg := registered(t, m)
	s := gatherAll(t, reg)
	for _, w := range []string{"run", "1m", "10m"} {
		if _, ok := s.get("rigwire_monitor_error_second_moment", "window="+w); ok {
			t.Errorf("window %s: E[eᵀe] served before any sample", w)
		}
		if v, ok := s.get("rigwire_monitor_window_samples", "window="+w); !ok || v != 0 {
			t.Errorf("window %s: samples %v (served %v), want 0", w, v, ok)
		}
	}
	rng := rand.New(rand.NewPCG(12, 1))
	for i := range 1000 { // 10 s at 10 ms
		feedErr(m, i, 0.2*rng.NormFloat64(), c.t)
		c.t = c.t.Add(10 * time.Millisecond)
	}
	s = gatherAll(t, reg)
	cases := []struct {
		window     string
		batches    float64
		hasCI      bool
		hasSecond  bool
		hasSamples float64
	}{
		{"1m", 5, true, true, 1000},
		{"10m", 0, false, true, 1000},
	}
	for _, cs := range cases {
		t.Run(cs.window, func(t *testing.T) {
			l := "window=" + cs.window
			if v, _ := s.get("rigwire_monitor_error_second_moment_batches", l); v != cs.batches {
				t.Errorf("batches %v, want %v", v, cs.batches)
			}
			if v, _ := s.get("rigwire_monitor_window_samples", l); v != cs.hasSamples {
				t.Errorf("samples %v, want %v", v, cs.hasSamples)
			}
			for _, n := range []string{"rigwire_monitor_error_second_moment_ci_low", "rigwire_monitor_error_second_moment_ci_high"} {
				if _, ok := s.get(n, l); ok != cs.hasCI {
					t.Errorf("%s served %v, want %v", n, ok, cs.hasCI)
				}
			}
			if _, ok := s.get("rigwire_monitor_error_second_moment", l); ok != cs.hasSecond {
				t.Errorf("E[eᵀe] served %v, want %v", ok, cs.hasSecond)
			}
		})
	}
	for name, series := range s {
		for l, v := range series {
			if math.IsNaN(v) && !mayBeNaN[name] {
				t.Errorf("%s{%s} is NaN", name, l)
			}
		}
	}
}

// During a soak phase the tolerance and the prediction in force are the
// phase's (a ramp step's after UpdatePrediction); the run's prediction
// stays what the windows and the run's verdict compare with. A phase
// without a tolerance check leaves the run's tolerance in force and has
// no phase tolerance series.
func TestToleranceAndPredictionInForce(t *testing.T) {
	c := &clock{t: time.Unix(0, 0)}
	m := newClocked(t, c, Options{Tolerance: 0.05}) // run's prediction 0.04
	reg := registered(t, m)
	type want struct {
		tolerance, inForce float64
		phaseTol           map[string]float64 // phase → tolerance; absent phases listed as NaN
	}
	nan := math.NaN()
	steps := []struct {
		name string
		do   func()
		want want
	}{
		{"before any phase", func() {}, want{0.05, 0.04, nil}},
		{"phase with a tolerance check", func() {
			m.StartPhase(0, "steady", stablePred(0.09), 0, profiles.Check{Tolerance: fp(0.2)})
		}, want{0.2, 0.09, map[string]float64{"steady": 0.2}}},
		{"a ramp step", func() { m.UpdatePrediction(stablePred(0.11)) }, want{0.2, 0.11, map[string]float64{"steady": 0.2}}},
		{"phase with only a bound", func() {
			m.StartPhase(1, "outage", stablePred(0.3), 0, profiles.Check{MaxSecondMoment: fp(0.5)})
		}, want{0.05, 0.3, map[string]float64{"steady": 0.2, "outage": nan}}},
	}
	for _, st := range steps {
		t.Run(st.name, func(t *testing.T) {
			st.do()
			s := gatherAll(t, reg)
			if v, _ := s.get("rigwire_monitor_tolerance_ratio", ""); v != st.want.tolerance {
				t.Errorf("tolerance in force %v, want %v", v, st.want.tolerance)
			}
			if v, _ := s.get("rigwire_monitor_predicted_error_second_moment_in_force", ""); v != st.want.inForce {
				t.Errorf("prediction in force %v, want %v", v, st.want.inForce)
			}
			if v, _ := s.get("rigwire_monitor_predicted_error_second_moment", ""); v != 0.04 {
				t.Errorf("run's prediction %v, want 0.04", v)
			}
			for ph, tol := range st.want.phaseTol {
				v, ok := s.get("rigwire_monitor_phase_tolerance_ratio", "phase="+ph)
				switch {
				case math.IsNaN(tol) && ok:
					t.Errorf("phase %s: tolerance %v served, want none", ph, v)
				case !math.IsNaN(tol) && v != tol:
					t.Errorf("phase %s: tolerance %v (served %v), want %v", ph, v, ok, tol)
				}
			}
		})
	}
}

// The outside-prediction alert of deploy/prometheus/rigwire.rules.yml
// compares the running phase's exported interval, widened by the phase's
// tolerance, with the phase's predicted E[eᵀe]. Evaluated here on the
// scraped values, it says outside exactly when the phase's own tolerance
// check says above or below — including with batches short for the
// loop's correlation time, where the exported interval is the verdict's
// worst case, not the estimator's narrower one — and nothing while the
// phase has too few samples.
func TestPhaseIntervalAgreesWithPhaseVerdict(t *testing.T) {
	cases := []struct {
		name      string
		phi       float64 // AR(1) coefficient of e: 0 independent samples
		n         int
		predicted float64
		verdict   string // the provisional verdict's word in the reason
		served    bool
	}{
		// E[e²] = 0.04 for every case (σ² of the innovations scaled).
		{"measured above", 0, 4000, 0.01, "measured above", true},
		{"measured below", 0, 4000, 0.2, "measured below", true},
		{"agree", 0, 4000, 0.04, "so far pass", true},
		{"too few samples", 0, 100, 0.01, "only 100 judged samples", false},
		{"short batches, gross miss", 0.995, 4000, 0.0004, "measured above", true},
		// The estimator's own interval, [0.028, 0.071] widened to 0.085,
		// would exclude 0.1; the verdict's worst case does not.
		{"short batches, inside the worst case", 0.995, 4000, 0.1, "so far inconclusive", true},
	}
	const tol = 0.2
	for _, cs := range cases {
		t.Run(cs.name, func(t *testing.T) {
			c := &clock{t: time.Unix(0, 0)}
			m := newClocked(t, c, Options{})
			reg := registered(t, m)
			m.StartPhase(0, "p", stablePred(cs.predicted), 0, profiles.Check{Tolerance: fp(tol)})
			rng := rand.New(rand.NewPCG(7, 3))
			scale := 0.2 * math.Sqrt(1-cs.phi*cs.phi)
			e := 0.2 * rng.NormFloat64()
			for i := range cs.n {
				feedErr(m, i, e, c.t)
				e = cs.phi*e + scale*rng.NormFloat64()
				c.t = c.t.Add(10 * time.Millisecond)
			}
			r := m.Phases()[0]
			if !strings.Contains(r.Reason, cs.verdict) {
				t.Fatalf("phase reason %q, want it to say %q", r.Reason, cs.verdict)
			}
			s := gatherAll(t, reg)
			lo, okLo := s.get("rigwire_monitor_phase_error_second_moment_ci_low", "phase=p")
			hi, okHi := s.get("rigwire_monitor_phase_error_second_moment_ci_high", "phase=p")
			if okLo != cs.served || okHi != cs.served {
				t.Fatalf("interval served %v/%v, want %v", okLo, okHi, cs.served)
			}
			ptol, _ := s.get("rigwire_monitor_phase_tolerance_ratio", "phase=p")
			pr, _ := s.get("rigwire_monitor_phase_predicted_error_second_moment", "phase=p")
			running, _ := s.get("rigwire_monitor_phase", "index=0,phase=p")
			alert := cs.served && running == 1 && (lo*(1-ptol) > pr || hi*(1+ptol) < pr)
			verdictOutside := strings.Contains(r.Reason, "measured above") || strings.Contains(r.Reason, "measured below")
			if alert != verdictOutside {
				t.Errorf("alert outside %v, phase verdict %q: [%g, %g] tol %g predicted %g", alert, r.Reason, lo, hi, ptol, pr)
			}
			if cs.phi > 0 && r.CILow != nil && *r.CILow == lo {
				t.Errorf("short batches: exported the estimator's interval %g, want the worst case", lo)
			}
			if cs.phi > 0 && cs.verdict == "so far inconclusive" && !(value(r.CIHigh)*(1+tol) < pr) {
				t.Errorf("case meant to show the worst case's need: the estimator's interval [%v, %v] holds %g", value(r.CILow), value(r.CIHigh), pr)
			}
			t.Logf("%s: exported [%.4g, %.4g], estimator's [%v, %v], predicted %g", r.Reason, lo, hi, value(r.CILow), value(r.CIHigh), pr)
		})
	}
}

// A soak lists its planned phases from its start (PlanPhases), each 0
// until it runs, so that it shows as a soak before its first phase (the
// outside-prediction alert leaves a soak's windows unjudged by the
// presence of these series).
func TestPlannedPhasesListed(t *testing.T) {
	c := &clock{t: time.Unix(0, 0)}
	m := newClocked(t, c, Options{})
	reg := registered(t, m)
	steps := []struct {
		name string
		do   func()
		want map[string]float64
	}{
		{"not a soak", func() {}, map[string]float64{}},
		{"planned", func() { m.PlanPhases([]string{"warm", "storm", "calm"}) },
			map[string]float64{"index=0,phase=warm": 0, "index=1,phase=storm": 0, "index=2,phase=calm": 0}},
		{"first phase running", func() { m.StartPhase(0, "warm", nil, 0, profiles.Check{}) },
			map[string]float64{"index=0,phase=warm": 1, "index=1,phase=storm": 0, "index=2,phase=calm": 0}},
		{"ended early", func() { m.EndPhases(true) },
			map[string]float64{"index=0,phase=warm": 0, "index=1,phase=storm": 0, "index=2,phase=calm": 0}},
	}
	for _, st := range steps {
		t.Run(st.name, func(t *testing.T) {
			st.do()
			got := gatherAll(t, reg)["rigwire_monitor_phase"]
			if len(got) != len(st.want) {
				t.Errorf("phase series %v, want %v", got, st.want)
			}
			for l, v := range st.want {
				if g, ok := got[l]; !ok || g != v {
					t.Errorf("%s: %v (served %v), want %v", l, g, ok, v)
				}
			}
		})
	}
}
