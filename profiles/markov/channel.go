package markov

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// Generator returns the chain's generator matrix (transition-rate matrix)
//
//	G_ij = Jump_i[j] / MeanDwell_i  (i ≠ j),   G_ii = −Σ_{j≠i} G_ij,
//
// so each row sums to 0 (J. R. Norris, Markov Chains, 1997, §2.1: a
// jump chain with holding rates 1/MeanDwell). A one-state channel gives
// [[0]]. (Often written Q; here it is named apart from the second
// moments.) The section numbers of Norris here and below are from memory.
func (c *Channel) Generator() *mat.Dense {
	n := len(c.States)
	g := mat.NewDense(n, n, nil)
	for i, s := range c.States {
		if math.IsInf(s.MeanDwell, 1) || s.Jump == nil {
			continue
		}
		sum := 0.0
		for j, p := range s.Jump {
			if j == i || p == 0 {
				continue
			}
			r := p / s.MeanDwell
			g.Set(i, j, r)
			sum += r
		}
		g.Set(i, i, -sum)
	}
	return g
}

// Transition returns P(h) = exp(G h), the probabilities P_ij of being in
// state j a time h ≥ 0 after being in state i (Kolmogorov's forward
// equation; Norris §2.8), computed with gonum's mat.Exp (Higham's scaling
// and squaring, Algorithm 10.20).
//
// h = +Inf gives the limit, every row π; h must not be negative or NaN.
func (c *Channel) Transition(h float64) *mat.Dense {
	if !(h >= 0) {
		panic("profiles: Transition of a negative or NaN time")
	}
	if math.IsInf(h, 1) {
		n := len(c.States)
		pi := c.Stationary()
		p := mat.NewDense(n, n, nil)
		for i := range n {
			p.SetRow(i, pi)
		}
		return p
	}
	g := c.Generator()
	g.Scale(h, g)
	var p mat.Dense
	p.Exp(g)
	return &p
}

// Stationary returns the stationary distribution π, the solution of
// π G = 0 with Σ π_i = 1 (Norris §3.5), by the Grassmann–Taksar–Heyman
// elimination (W. K. Grassmann, M. I. Taksar, D. P. Heyman, "Regenerative
// analysis and steady state distributions for Markov chains", Operations
// Research 33(5), 1985, 1107–1116): states are censored out one by one from
// the last, using only additions, multiplications and divisions of
// non-negative numbers, so it stays accurate when dwell times differ by
// many orders of magnitude. For two states it gives π = (d₁, d₂)/(d₁ + d₂),
// d the mean dwells. It needs an irreducible chain, which the loader
// ensures; for one that is not, the unreachable states get π = 0.
func (c *Channel) Stationary() []float64 {
	n := len(c.States)
	if n == 1 {
		return []float64{1}
	}
	g := c.Generator()
	a := make([][]float64, n)
	for i := range a {
		a[i] = make([]float64, n)
		for j := range a[i] {
			if i != j {
				a[i][j] = g.At(i, j)
			}
		}
	}
	for k := n - 1; k > 0; k-- {
		s := 0.0
		for j := range k {
			s += a[k][j]
		}
		if s == 0 {
			continue // k cannot reach the states before it
		}
		for i := range k {
			a[i][k] /= s
		}
		for i := range k {
			if a[i][k] == 0 {
				continue
			}
			for j := range k {
				a[i][j] += a[i][k] * a[k][j]
			}
		}
	}
	pi := make([]float64, n)
	pi[0] = 1
	sum := 1.0
	for k := 1; k < n; k++ {
		for i := range k {
			pi[k] += pi[i] * a[i][k]
		}
		sum += pi[k]
	}
	for i := range pi {
		pi[i] /= sum
	}
	return pi
}

// LongRunLoss is the long-run fraction of datagrams lost, Σ π_i loss_i.
func (c *Channel) LongRunLoss() float64 {
	pi := c.Stationary()
	s := 0.0
	for i, st := range c.States {
		s += pi[i] * st.Loss
	}
	return s
}

// LongRunMeanDelay is the mean delay of a datagram the channel keeps, in
// the long run: Σ π_i E[delay | state i], the states weighted by their
// stationary law (the loss is not counted). A state whose law has no mean
// makes it +Inf.
func (c *Channel) LongRunMeanDelay() float64 {
	pi := c.Stationary()
	s := 0.0
	for i, st := range c.States {
		if pi[i] > 0 {
			s += pi[i] * st.Delay.Mean()
		}
	}
	return s
}

// lossPairs returns, for datagrams sent every interval seconds with the
// chain in its stationary law, P(L_k = 1) = π·ℓ, P(L_k = 1, L_k+1 = 1) =
// π diag(ℓ) P ℓ and P(L_k = 1, L_k+1 = 0) = π diag(ℓ) P (1 − ℓ), where
// P = exp(G·interval) and losses are independent given the states.
func (c *Channel) lossPairs(interval float64) (lost, lostLost, lostKept float64) {
	pi := c.Stationary()
	p := c.Transition(interval)
	for i, si := range c.States {
		a := pi[i] * si.Loss
		if a == 0 {
			continue
		}
		lost += a
		for j, sj := range c.States {
			pij := p.At(i, j)
			lostLost += a * pij * sj.Loss
			lostKept += a * pij * (1 - sj.Loss)
		}
	}
	return lost, lostLost, lostKept
}

// MeanLossBurst is the mean length, in datagrams, of a run of consecutive
// losses among datagrams sent every interval seconds, in steady state:
//
//	E[run] = P(L_k = 1) / P(L_k = 1, L_k+1 = 0) = (π·ℓ) / (π diag(ℓ) P (1 − ℓ)),
//
// P = exp(G·interval), ℓ the states' loss probabilities: the number of
// runs per datagram is the rate at which a loss is followed by a
// delivery. For one state (i.i.d. loss ℓ) it is 1/(1 − ℓ), the mean of a
// geometric run; for Gilbert's channel (E. N. Gilbert, "Capacity of a
// burst-noise channel", Bell Syst. Tech. J. 39, 1960) with a bad state
// that loses everything and a good one that loses nothing it is
// 1/(1 − P_bb). It is +Inf when a loss is never followed by a delivery
// (loss 1), and 0 when the channel never loses anything (no runs at all).
func (c *Channel) MeanLossBurst(interval float64) float64 {
	lost, _, lostKept := c.lossPairs(interval)
	switch {
	case lost == 0:
		return 0
	case lostKept <= 0:
		return math.Inf(1)
	}
	return lost / lostKept
}

// LagOneLoss is P(L_k+1 = 1 | L_k = 1) for datagrams sent every interval
// seconds in steady state: π diag(ℓ) P ℓ / (π·ℓ), with P and ℓ as in
// MeanLossBurst. For i.i.d. loss it is ℓ itself; a burst channel gives
// more. It is 0 when the channel never loses anything.
func (c *Channel) LagOneLoss(interval float64) float64 {
	lost, lostLost, _ := c.lossPairs(interval)
	if lost == 0 {
		return 0
	}
	return math.Min(1, lostLost/lost)
}
