package estimate

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"rigwire/profiles"
)

// transition returns a direction's transition matrix over one period,
// P = expm(Q h) (MODEL.md §2), Q the generator of the channel's
// continuous-time chain: Q_ii = −1/mean_dwell_i, Q_ij = jump_ij/mean_dwell_i.
func transition(ch *profiles.Channel, h float64) (*mat.Dense, error) {
	n := len(ch.States)
	if n == 0 {
		return nil, fmt.Errorf("channel has no states")
	}
	if n == 1 {
		return mat.NewDense(1, 1, []float64{1}), nil
	}
	q := mat.NewDense(n, n, nil)
	for i, s := range ch.States {
		if !(s.MeanDwell > 0) {
			return nil, fmt.Errorf("state %d: want a mean dwell > 0, got %g", i, s.MeanDwell)
		}
		if math.IsInf(s.MeanDwell, 1) {
			continue
		}
		rate := 1 / s.MeanDwell
		q.Set(i, i, -rate)
		for j, w := range s.Jump {
			if j != i {
				q.Set(i, j, rate*w)
			}
		}
	}
	q.Scale(h, q)
	var p mat.Dense
	p.Exp(q)
	// Clean rounding: entries ≥ 0, rows summing to 1.
	for i := 0; i < n; i++ {
		sum := 0.0
		for j := 0; j < n; j++ {
			v := math.Max(0, p.At(i, j))
			p.Set(i, j, v)
			sum += v
		}
		for j := 0; j < n; j++ {
			p.Set(i, j, p.At(i, j)/sum)
		}
	}
	return &p, nil
}

// stationary returns the stationary law π = π P of an irreducible
// stochastic matrix, from the linear system (Pᵀ − I) π = 0 with one
// equation replaced by Σ π = 1.
func stationary(p *mat.Dense) []float64 {
	n, _ := p.Dims()
	if n == 1 {
		return []float64{1}
	}
	a := mat.NewDense(n, n, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			a.Set(i, j, p.At(j, i))
		}
		a.Set(i, i, a.At(i, i)-1)
	}
	for j := 0; j < n; j++ {
		a.Set(n-1, j, 1)
	}
	b := mat.NewVecDense(n, nil)
	b.SetVec(n-1, 1)
	var x mat.VecDense
	if err := x.SolveVec(a, b); err != nil {
		// Reducible chain: fall back to the Cesàro average of the rows
		// started uniform.
		pi := make([]float64, n)
		for i := range pi {
			pi[i] = 1 / float64(n)
		}
		for range 10000 {
			next := make([]float64, n)
			for i := 0; i < n; i++ {
				for j := 0; j < n; j++ {
					next[j] += pi[i] * p.At(i, j)
				}
			}
			pi = next
		}
		return pi
	}
	out := make([]float64, n)
	sum := 0.0
	for i := range out {
		out[i] = math.Max(0, x.AtVec(i))
		sum += out[i]
	}
	for i := range out {
		out[i] /= sum
	}
	return out
}
