package estimate

import (
	"fmt"
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/stat/distuv"
)

// Almost-sure stability (estimate/model.md §16). The noise-free loop
// z_{k+1} = F_k z_k, F_k the matrix of period k's mode, is almost surely
// stable when its top Lyapunov exponent
//
//	λ = lim_{K→∞} (1/K) log ‖F_{K−1} ⋯ F_1 F_0 z_0‖
//
// is negative (the limit exists and is the same for almost every path
// and start, by the theorem of Furstenberg and Kesten for a stationary
// ergodic sequence of matrices). It is estimated here by simulating one
// long product from the jump system's own modes, renormalised at every
// step, with an interval from batch means of the per-step log growth.
// Jensen's inequality gives λ ≤ ½ log ρ(ℒ) for the second-moment
// operator ℒ, so a mean-square stable loop is almost surely stable; the
// converse fails when rare long outages make E[eᵀe] infinite while
// almost every run settles.

// AlmostSure is the almost-sure stability of a loop.
type AlmostSure struct {
	// Exponent is the estimated top Lyapunov exponent λ per period
	// (natural log), with its confidence interval [Low, High]. −Inf when
	// the product reaches zero exactly (every run settles in finitely
	// many periods).
	Exponent, Low, High float64
	// Steps and Batches are the product's length and the batches of its
	// interval.
	Steps, Batches int
	// Stability is StabilityStable when High < 0, StabilityUnstable when
	// Low > 0, else StabilityMarginal (the estimate cannot tell).
	Stability string
	// LossMargin is the extra loss on every packet at which the point
	// estimate of λ reaches 0 (1: never), NaN when not computed; its
	// resolution is almostSureMarginStep.
	LossMargin float64
}

// Settings of the estimate: a fixed seed (the same loop gets the same
// answer), a burn-in that forgets the start vector, 40 batches.
const (
	lyapSeed             = 7
	lyapSteps            = 200000
	lyapBurnIn           = 2000
	lyapBatches          = 40
	lyapMarginSteps      = 50000
	almostSureMarginStep = 0.01
)

// jumpSampler draws the jump system's modes period by period: from chain
// state i, a (mode, next state) pair with probability p·w.
type jumpSampler struct {
	nz     int
	pi     []float64
	states [][]jumpChoice
}

type jumpChoice struct {
	cum float64   // cumulative probability within the state
	f   []float64 // F, row major
	to  int
}

func (md *Model) newJumpSampler() (*jumpSampler, error) {
	if md.buildErr != nil {
		return nil, md.buildErr
	}
	nz := md.lm.nz
	js := &jumpSampler{nz: nz, pi: md.Pi, states: make([][]jumpChoice, md.nStates())}
	for _, fl := range md.flows() {
		for _, wm := range fl.modes {
			pw := fl.p * wm.w
			if pw <= 0 {
				continue
			}
			raw := make([]float64, nz*nz)
			for a := 0; a < nz; a++ {
				for b := 0; b < nz; b++ {
					raw[a*nz+b] = wm.F.At(a, b)
				}
			}
			js.states[fl.from] = append(js.states[fl.from], jumpChoice{cum: pw, f: raw, to: fl.to})
		}
	}
	for i, cs := range js.states {
		total := 0.0
		for k := range cs {
			total += cs[k].cum
			cs[k].cum = total
		}
		if len(cs) == 0 || !(total > 0) {
			if js.pi[i] > 0 {
				return nil, fmt.Errorf("chain state %d has no mode to draw", i)
			}
			continue
		}
		// The quadrature's weights add up to the state's mass to
		// rounding: normalise.
		for k := range cs {
			cs[k].cum /= total
		}
	}
	return js, nil
}

// exponent estimates λ from steps periods after the burn-in.
func (js *jumpSampler) exponent(steps, batches int, seed uint64) AlmostSure {
	rng := rand.New(rand.NewPCG(seed, 0))
	nz := js.nz
	z, next := make([]float64, nz), make([]float64, nz)
	for a := range z {
		z[a] = rng.NormFloat64()
	}
	normalise(z)
	state := draw(rng, js.pi)
	step := func() float64 {
		cs := js.states[state]
		u := rng.Float64()
		k := 0
		for k < len(cs)-1 && cs[k].cum <= u {
			k++
		}
		c := &cs[k]
		for a := 0; a < nz; a++ {
			s := 0.0
			row := c.f[a*nz : (a+1)*nz]
			for b, v := range row {
				s += v * z[b]
			}
			next[a] = s
		}
		z, next = next, z
		state = c.to
		return normalise(z)
	}
	out := AlmostSure{Steps: steps, Batches: batches, LossMargin: math.NaN()}
	for range lyapBurnIn {
		if n := step(); n == 0 {
			return settled(out)
		}
	}
	per := steps / batches
	means := make([]float64, batches)
	for b := range means {
		s := 0.0
		for range per {
			n := step()
			if n == 0 {
				return settled(out)
			}
			s += math.Log(n)
		}
		means[b] = s / float64(per)
	}
	m, v := 0.0, 0.0
	for _, x := range means {
		m += x
	}
	m /= float64(batches)
	for _, x := range means {
		v += (x - m) * (x - m)
	}
	v /= float64(batches - 1)
	t := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(batches - 1)}.Quantile(0.975)
	half := t * math.Sqrt(v/float64(batches))
	out.Exponent, out.Low, out.High = m, m-half, m+half
	switch {
	case out.High < 0:
		out.Stability = StabilityStable
	case out.Low > 0:
		out.Stability = StabilityUnstable
	default:
		out.Stability = StabilityMarginal
	}
	return out
}

// settled is the answer when the product reaches zero exactly.
func settled(a AlmostSure) AlmostSure {
	a.Exponent, a.Low, a.High = math.Inf(-1), math.Inf(-1), math.Inf(-1)
	a.Stability = StabilityStable
	return a
}

// normalise scales z to unit length and returns its former length (0
// when z is zero, which it leaves).
func normalise(z []float64) float64 {
	s := 0.0
	for _, v := range z {
		s += v * v
	}
	n := math.Sqrt(s)
	if n == 0 || math.IsInf(n, 0) || math.IsNaN(n) {
		return n
	}
	for a := range z {
		z[a] /= n
	}
	return n
}

// AlmostSure estimates the loop's top Lyapunov exponent (estimate/model.md
// §16); with margin, also the extra loss at which it reaches 0.
func (md *Model) AlmostSure(margin bool) (AlmostSure, error) {
	js, err := md.newJumpSampler()
	if err != nil {
		return AlmostSure{}, err
	}
	out := js.exponent(lyapSteps, lyapBatches, lyapSeed)
	if math.IsNaN(out.Exponent) || math.IsInf(out.Exponent, 1) {
		return out, fmt.Errorf("the Lyapunov exponent overflowed (the loop's matrices grow beyond floating point in one period)")
	}
	if margin {
		out.LossMargin, err = md.almostSureMargin(out)
		if err != nil {
			return out, err
		}
	}
	return out, nil
}

// almostSureMargin scans the extra loss q in steps of
// almostSureMarginStep for the first point where the estimated λ (same
// seed at every q: common random numbers) is no longer negative, and
// returns the last q where it was (0 when not stable at q = 0, 1 when
// negative all the way).
func (md *Model) almostSureMargin(at0 AlmostSure) (float64, error) {
	if !(at0.Exponent < 0) {
		return 0, nil
	}
	saved := md.opts.ExtraLoss
	defer md.setLoss(saved)
	prev := 0.0
	steps := int(math.Round(1 / almostSureMarginStep))
	for k := 1; k <= steps; k++ {
		q := float64(k) * almostSureMarginStep
		if k == steps {
			q = 1 - almostSureMarginStep/2
		}
		md.setLoss(1 - (1-saved)*(1-q))
		js, err := md.newJumpSampler()
		if err != nil {
			return math.NaN(), fmt.Errorf("almost-sure margin at extra loss %g: %w", q, err)
		}
		if a := js.exponent(lyapMarginSteps, lyapBatches, lyapSeed); !(a.Exponent < 0) {
			return prev, nil
		}
		prev = q
	}
	return 1, nil
}
