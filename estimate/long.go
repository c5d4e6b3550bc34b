package estimate

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// errChainTooLarge marks a loop whose exact long-delay chain exceeds
// MaxOperatorSide: Predict falls back to Monte Carlo for it.
var errChainTooLarge = errors.New("the exact chain is too large")

// ErrNoExactChain is returned by Build for a loop the exact model does not
// cover (estimate/model.md §13): a sample horizon above one period, or a
// chain beyond MaxOperatorSide. Predict answers such a loop by Monte
// Carlo from the same rules and says so (TimingReport.Method).
var ErrNoExactChain = errors.New("no exact jump linear system for this timing policy")

// nStates is the number of states of the chain the operators act on.
func (md *Model) nStates() int {
	if md.long != nil {
		return len(md.long.groups)
	}
	return len(md.States)
}

// buildLong builds the model of a command horizon above one period
// (estimate/model.md §13) on a Model whose loop matrices, network chain
// and options are set.
func (md *Model) buildLong(na int) error {
	loop, opts := md.Loop, md.opts
	n, m, p, nc := loop.Dims()
	h := loop.Period
	ly := longLayout{n: n, m: m, p: p, nc: nc, na: na, nz: n + m*na + nc}
	md.lm.nz = ly.nz
	sc, ca := loop.Profile.SensorToController, loop.Profile.ControllerToActuator
	q := opts.ExtraLoss
	var per []thetaLaws
	md.States = md.States[:0]
	for i, s := range sc.States {
		for j, a := range ca.States {
			dsc := scaleDelay(s.Delay, opts.DelayScale)
			js := JointState{Name: stateName(sc, i) + "/" + stateName(ca, j)}
			dca, err := md.commandLaw(j, a.Delay, float64(na)*h)
			if err != nil {
				return fmt.Errorf("network state %s: %w", js.Name, err)
			}
			js.baseSC, js.baseCA = s.Loss, a.Loss
			js.LossSC = s.Loss + (1-s.Loss)*q
			js.LossCA = a.Loss + (1-a.Loss)*q
			js.OnTimeSC = laws.ProbBelow(dsc, h)
			psc, err := splitLaw(dsc)
			if err != nil {
				return fmt.Errorf("network state %s: sensor_to_controller: %w", js.Name, err)
			}
			pca, err := splitLaw(dca)
			if err != nil {
				return fmt.Errorf("network state %s: controller_to_actuator: %w", js.Name, err)
			}
			top := float64(na) * h
			k := len(per)
			if k >= len(md.longLaws) {
				// The arrival laws do not depend on the losses: built once,
				// kept for rebuilds at another extra loss (setLoss).
				tl, err := newTotalLaw(psc, pca, h, loop.ComputeFloor(), top, js.OnTimeSC)
				if err != nil {
					return fmt.Errorf("network state %s: %w", js.Name, err)
				}
				md.longLaws = append(md.longLaws, thetaLaws{tl: tl, grid: newPeriodGrid(tl, na, loop.Plant.A, loop.Plant.B, h)})
			}
			tl, grid := md.longLaws[k].tl, md.longLaws[k].grid
			used := (1 - js.LossSC) * js.OnTimeSC
			inTime := tl.cdf(top, true)
			js.P0 = 1 - used
			js.P2 = used * (1 - js.LossCA) * inTime
			js.P1 = math.Max(0, 1-js.P0-js.P2)
			js.MeanDelayM2 = math.NaN()
			if inTime > 0 {
				js.MeanDelayM2 = tl.meanBelow(top) / inTime
			}
			md.States = append(md.States, js)
			per = append(per, thetaLaws{js: js, tl: tl, grid: grid, used: used, pa: js.LossCA})
		}
	}
	lc, err := md.buildLongChain(ly, per)
	if err != nil {
		if errors.Is(err, errChainTooLarge) {
			return fmt.Errorf("%w: %v", ErrNoExactChain, err)
		}
		return err
	}
	if md.thetaPi == nil {
		md.thetaPi = md.Pi
	}
	pi, err := stationaryOf(lc.transition())
	if err != nil {
		return err
	}
	md.long, md.Pi = lc, pi
	return nil
}

// meanBelow is E[τ; τ < x] = x F(x−) − ∫₀ˣ F, from the interpolant.
func (tl *totalLaw) meanBelow(x float64) float64 {
	integral := 0.0
	_, w := chebCumulative(chebPoints)
	t := chebNodes(chebPoints)
	for _, p := range tl.pieces {
		if p.lo >= x {
			break
		}
		hi := math.Min(p.hi, x)
		for k, tk := range t {
			xx := p.lo + (tk+1)*(hi-p.lo)/2
			integral += w[k] * (hi - p.lo) / 2 * tl.at(xx)
		}
	}
	return math.Max(0, x*tl.cdf(x, true)-integral)
}

// longSecondOp is ℒ on the stacked svec(Q_j) of the long chain:
// block (j, i) = Σ over i's groups leading to j's part of P_θθ' Σ w F⊗F.
func (md *Model) longSecondOp() *mat.Dense {
	return md.longStacked(md.symDim(), func(g *longGroup) *mat.Dense { return g.op })
}

// longFirstOp is the first-moment operator of the long chain: the same
// blocks with Σ w F.
func (md *Model) longFirstOp() *mat.Dense {
	return md.longStacked(md.lm.nz, func(g *longGroup) *mat.Dense { return g.meanF })
}

// longStacked assembles an operator over the chain's states from each
// group's d×d block: block (j, i) = Σ over the groups of state i that lead
// to j's part of P_θθ' · block(g), with θ, θ' the network states of i, j.
func (md *Model) longStacked(d int, block func(*longGroup) *mat.Dense) *mat.Dense {
	lc := md.long
	N := len(lc.groups)
	big := mat.NewDense(N*d, N*d, nil)
	for i, gs := range lc.groups {
		th := i % lc.nTheta
		for gi := range gs {
			b := block(&gs[gi])
			for th2 := 0; th2 < lc.nTheta; th2++ {
				pij := lc.theta.At(th, th2)
				if pij == 0 {
					continue
				}
				j := gs[gi].to*lc.nTheta + th2
				blk := big.Slice(j*d, (j+1)*d, i*d, (i+1)*d).(*mat.Dense)
				blk.Add(blk, scaledCopy(b, pij))
			}
		}
	}
	return big
}

// longConst returns the constant terms of the two recursions for state
// probabilities pi and first moments qs: b1_j = Σ P π_i Σ w g and b2_j =
// Σ P svec(Σ w (F q gᵀ + g qᵀ Fᵀ + π (g gᵀ + H Ξ Hᵀ))).
func (md *Model) longConst(pi []float64, qs [][]float64) (b1, b2 []float64) {
	lc := md.long
	nz, d := md.lm.nz, md.symDim()
	N := len(lc.groups)
	b1 = make([]float64, N*nz)
	if qs != nil {
		b2 = make([]float64, N*d)
	}
	tmp := make([]float64, d)
	for i, gs := range lc.groups {
		th := i % lc.nTheta
		for _, g := range gs {
			if qs != nil {
				svec(constTermOf(g.modes, nz, qs[i], pi[i]), tmp)
			}
			for th2 := 0; th2 < lc.nTheta; th2++ {
				pij := lc.theta.At(th, th2)
				if pij == 0 {
					continue
				}
				j := g.to*lc.nTheta + th2
				for a := 0; a < nz; a++ {
					b1[j*nz+a] += pij * pi[i] * g.sumG[a]
				}
				if qs != nil {
					for a := 0; a < d; a++ {
						b2[j*d+a] += pij * tmp[a]
					}
				}
			}
		}
	}
	return b1, b2
}

// constTermOf is E[F q gᵀ + g qᵀ Fᵀ + π (g gᵀ + H Ξ Hᵀ)] over weighted
// modes.
func constTermOf(modes []weighted, nz int, q []float64, pi float64) *mat.Dense {
	out := mat.NewDense(nz, nz, nil)
	qv := mat.NewVecDense(nz, q)
	fq := mat.NewVecDense(nz, nil)
	for _, wm := range modes {
		if wm.w == 0 {
			continue
		}
		fq.MulVec(wm.F, qv)
		for a := 0; a < nz; a++ {
			ga, fa := wm.G.AtVec(a), fq.AtVec(a)
			for b := 0; b < nz; b++ {
				gb, fb := wm.G.AtVec(b), fq.AtVec(b)
				v := fa*gb + ga*fb + pi*(ga*gb+wm.HXH.At(a, b))
				out.Set(a, b, out.At(a, b)+wm.w*v)
			}
		}
	}
	return out
}

// longSteady solves the two fixed points of the long chain.
func (md *Model) longSteady() (*Moments, error) {
	N, nz := md.nStates(), md.lm.nz
	b1, _ := md.longConst(md.Pi, nil)
	var q mat.VecDense
	if err := q.SolveVec(identityMinus(md.longFirstOp()), mat.NewVecDense(N*nz, b1)); err != nil {
		return nil, fmt.Errorf("first moments: %w", err)
	}
	qs := splitStates(q.RawVector().Data, N, nz)
	_, b2 := md.longConst(md.Pi, qs)
	var x mat.VecDense
	if err := x.SolveVec(identityMinus(md.longSecondOp()), mat.NewVecDense(len(b2), b2)); err != nil {
		return nil, fmt.Errorf("second moments: %w", err)
	}
	return md.collect(qs, x.RawVector().Data), nil
}

func splitStates(v []float64, N, nz int) [][]float64 {
	out := make([][]float64, N)
	for i := range out {
		out[i] = append([]float64(nil), v[i*nz:(i+1)*nz]...)
	}
	return out
}

// longTransient runs the long chain's recursions forward from rest.
func (md *Model) longTransient(steps int) []Step {
	N, nz, d := md.nStates(), md.lm.nz, md.symDim()
	a1, a2 := md.longFirstOp(), md.longSecondOp()
	T := md.long.transition()
	// Start in the chain's stationary law: the network and the command
	// ages as they are when the step comes.
	pi := append([]float64(nil), md.Pi...)
	qv := mat.NewVecDense(N*nz, nil)
	xv := mat.NewVecDense(N*d, nil)
	var out []Step
	for k := 0; k <= steps; k++ {
		qs := splitStates(qv.RawVector().Data, N, nz)
		mo := md.collect(qs, xv.RawVector().Data)
		out = append(out, Step{K: k, Time: float64(k) * md.Loop.Period, Error: md.Error(mo)})
		if k == steps {
			break
		}
		b1, b2 := md.longConst(pi, qs)
		var nq, nx mat.VecDense
		nq.MulVec(a1, qv)
		nq.AddVec(&nq, mat.NewVecDense(len(b1), b1))
		nx.MulVec(a2, xv)
		nx.AddVec(&nx, mat.NewVecDense(len(b2), b2))
		npi := make([]float64, N)
		for i := 0; i < N; i++ {
			for j := 0; j < N; j++ {
				npi[j] += pi[i] * T.At(i, j)
			}
		}
		qv, xv, pi = &nq, &nx, npi
	}
	return out
}

// timingReport describes the command ages (estimate/model.md §13).
func (md *Model) timingReport() *TimingReport {
	ns, na := md.Loop.Horizons()
	tr := &TimingReport{SampleHorizon: ns, CommandHorizon: na, Method: MethodExact, CommandAge: make([]float64, na)}
	if md.long == nil {
		// One period: the period ends on its own command when it is
		// delivered in time (mode m2), else on an older one, which is stale.
		for i, js := range md.States {
			tr.CommandAge[0] += md.Pi[i] * js.P2
		}
		tr.Stale = math.Max(0, 1-tr.CommandAge[0])
		return tr
	}
	lc := md.long
	for i, p := range md.Pi {
		part := lc.parts[i/lc.nTheta]
		if part.age <= na {
			tr.CommandAge[part.age-1] += p
		} else {
			tr.Stale += p
		}
	}
	return tr
}

// stateProb is the stationary probability of joint network state i.
func (md *Model) stateProb(i int) float64 {
	if md.long != nil {
		return md.thetaPi[i]
	}
	return md.Pi[i]
}

// MeanCommandAge is the long-run mean age of a command on arrival,
// E[τsc] + E[c] + E[τca] in seconds, with every network delay multiplied by
// scale (a --vary delay_scale point): what a delay scale means in periods
// (estimate/model.md §13). Losses and the horizons are not counted; a law
// without a mean gives +Inf.
func MeanCommandAge(loop *profiles.Loop, scale float64) float64 {
	p := loop.Profile
	return scale*(p.SensorToController.LongRunMeanDelay()+p.ControllerToActuator.LongRunMeanDelay()) + loop.ComputeMean()
}
