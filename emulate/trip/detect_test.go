package trip

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

// exact is the tolerance for sums recomputed from the same numbers in
// another order (a few ulps of values near 1).
const exact = 1e-12

func TestNewDetectorValidates(t *testing.T) {
	const period = 0.01
	for _, c := range []struct {
		name string
		rule Rule
		want string // "" when accepted
	}{
		{"abs bound, short window unused", Rule{MaxAbsError: 1, Window: 0.01}, ""},
		{"window 0 is the default", Rule{MaxSecondMoment: 1}, ""},
		{"exactly two periods", Rule{MaxRatio: 2, Window: 0.02}, ""},
		{"window under two periods", Rule{MaxSecondMoment: 1, Window: 0.01}, "trip: window 0.01s: want at least two periods (0.01s each) and at most 2²⁶, got 1 samples"},
		{"negative bound", Rule{MaxAbsError: -1}, "trip: max_abs_error: want a number ≥ 0, got -1"},
		{"NaN ratio", Rule{MaxRatio: math.NaN()}, "trip: max_ratio: want a number ≥ 0, got NaN"},
		{"infinite window", Rule{MaxAbsError: 1, Window: math.Inf(1)}, "trip: window: want a number ≥ 0, got +Inf"},
	} {
		t.Run(c.name, func(t *testing.T) {
			d, err := NewDetector(c.rule, period)
			switch {
			case c.want == "" && err != nil:
				t.Fatalf("refused: %v", err)
			case c.want != "" && (err == nil || err.Error() != c.want):
				t.Fatalf("got %v, want %s", err, c.want)
			case c.want == "" && d.Rule().Window == 0:
				t.Errorf("window left 0, want the default %g s", DefaultWindow)
			}
		})
	}
}

// The bounds are checked in the order of Reasons: a sample that crosses
// the abs bound fires it even when the window would fire too.
func TestCheckOrder(t *testing.T) {
	d, err := NewDetector(Rule{MaxAbsError: 0.5, MaxSecondMoment: 0.01, Window: 0.02}, 0.01)
	if err != nil {
		t.Fatal(err)
	}
	if c, fired := d.Check([]float64{0.2}, 0.04, 1); fired {
		t.Fatalf("fired on the first sample (window not full): %+v", c)
	}
	c, fired := d.Check([]float64{0.1, -0.7}, 0.5, 1)
	if !fired || c.Reason != ReasonAbsError || c.Value != 0.7 || c.Bound != 0.5 {
		t.Errorf("got %+v %v, want abs_error 0.7 above 0.5", c, fired)
	}
}

// The windowed mean fires on the exact sample where the mean of the last
// n x_k first exceeds the bound, computed by brute force (seeded).
func TestCheckSecondMomentBruteForce(t *testing.T) {
	const n, bound = 7, 0.05
	for seed := range uint64(20) {
		d, err := NewDetector(Rule{MaxSecondMoment: bound, Window: 0.07}, 0.01)
		if err != nil {
			t.Fatal(err)
		}
		r := rand.New(rand.NewPCG(seed, 2))
		var xs []float64
		firedAt := -1
		for k := 0; k < 5000 && firedAt < 0; k++ {
			e := (r.Float64()*2 - 1) * (0.1 + 0.3*float64(k)/5000)
			x := e * e
			xs = append(xs, x)
			want := false
			mean := math.NaN()
			if len(xs) >= n {
				s := 0.0
				for _, v := range xs[len(xs)-n:] {
					s += v
				}
				mean = s / n
				want = mean > bound
			}
			c, fired := d.Check([]float64{e}, x, math.NaN())
			if fired != want && math.Abs(mean-bound) > exact {
				t.Fatalf("seed %d, sample %d: fired %v (%+v), brute-force mean %g", seed, k, fired, c, mean)
			}
			if fired {
				if c.Reason != ReasonSecondMoment || math.Abs(c.Value-mean) > exact || c.Bound != bound {
					t.Errorf("seed %d: crossing %+v, brute-force mean %g", seed, c, mean)
				}
				firedAt = k
			}
		}
		if firedAt < 0 {
			t.Errorf("seed %d: never fired", seed)
		}
	}
}

// Over many wraps the running mean stays the brute-force mean: the sum is
// recomputed at each wrap, so rounding does not drift.
func TestWindowDoesNotDrift(t *testing.T) {
	const n = 10
	d, err := NewDetector(Rule{MaxSecondMoment: math.MaxFloat64, Window: 0.2}, 0.02)
	if err != nil {
		t.Fatal(err)
	}
	if w, ok := d.Window(); !ok || !math.IsNaN(w.Mean) || w.Samples != n || w.Seconds != 0.2 {
		t.Fatalf("empty window %+v %v, want NaN over %d samples of 0.2 s", w, ok, n)
	}
	r := rand.New(rand.NewPCG(3, 4))
	var xs []float64
	for k := 0; k < 100003; k++ {
		x := r.ExpFloat64() * math.Pow(10, float64(r.IntN(7)-3)) // values over six decades
		xs = append(xs, x)
		d.Check(nil, x, math.NaN())
	}
	s := 0.0
	for _, v := range xs[len(xs)-n:] {
		s += v
	}
	w, _ := d.Window()
	if rel := math.Abs(w.Mean-s/n) / (s / n); rel > 1e-9 {
		t.Errorf("mean %g, brute force %g (relative error %g)", w.Mean, s/n, rel)
	}
}

// The ratio is judged only against a positive, finite prediction.
func TestCheckRatio(t *testing.T) {
	for _, c := range []struct {
		name      string
		predicted float64
		fires     bool
	}{
		{"stable prediction", 0.01, true},
		{"not certified stable (NaN)", math.NaN(), false},
		{"zero prediction", 0, false},
	} {
		t.Run(c.name, func(t *testing.T) {
			d, err := NewDetector(Rule{MaxRatio: 2, Window: 0.02}, 0.01)
			if err != nil {
				t.Fatal(err)
			}
			d.Check(nil, 0.04, c.predicted)
			cr, fired := d.Check(nil, 0.04, c.predicted)
			if fired != c.fires {
				t.Fatalf("fired %v (%+v), want %v", fired, cr, c.fires)
			}
			if fired && (cr.Reason != ReasonRatio || math.Abs(cr.Value-4) > exact || cr.Bound != 2) {
				t.Errorf("crossing %+v, want ratio 4 above 2", cr)
			}
		})
	}
}

func TestDetectorWithoutWindow(t *testing.T) {
	var none *Detector
	if none.Armed() {
		t.Error("a nil detector is armed")
	}
	if _, ok := none.Window(); ok {
		t.Error("a nil detector has a window")
	}
	d, err := NewDetector(Rule{MaxAbsError: 1}, 0.01)
	if err != nil {
		t.Fatal(err)
	}
	if !d.Armed() {
		t.Error("abs bound not armed")
	}
	if _, ok := d.Window(); ok {
		t.Error("abs bound alone has a window")
	}
	if d, _ := NewDetector(Rule{}, 0.01); d.Armed() {
		t.Error("no bound, armed")
	}
}

// Check does not allocate: the monitor calls it for every datagram.
func TestCheckDoesNotAllocate(t *testing.T) {
	d, err := NewDetector(Rule{MaxAbsError: 10, MaxSecondMoment: 10, MaxRatio: 1e6, Window: 0.05}, 0.01)
	if err != nil {
		t.Fatal(err)
	}
	e := []float64{0.1, 0.2}
	if n := testing.AllocsPerRun(1000, func() { d.Check(e, 0.05, 0.01) }); n != 0 {
		t.Errorf("%v allocations per sample", n)
	}
}

func TestReasonsAreTheWireAlphabet(t *testing.T) {
	for _, r := range Reasons {
		if got, err := Decode(Encode(r)); err != nil || got != r || strings.ToLower(r) != r {
			t.Errorf("reason %q does not travel unchanged: %q, %v", r, got, err)
		}
	}
}
