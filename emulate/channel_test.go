package emulate

import (
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"gonum.org/v1/gonum/mat"

	"rigwire/profiles/laws"
	"rigwire/profiles/markov"
)

// generator builds Q from the channel's mean dwells and jump weights, here
// in the test, apart from the package's own code: q_ij = Jump_ij / dwell_i,
// q_ii = −1/dwell_i (continuous-time Markov chain with exponential
// sojourns; Norris, Markov Chains, 1997, §2.6 — from memory).
func generator(ch *markov.Channel) *mat.Dense {
	n := len(ch.States)
	q := mat.NewDense(n, n, nil)
	for i, st := range ch.States {
		for j, w := range st.Jump {
			q.Set(i, j, w/st.MeanDwell)
		}
		q.Set(i, i, -1/st.MeanDwell)
	}
	return q
}

// stationaryByPower is π from a row of P^(2^k) = expm(Q h)^(2^k), which
// converges to π for an irreducible chain: slow and obviously right. Rows
// are renormalised after each squaring so that rounding does not grow.
func stationaryByPower(p *mat.Dense) []float64 {
	var m mat.Dense
	m.CloneFrom(p)
	n, _ := m.Dims()
	for range 40 {
		m.Mul(&m, &m)
		for i := range n {
			row := m.RawRowView(i)
			s := 0.0
			for _, v := range row {
				s += v
			}
			for j := range row {
				row[j] /= s
			}
		}
	}
	return mat.Row(nil, 0, &m)
}

var testChannels = map[string]*markov.Channel{
	"gilbert-elliott": {States: []markov.State{
		{Name: "good", MeanDwell: 0.4, Loss: 0.01, Delay: laws.Constant{}, Jump: []float64{0, 1}},
		{Name: "bad", MeanDwell: 0.06, Loss: 0.6, Delay: laws.Constant{}, Jump: []float64{1, 0}},
	}},
	"three-state": {States: []markov.State{
		{Name: "clear", MeanDwell: 0.5, Loss: 0.0, Delay: laws.Constant{}, Jump: []float64{0, 0.8, 0.2}},
		{Name: "shadow", MeanDwell: 0.1, Loss: 0.2, Delay: laws.Constant{}, Jump: []float64{0.7, 0, 0.3}},
		{Name: "outage", MeanDwell: 0.03, Loss: 1.0, Delay: laws.Constant{}, Jump: []float64{0.5, 0.5, 0}},
	}},
}

// The relay's decisions, datagram by datagram at a fixed interval h, have
// the long-run loss π·ℓ and the lag-one conditional loss
// P(lost k+1 | lost k) = π diag(ℓ) P diag(ℓ) 1 / π·ℓ with P = expm(Q h), the
// transition matrix over one interval of the continuous-time chain (Gilbert
// 1960 for two states; the same hidden-Markov algebra for more).
func TestChannelLossMatchesMatrixExponential(t *testing.T) {
	const (
		h = 0.01    // seconds between datagrams
		n = 400_000 // datagrams
		z = 4.5     // tolerance in batch-means standard errors
	)
	for name, ch := range testChannels {
		t.Run(name, func(t *testing.T) {
			var P mat.Dense
			var qh mat.Dense
			qh.Scale(h, generator(ch))
			P.Exp(&qh)
			pi := stationaryByPower(&P)
			ell := make([]float64, len(pi))
			wantLoss := 0.0
			for i, st := range ch.States {
				ell[i] = st.Loss
				wantLoss += pi[i] * st.Loss
			}
			both := 0.0
			for i := range pi {
				for j := range pi {
					both += pi[i] * ell[i] * P.At(i, j) * ell[j]
				}
			}
			wantLag1 := both / wantLoss

			d, _ := newTestDirection(t, ch, 16)
			batch := []message{{buf: make([]byte, 16), n: 1, addr: sensorAddr}}
			lost := make([]bool, n)
			imm := make([]message, 0, 1)
			meta := make([]immediate, 0, 1)
			for k := range n {
				imm, meta = d.admit(batch, controllerAddr, int64(float64(k)*h*1e9), imm[:0], meta[:0])
				lost[k] = len(imm) == 0
			}
			loss, lossSE := batchMeans(n, func(k int) float64 { return b2f(lost[k]) })
			pairs, pairsSE := batchMeans(n-1, func(k int) float64 { return b2f(lost[k] && lost[k+1]) })
			lag1 := pairs / loss
			lag1SE := lag1 * math.Hypot(pairsSE/pairs, lossSE/loss)
			t.Logf("long-run loss %.5f ± %.5f (want %.5f); lag-one %.4f ± %.4f (want %.4f)", loss, lossSE, wantLoss, lag1, lag1SE, wantLag1)
			if math.Abs(loss-wantLoss) > z*lossSE {
				t.Errorf("long-run loss %.5f, want %.5f ± %.5f", loss, wantLoss, z*lossSE)
			}
			if math.Abs(lag1-wantLag1) > z*lag1SE {
				t.Errorf("lag-one loss %.4f, want %.4f ± %.4f", lag1, wantLag1, z*lag1SE)
			}
		})
	}
}

// batchMeans estimates the mean of x_0..x_{n-1} and its standard error from
// 50 batch means, which is valid for the correlated samples a Markov
// channel gives (Law & Kelton, Simulation Modeling and Analysis, §9.5.3).
func batchMeans(n int, x func(int) float64) (mean, se float64) {
	const batches = 50
	size := n / batches
	var m [batches]float64
	for b := range batches {
		s := 0.0
		for k := b * size; k < (b+1)*size; k++ {
			s += x(k)
		}
		m[b] = s / float64(size)
		mean += m[b] / batches
	}
	v := 0.0
	for _, mb := range m {
		v += (mb - mean) * (mb - mean)
	}
	return mean, math.Sqrt(v / (batches - 1) / batches)
}

func b2f(b bool) float64 {
	if b {
		return 1
	}
	return 0
}

// Sojourns are exponential with the configured mean, and jumps follow the
// configured weights: each mean within 4.5 standard errors (an exponential
// sojourn's standard deviation equals its mean; a jump share is binomial).
func TestChannelDwellAndJumps(t *testing.T) {
	const sojourns = 200_000
	for name, ch := range testChannels {
		t.Run(name, func(t *testing.T) {
			c := newChain(ch, rand.New(rand.NewPCG(3, 4)), 0)
			n := len(ch.States)
			sum := make([]float64, n)
			count := make([]int, n)
			jumps := make([][]int, n)
			for i := range jumps {
				jumps[i] = make([]int, n)
			}
			enter := int64(0)
			for range sojourns {
				from, leave := c.cur, c.next
				c.at(leave)
				sum[from] += float64(leave-enter) / 1e9
				count[from]++
				jumps[from][c.cur]++
				enter = leave
			}
			for i, st := range ch.States {
				mean := sum[i] / float64(count[i])
				se := st.MeanDwell / math.Sqrt(float64(count[i]))
				if math.Abs(mean-st.MeanDwell) > 4.5*se {
					t.Errorf("%s: mean dwell %.5fs, want %.5fs ± %.5f", st.Name, mean, st.MeanDwell, 4.5*se)
				}
				for j, w := range st.Jump {
					share := float64(jumps[i][j]) / float64(count[i])
					se := math.Sqrt(w*(1-w)/float64(count[i])) + 1e-12
					if math.Abs(share-w) > 4.5*se {
						t.Errorf("%s→%s: share %.4f, want %.4f", st.Name, ch.States[j].Name, share, w)
					}
				}
			}
		})
	}
}

// With the same seed the relay draws the same fates for the same arrival
// times.
func TestDecisionsReproducible(t *testing.T) {
	ch := testChannels["gilbert-elliott"]
	fates := func() []bool {
		d, _ := newTestDirection(t, ch, 16)
		batch := []message{{buf: make([]byte, 16), n: 1}}
		out := make([]bool, 5000)
		for k := range out {
			imm, _ := d.admit(batch, controllerAddr, int64(k)*int64(7*time.Millisecond), nil, nil)
			out[k] = len(imm) == 1
		}
		return out
	}
	a, b := fates(), fates()
	for k := range a {
		if a[k] != b[k] {
			t.Fatalf("datagram %d: fates differ between two runs with one seed", k)
		}
	}
}
