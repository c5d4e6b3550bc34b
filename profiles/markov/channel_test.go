package markov_test

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"

	"rigwire/profiles/laws"
	"rigwire/profiles/markov"
)

func twoState(d1, d2, l1, l2 float64) *markov.Channel {
	return &markov.Channel{States: []markov.State{
		{Name: "good", MeanDwell: d1, Loss: l1, Delay: laws.Constant{}, Jump: []float64{0, 1}},
		{Name: "bad", MeanDwell: d2, Loss: l2, Delay: laws.Constant{}, Jump: []float64{1, 0}},
	}}
}

func threeState() *markov.Channel {
	return &markov.Channel{States: []markov.State{
		{Name: "clear", MeanDwell: 4, Loss: 0.001, Delay: laws.Constant{}, Jump: []float64{0, 0.8, 0.2}},
		{Name: "shadow", MeanDwell: 0.6, Loss: 0.05, Delay: laws.Constant{}, Jump: []float64{0.7, 0, 0.3}},
		{Name: "blocked", MeanDwell: 0.15, Loss: 0.9, Delay: laws.Constant{}, Jump: []float64{0.5, 0.5, 0}},
	}}
}

func iid(loss float64) *markov.Channel {
	return &markov.Channel{States: []markov.State{{Name: "iid", MeanDwell: math.Inf(1), Loss: loss, Delay: laws.Constant{}}}}
}

// TestGenerator checks that rows of the generator sum to 0 and that the
// off-diagonal rates are jump probability over mean dwell (Norris,
// Markov Chains, §2.6, from memory).
func TestGenerator(t *testing.T) {
	const tol = 1e-15
	for _, tc := range []struct {
		name string
		c    *markov.Channel
	}{{"iid", iid(0.1)}, {"two", twoState(4, 0.3, 0, 1)}, {"three", threeState()}} {
		t.Run(tc.name, func(t *testing.T) {
			g := tc.c.Generator()
			n, _ := g.Dims()
			for i := range n {
				if s := mat.Sum(g.RowView(i)); math.Abs(s) > tol {
					t.Errorf("row %d sums to %v", i, s)
				}
				st := tc.c.States[i]
				for j := range n {
					if i != j && st.Jump != nil {
						if want := st.Jump[j] / st.MeanDwell; math.Abs(g.At(i, j)-want) > tol {
							t.Errorf("G[%d][%d] = %v, want %v", i, j, g.At(i, j), want)
						}
					}
				}
			}
		})
	}
}

// TestStationaryTwoState: for two states with mean dwells d₁, d₂ the
// stationary law is π = (d₁, d₂)/(d₁ + d₂) (the fraction of time spent in
// each; hand-computed from π G = 0), and the transition over h has
// P₁₂(h) = π₂ (1 − e^{−(1/d₁ + 1/d₂) h}) (the closed form for a two-state
// chain, e.g. Norris §2.1 example, from memory).
func TestStationaryTwoState(t *testing.T) {
	const tol = 1e-12
	tests := []struct {
		name   string
		d1, d2 float64
	}{{"wifi", 4, 0.3}, {"equal", 1, 1}, {"stiff", 100, 0.01}}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			c := twoState(tt.d1, tt.d2, 0, 0)
			pi := c.Stationary()
			want := []float64{tt.d1 / (tt.d1 + tt.d2), tt.d2 / (tt.d1 + tt.d2)}
			for i := range pi {
				if math.Abs(pi[i]-want[i]) > tol {
					t.Errorf("π = %v, want %v", pi, want)
				}
			}
			for _, h := range []float64{0, 0.001, 0.01, 1, 10} {
				p := c.Transition(h)
				rate := 1/tt.d1 + 1/tt.d2
				if got, want := p.At(0, 1), want[1]*-math.Expm1(-rate*h); math.Abs(got-want) > tol {
					t.Errorf("P12(%v) = %v, want %v", h, got, want)
				}
				for i := range 2 {
					if s := mat.Sum(p.RowView(i)); math.Abs(s-1) > tol {
						t.Errorf("P(%v) row %d sums to %v", h, i, s)
					}
				}
			}
		})
	}
}

// TestStationaryThreeState checks π G = 0, Σ π = 1 and that π is the
// limit of the transition rows (P(h) → 1π as h → ∞).
func TestStationaryThreeState(t *testing.T) {
	const tol = 1e-10
	c := threeState()
	pi := c.Stationary()
	g := c.Generator()
	var r mat.VecDense
	r.MulVec(g.T(), mat.NewVecDense(3, pi))
	if mat.Norm(&r, math.Inf(1)) > tol {
		t.Errorf("π G = %v, want 0", mat.Formatted(r.T()))
	}
	if s := pi[0] + pi[1] + pi[2]; math.Abs(s-1) > tol {
		t.Errorf("Σπ = %v", s)
	}
	p := c.Transition(1000)
	for i := range 3 {
		for j := range 3 {
			if math.Abs(p.At(i, j)-pi[j]) > tol {
				t.Errorf("P(1000s)[%d][%d] = %v, want π_j = %v", i, j, p.At(i, j), pi[j])
			}
		}
	}
	want := pi[0]*0.001 + pi[1]*0.05 + pi[2]*0.9
	if got := c.LongRunLoss(); math.Abs(got-want) > 1e-15 {
		t.Errorf("LongRunLoss = %v, want %v", got, want)
	}
	// The same weights on the delays' means (constant laws: their values).
	c.States[0].Delay, c.States[1].Delay, c.States[2].Delay = laws.Constant{Value: 0.001}, laws.Constant{Value: 0.004}, laws.Constant{Value: 0.02}
	wantDelay := pi[0]*0.001 + pi[1]*0.004 + pi[2]*0.02
	if got := c.LongRunMeanDelay(); math.Abs(got-wantDelay) > 1e-15 {
		t.Errorf("LongRunMeanDelay = %v, want %v", got, wantDelay)
	}
}

// TestLossRuns checks MeanLossBurst and LagOneLoss on cases with closed
// forms:
//   - i.i.d. loss ℓ: runs are geometric, mean 1/(1 − ℓ); lag-one ℓ.
//   - Gilbert's channel (E. N. Gilbert, Bell Syst. Tech. J. 39, 1960): bad
//     state loses all, good none; mean burst 1/(1 − P_bb) exactly, and
//     ≈ d_bad/interval when dwells are long against the interval.
//   - Gilbert–Elliott (Elliott, Bell Syst. Tech. J. 42, 1963) with partial
//     losses and dwells far longer than the interval: runs stay inside one
//     state, so E[run] → Σπ_iℓ_i / Σπ_iℓ_i(1 − ℓ_i) (derived here from the
//     i.i.d. case weighted by time in each state).
func TestLossRuns(t *testing.T) {
	const interval = 1e-3
	g := twoState(5, 0.5, 0, 1)
	pbb := g.Transition(interval).At(1, 1)
	ge := twoState(1e4, 1e3, 0.01, 0.5)
	piG, piB := 1e4/1.1e4, 1e3/1.1e4
	geLimit := (piG*0.01 + piB*0.5) / (piG*0.01*0.99 + piB*0.5*0.5)
	geLag := (piG*0.01*0.01 + piB*0.5*0.5) / (piG*0.01 + piB*0.5)
	tests := []struct {
		name       string
		c          *markov.Channel
		burst, lag float64
		tol        float64 // relative
	}{
		{"iid 2%", iid(0.02), 1 / 0.98, 0.02, 1e-12},
		{"iid 40%", iid(0.4), 1 / 0.6, 0.4, 1e-12},
		{"gilbert exact", g, 1 / (1 - pbb), pbb, 1e-9},
		{"gilbert long dwell", g, 0.5 / interval, 1, 3e-3}, // error ≈ interval/d
		{"gilbert-elliott long dwell", ge, geLimit, geLag, 1e-5},
		{"all lost", iid(1), math.Inf(1), 1, 0},
		{"none lost", iid(0), 0, 0, 0},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			b := tt.c.MeanLossBurst(interval)
			if !closeTo(b, tt.burst, tt.tol) {
				t.Errorf("MeanLossBurst = %.12g, want %.12g", b, tt.burst)
			}
			if l := tt.c.LagOneLoss(interval); math.Abs(l-tt.lag) > math.Max(tt.tol, 1e-15)*math.Max(tt.lag, 1) {
				t.Errorf("LagOneLoss = %.12g, want %.12g", l, tt.lag)
			}
		})
	}
}

// TestLossRunsMonteCarlo is the slow reference beside the closed forms:
// it simulates the three-state chain in continuous time (exponential
// dwells, jumps by Jump) with datagrams every 10 ms, and compares the
// observed mean run of losses and lag-one loss with the formulas. 2·10⁶
// datagrams (about 5.5 hours of channel time) give a few thousand runs;
// the tolerance is 5 %, several standard errors.
func TestLossRunsMonteCarlo(t *testing.T) {
	if testing.Short() {
		t.Skip("slow Monte Carlo reference")
	}
	const (
		interval = 0.01
		n        = 2_000_000
		tol      = 0.05
	)
	c := threeState()
	r := rand.New(rand.NewPCG(7, 11))
	state, left := 0, r.ExpFloat64()*c.States[0].MeanDwell
	var lost, runs, lostLost int
	prev := false
	for range n {
		for left < interval {
			u, j := r.Float64(), 0
			for acc := 0.0; j < len(c.States); j++ {
				acc += c.States[state].Jump[j]
				if u < acc {
					break
				}
			}
			state = min(j, len(c.States)-1)
			left += r.ExpFloat64() * c.States[state].MeanDwell
		}
		left -= interval
		l := r.Float64() < c.States[state].Loss
		if l {
			lost++
			if prev {
				lostLost++
			} else {
				runs++
			}
		}
		prev = l
	}
	burst := float64(lost) / float64(runs)
	lag := float64(lostLost) / float64(lost)
	if want := c.MeanLossBurst(interval); math.Abs(burst-want) > tol*want {
		t.Errorf("simulated mean burst %.4g, formula %.4g", burst, want)
	}
	if want := c.LagOneLoss(interval); math.Abs(lag-want) > tol*want {
		t.Errorf("simulated lag-one loss %.4g, formula %.4g", lag, want)
	}
	if want := c.LongRunLoss(); math.Abs(float64(lost)/n-want) > tol*want {
		t.Errorf("simulated loss %.4g, formula %.4g", float64(lost)/n, want)
	}
}

func closeTo(got, want, rel float64) bool {
	if math.IsInf(want, 0) || math.IsInf(got, 0) {
		return got == want
	}
	return math.Abs(got-want) <= rel*math.Max(math.Abs(want), 1e-300)
}
