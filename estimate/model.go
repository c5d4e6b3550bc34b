package estimate

import (
	"fmt"
	"math"
	"sync"

	"gonum.org/v1/gonum/mat"

	"rigwire/profiles"
	"rigwire/profiles/laws"
	"rigwire/profiles/markov"
)

// Options changes the network of a loop for a what-if prediction.
type Options struct {
	// ExtraLoss is the q of estimate/model.md §8: every packet of both directions is
	// also dropped with probability q, independently (ps → ps + (1−ps)q,
	// likewise pa). 0 leaves the profile as it is.
	ExtraLoss float64
	// DelayScale multiplies every network delay (not the compute delay);
	// 0 means 1.
	DelayScale float64
	// rules, when set, shares the quadrature rules over τ between models
	// of the same loop and network that differ in the controller only
	// (a gain map): the rule of a joint state depends on the delay laws,
	// the period, the compute delay's floor and the plant's sampling
	// (its degree), never on the controller.
	rules *ruleCache
}

// ruleCache holds τ rules by joint state and degree.
type ruleCache struct {
	mu sync.Mutex
	m  map[[3]int][]tauNode
}

func newRuleCache() *ruleCache { return &ruleCache{m: map[[3]int][]tauNode{}} }

// rule returns the cached rule of state (i, j) at degree deg, or
// computes and keeps it.
func (c *ruleCache) rule(i, j, deg int, compute func() ([]tauNode, error)) ([]tauNode, error) {
	if c == nil {
		return compute()
	}
	key := [3]int{i, j, deg}
	c.mu.Lock()
	nodes, ok := c.m[key]
	c.mu.Unlock()
	if ok {
		return nodes, nil
	}
	nodes, err := compute()
	if err != nil {
		return nil, err
	}
	c.mu.Lock()
	c.m[key] = nodes
	c.mu.Unlock()
	return nodes, nil
}

// Model is a loop as a Markov jump linear system (estimate/model.md §3–§4): the
// joint network chain θ_k of both directions, and for each joint state
// the three modes with their probabilities, the delivered-with-delay mode
// as a quadrature rule over τ.
type Model struct {
	Loop *profiles.Loop
	lm   loopMatrices
	// Chain
	P      *mat.Dense // joint transition matrix over one period, P_sc ⊗ P_ca
	Pi     []float64  // its stationary law
	States []JointState
	f0, f1 mode
	opts   Options
	// marginProgress is PredictOptions.MarginProgress.
	marginProgress func(q float64)
	// long is the chain of a command horizon above one period
	// (estimate/model.md §13), nil for the model of §1–§4. With it, Pi is
	// the law of the chain's states and thetaPi that of the network's.
	long     *longChain
	thetaPi  []float64
	longLaws []thetaLaws  // per network state: arrival law and grid, kept across rebuilds
	cmdLaws  []laws.Delay // per command-direction state: its delay plus the compute delay's varying part
	buildErr error        // a rebuild at another extra loss failed
}

// JointState is one state of the joint chain (sensor direction state,
// command direction state) and what happens to a period in it.
type JointState struct {
	Name           string  // "sc-state/ca-state"; "iid" names a one-state direction
	LossSC, LossCA float64 // loss probabilities, extra loss included
	OnTimeSC       float64 // P(τsc < h)
	P0, P1, P2     float64 // mode probabilities (estimate/model.md §2)
	MeanDelayM2    float64 // E[τ | m2], seconds; NaN when P2 = 0

	baseSC, baseCA   float64 // the profile's own loss probabilities
	c2               float64 // (1−ps)(1−pa): the node weights' factor
	nodes            []tauNode
	m2               []mode     // one per node, for the node's τ
	opM2             *mat.Dense // Σ_k w_k F⊗F on symmetric matrices
	meanF2, sumG2    *mat.Dense // Σ_k w_k F, Σ_k w_k g
	m2mass, m2tauSum float64
}

// Build turns a validated loop into its jump linear system. It fails
// on a loop the loader would have refused, on one too large to predict
// (§11), and with ErrNoExactChain on a timing policy the exact model does
// not cover (§13).
func Build(loop *profiles.Loop, opts Options) (*Model, error) {
	md, err := buildBase(loop, opts)
	if err != nil {
		return nil, err
	}
	return md.buildModes()
}

// buildBase checks the options and sets what every model and the Monte
// Carlo share: the sampled plant, the loop matrices, the network chain.
func buildBase(loop *profiles.Loop, opts Options) (*Model, error) {
	if opts.DelayScale == 0 {
		opts.DelayScale = 1
	}
	if !(opts.ExtraLoss >= 0 && opts.ExtraLoss <= 1) {
		return nil, fmt.Errorf("extra loss: want a probability in [0, 1], got %g", opts.ExtraLoss)
	}
	if !(opts.DelayScale > 0) || math.IsInf(opts.DelayScale, 0) {
		return nil, fmt.Errorf("delay scale: want a number > 0, got %g", opts.DelayScale)
	}
	n, m, p, nc := loop.Dims()
	h := loop.Period
	if err := checkSize(loop); err != nil {
		return nil, err
	}
	samp := Discretize(loop.Plant.A, loop.Plant.B, loop.Plant.W, h)
	if err := samp.checkFinite(); err != nil {
		return nil, err
	}
	xi := mat.NewSymDense(n+p, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			xi.SetSym(i, j, samp.Wd.At(i, j))
		}
	}
	for i := 0; i < p; i++ {
		for j := i; j < p; j++ {
			if loop.Plant.V != nil {
				xi.SetSym(n+i, n+j, (loop.Plant.V.At(i, j)+loop.Plant.V.At(j, i))/2)
			}
		}
	}
	r := mat.NewVecDense(p, nil)
	for i := 0; i < p && i < len(loop.Setpoint); i++ {
		r.SetVec(i, loop.Setpoint[i])
	}
	md := &Model{Loop: loop, opts: opts}
	md.lm = loopMatrices{
		n: n, m: m, p: p, nc: nc, nz: n + m + nc,
		samp: samp, c: loop.Plant.C,
		ac: loop.Controller.A, bc: loop.Controller.B, cc: loop.Controller.C, dc: loop.Controller.D,
		r: r, xi: xi,
		zeroPolicy: loop.Actuator.OnLoss == profiles.ZeroUnlessFresh,
	}
	md.f0 = md.lm.build(0, nil)
	md.f1 = md.lm.build(1, nil)
	if err := md.f0.checkFinite(); err != nil {
		return nil, err
	}
	if err := md.f1.checkFinite(); err != nil {
		return nil, err
	}

	sc, ca := loop.Profile.SensorToController, loop.Profile.ControllerToActuator
	// The joint chain of the two independent directions (estimate/model.md §2):
	// P = P_sc ⊗ P_ca, π = π_sc ⊗ π_ca, state (i, j) at index i·N_ca + j.
	var P mat.Dense
	P.Kronecker(sc.Transition(h), ca.Transition(h))
	md.P = &P
	for _, a := range sc.Stationary() {
		for _, b := range ca.Stationary() {
			md.Pi = append(md.Pi, a*b)
		}
	}
	return md, nil
}

// buildModes builds the jump system's modes on a base model.
func (md *Model) buildModes() (*Model, error) {
	loop, opts, samp := md.Loop, md.opts, md.lm.samp
	h := loop.Period
	sc, ca := loop.Profile.SensorToController, loop.Profile.ControllerToActuator

	switch ns, na := loop.Horizons(); {
	case ns > 1:
		return nil, fmt.Errorf("%w: a sample horizon of %d periods lets samples overtake each other before the controller, which correlates the commands in flight (estimate/model.md §13)", ErrNoExactChain, ns)
	case na > 1:
		if err := md.buildLong(na); err != nil {
			return nil, err
		}
		return md, nil
	}
	c0 := loop.ComputeFloor()
	deg := chebDegree(samp, c0)
	cache := map[float64]mode{} // m2 at each distinct τ, shared between states
	for i, s := range sc.States {
		for j, a := range ca.States {
			dsc := scaleDelay(s.Delay, opts.DelayScale)
			js := JointState{Name: stateName(sc, i) + "/" + stateName(ca, j)}
			dca, err := md.commandLaw(j, a.Delay, h)
			if err != nil {
				return nil, fmt.Errorf("network state %s: %w", js.Name, err)
			}
			js.baseSC, js.baseCA = s.Loss, a.Loss
			js.OnTimeSC = laws.ProbBelow(dsc, h)
			if js.nodes, err = opts.rules.rule(i, j, deg, func() ([]tauNode, error) { return tauRule(dsc, dca, h, c0, deg) }); err != nil {
				return nil, fmt.Errorf("network state %s: %w", js.Name, err)
			}
			for _, nd := range js.nodes {
				mo, ok := cache[nd.Tau]
				if !ok {
					g0, _ := samp.Split(nd.Tau)
					mo = md.lm.build(2, g0)
					if err := mo.checkFinite(); err != nil {
						return nil, err
					}
					cache[nd.Tau] = mo
				}
				js.m2 = append(js.m2, mo)
			}
			md.prepareState(&js)
			if !allFinite(js.opM2) || !allFinite(js.meanF2) || !allFinite(js.sumG2) {
				return nil, fmt.Errorf("network state %s: the second-moment operator overflows (entries beyond %.3g): the plant or the controller gains are too large for a %s period",
					js.Name, math.MaxFloat64, laws.FormatSeconds(h))
			}
			md.States = append(md.States, js)
		}
	}
	md.setLoss(opts.ExtraLoss)
	return md, nil
}

// commandLaw is the delay from the controller's receipt of a sample to
// the actuator's receipt of its command, less the compute delay's lowest
// value c₀ (which the models carry as a shift): the command direction's
// delay in its state j, scaled by the delay scale, plus c − c₀ when the
// compute delay varies (sumlaw.go, estimate/model.md §14). limit is the
// command horizon. Built once per state and model.
func (md *Model) commandLaw(j int, d laws.Delay, limit float64) (laws.Delay, error) {
	loop := md.Loop
	d = scaleDelay(d, md.opts.DelayScale)
	if loop.ComputeConstant() {
		return d, nil
	}
	if md.cmdLaws == nil {
		md.cmdLaws = make([]laws.Delay, len(loop.Profile.ControllerToActuator.States))
	}
	if md.cmdLaws[j] == nil {
		s, err := addLaws(loop.Compute, -loop.ComputeFloor(), d, limit)
		if err != nil {
			return nil, fmt.Errorf("controller_to_actuator: %w", err)
		}
		md.cmdLaws[j] = s
	}
	return md.cmdLaws[j], nil
}

// stateName is a channel state's name, "iid" for a one-state channel
// without one.
func stateName(ch *markov.Channel, i int) string {
	if n := ch.States[i].Name; n != "" {
		return n
	}
	if len(ch.States) == 1 {
		return "iid"
	}
	return fmt.Sprintf("state%d", i)
}

// prepareState sums what the moment recursions need from the m2 rule:
// Σ_k w_k F(τ_k) ⊗ F(τ_k) (as an operator on symmetric matrices),
// Σ_k w_k F(τ_k), Σ_k w_k g(τ_k), the mass and E[τ; m2].
func (md *Model) prepareState(js *JointState) {
	nz := md.lm.nz
	d := nz * (nz + 1) / 2
	js.opM2 = mat.NewDense(d, d, nil)
	js.meanF2 = mat.NewDense(nz, nz, nil)
	js.sumG2 = mat.NewDense(nz, 1, nil)
	for k, nd := range js.nodes {
		addSymOp(js.opM2, js.m2[k].F, nd.Weight)
		js.meanF2.Add(js.meanF2, scaledCopy(js.m2[k].F, nd.Weight))
		for i := 0; i < nz; i++ {
			js.sumG2.Set(i, 0, js.sumG2.At(i, 0)+nd.Weight*js.m2[k].G.AtVec(i))
		}
		js.m2mass += nd.Weight
		js.m2tauSum += nd.Weight * nd.Tau
	}
}

func scaledCopy(a *mat.Dense, s float64) *mat.Dense {
	var out mat.Dense
	out.Scale(s, a)
	return &out
}

// setLoss applies the extra loss q to every state's mode probabilities
// (estimate/model.md §2 and §8): with ps' = ps + (1−ps)q and pa' likewise,
//
//	P(m0) = 1 − (1−ps') P(τsc < h),
//	P(m2, dτ) = (1−ps')(1−pa') P(τsc < h, τ ∈ dτ),
//	P(m1) = 1 − P(m0) − P(m2).
func (md *Model) setLoss(q float64) {
	md.opts.ExtraLoss = q
	if md.long != nil {
		// The extra loss enters the long chain's arrival laws, not only
		// its mode probabilities: rebuild it.
		_, na := md.Loop.Horizons()
		md.buildErr = md.buildLong(na)
		return
	}
	for k := range md.States {
		js := &md.States[k]
		js.LossSC = js.baseSC + (1-js.baseSC)*q
		js.LossCA = js.baseCA + (1-js.baseCA)*q
		js.c2 = (1 - js.LossSC) * (1 - js.LossCA)
		js.P0 = 1 - (1-js.LossSC)*js.OnTimeSC
		js.P2 = js.c2 * js.m2mass
		js.P1 = math.Max(0, 1-js.P0-js.P2)
		js.MeanDelayM2 = math.NaN()
		if js.m2mass > 0 {
			js.MeanDelayM2 = js.m2tauSum / js.m2mass
		}
	}
}
