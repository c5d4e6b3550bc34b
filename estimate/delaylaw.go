package estimate

import (
	"fmt"
	"math"
	"math/rand/v2"
	"rigwire/profiles/laws"
	"sort"
)

// tauNode is one point of the quadrature over the delivered-with-delay
// mode: the total delay τ and its weight, the mass that the rule gives to
// τ (for an atom of the law, the atom's own mass).
type tauNode struct {
	Tau    float64
	Weight float64
}

// maxDirectAtoms bounds the number of distinct atom sums evaluated at
// their own positions; beyond it (resampled measurements, say) the atoms
// join the Chebyshev moments like the densities do.
const maxDirectAtoms = 64

// Accuracy of the τ-expectations.
const (
	// tauRelTol is the relative accuracy asked of every adaptive integral
	// of the Chebyshev moments.
	tauRelTol = 1e-12
	// tauAbsTol is the absolute accuracy below which a moment's integral
	// is not refined further (probabilities far below any that matters).
	tauAbsTol = 1e-18
	// massRelTol and massAbsTol bound the disagreement allowed between
	// the mass that the rule integrates, P(τsc + τca + c < h), and the
	// same probability computed the other way round from the laws' own
	// CDFs; beyond it the prediction refuses the laws.
	massRelTol = 1e-9
	massAbsTol = 1e-14
)

// tauRule (estimate/model.md §5) returns a quadrature rule for the defective law of the total
// delay τ = τsc + τca + c on the event {τsc < h, τ < h} (mode m2): nodes
// τ_k in [c, h] and weights w_k with
//
//	Σ_k w_k f(τ_k) ≈ E[f(τ); τsc < h, τ < h]
//
// for every smooth f. deg is the degree of polynomial that the
// Chebyshev part of the rule integrates exactly (see chebDegree). The
// delays are non-negative, so τ < h implies τsc < h.
//
// Method. Each delay law is split into atoms and continuous pieces given
// by their quantile functions (lawparts.go). Atoms × atoms give point
// masses at s_i + a_j + c (kept as nodes of their own when there are few,
// so they are integrated exactly). Every other pair enters through its
// Chebyshev moments μ_j = E[T_j(t(τ)); τ < h], t mapping [c, h] onto
// [−1, 1], computed in the probability scale of each piece: with b = h − c
// and Q, R the quantile functions of a sensor and a command piece,
//
//	atom s × piece R:   ∫₀^{F_R(b−s)} T_j(t(s + R(v) + c)) dv
//	piece Q × atom a:   ∫₀^{F_Q(b−a)} T_j(t(Q(u) + a + c)) du
//	piece Q × piece R:  ∫₀^{F_Q(b−r₀)} ∫₀^{F_R(b−Q(u))} T_j(t(Q(u) + R(v) + c)) dv du
//
// (r₀ the start of R's support), by tanh–sinh quadrature
// (tanhsinh.go), the outer integral split where b − Q(u) meets the ends of
// R's support. The integrands are bounded and smooth whatever the shape of
// the densities, so a singular start, a peak a thousand times narrower
// than the period or a heavy tail costs no more than a smooth law. The
// weights are those of product integration against the interpolant of f
// at the Chebyshev points of the first kind (J. C. Mason, D. C. Handscomb,
// Chebyshev Polynomials, Chapman & Hall 2003, §6.2–§6.3: interpolation
// p = Σ'_j a_j T_j with a_j = (2/N) Σ_k f(t_k) T_j(t_k)), so that
// w_k = (2/N) Σ'_j μ_j T_j(t_k). The error is the interpolation error of
// f, which is analytic in τ, times the mass, plus the quadrature error of
// the moments (tauRelTol relative).
//
// Checks. The parts of each law must rebuild its own CDF at b and h, and
// the mass the rule integrates, μ₀ = P(τsc + τca < b), must agree with the
// same probability computed the other way round, Σ over the command law's
// parts of P(τsc < b − τca) from the sensor law's own CDF (massCheck),
// within massRelTol. A law that fails either is refused with an error
// naming it, rather than answered wrongly.
func tauRule(dsc, dca laws.Delay, h, c float64, deg int) ([]tauNode, error) {
	budget := h - c // τsc + τca must stay below it
	if budget <= 0 {
		return nil, nil
	}
	sc, err := splitLaw(dsc)
	if err != nil {
		return nil, fmt.Errorf("sensor_to_controller delay %w", err)
	}
	ca, err := splitLaw(dca)
	if err != nil {
		return nil, fmt.Errorf("controller_to_actuator delay %w", err)
	}
	for _, x := range []float64{budget, h} {
		if e := math.Abs(sc.cdf(x) - dsc.CDF(x)); !(e <= 1e-9) {
			return nil, fmt.Errorf("sensor_to_controller delay %s: its parts give P(delay ≤ %gs) = %.12g, its CDF %.12g",
				laws.Describe(dsc), x, sc.cdf(x), dsc.CDF(x))
		}
		if e := math.Abs(ca.cdf(x) - dca.CDF(x)); !(e <= 1e-9) {
			return nil, fmt.Errorf("controller_to_actuator delay %s: its parts give P(delay ≤ %gs) = %.12g, its CDF %.12g",
				laws.Describe(dca), x, ca.cdf(x), dca.CDF(x))
		}
	}
	var nodes []tauNode
	N := deg + 1
	lo, span := c, h-c
	tmap := func(tau float64) float64 {
		t := (2*(tau-lo) - span) / span
		// Rounding in a quantile near the end of a range may put τ a
		// hair past h: T_j grows fast outside [−1, 1], so clamp.
		return math.Max(-1, math.Min(1, t))
	}
	mom := make([]float64, N)
	addCheb := func(t, w float64, out []float64) {
		// out[j] += w T_j(t), by the three-term recurrence.
		t0, t1 := 1.0, t
		out[0] += w
		if len(out) > 1 {
			out[1] += w * t
		}
		for j := 2; j < len(out); j++ {
			t0, t1 = t1, 2*t*t1-t0
			out[j] += w * t1
		}
	}
	hasMom := false
	direct := 0.0 // mass of the atom sums kept as nodes

	// Atoms × atoms.
	type pt struct{ at, mass float64 }
	var pairs []pt
	for _, s := range sc.atoms {
		for _, a := range ca.atoms {
			if s.At+a.At < budget {
				pairs = append(pairs, pt{s.At + a.At + c, s.Mass * a.Mass})
			}
		}
	}
	sort.Slice(pairs, func(i, j int) bool { return pairs[i].at < pairs[j].at })
	var merged []pt
	for _, p := range pairs {
		if n := len(merged); n > 0 && merged[n-1].at == p.at {
			merged[n-1].mass += p.mass
			continue
		}
		merged = append(merged, p)
	}
	if len(merged) <= maxDirectAtoms {
		for _, p := range merged {
			nodes = append(nodes, tauNode{Tau: p.at, Weight: p.mass})
			direct += p.mass
		}
	} else {
		for _, p := range merged {
			addCheb(tmap(p.at), p.mass, mom)
		}
		hasMom = true
	}

	inner := newTauIntegrator(N)
	outer := newTauIntegrator(N)
	tmp := make([]float64, N)

	// Atoms of τsc × pieces of τca.
	for _, s := range sc.atoms {
		for _, r := range ca.pieces {
			top := r.cdf(budget - s.At)
			if !(top > 0) {
				continue
			}
			clear(tmp)
			inner.integrateU(func(v float64, out []float64) {
				clear(out)
				addCheb(tmap(s.At+r.quantile(v)+c), 1, out)
			}, top, nil, tmp)
			for j := range mom {
				mom[j] += s.Mass * r.w * tmp[j]
			}
			hasMom = true
		}
	}
	// Pieces of τsc × atoms of τca.
	for _, q := range sc.pieces {
		for _, a := range ca.atoms {
			top := q.cdf(budget - a.At)
			if !(top > 0) {
				continue
			}
			clear(tmp)
			inner.integrateU(func(u float64, out []float64) {
				clear(out)
				addCheb(tmap(q.quantile(u)+a.At+c), 1, out)
			}, top, nil, tmp)
			for j := range mom {
				mom[j] += q.w * a.Mass * tmp[j]
			}
			hasMom = true
		}
	}
	// Pieces × pieces. τ is symmetric in the two delays, so the piece
	// whose quantile function is the dearer goes outside (evaluated once
	// per outer node) and the cheaper inside (once per inner node).
	for _, q := range sc.pieces {
		for _, r := range ca.pieces {
			q, r := q, r
			if quantileCost(q) < quantileCost(r) {
				q, r = r, q
			}
			rlo, rhi := r.support()
			top := q.cdf(budget - rlo)
			if !(top > 0) {
				continue
			}
			var breaks []float64
			if !math.IsInf(rhi, 1) {
				breaks = append(breaks, q.cdf(budget-rhi))
			}
			in := make([]float64, N)
			clear(tmp)
			outer.integrateU(func(u float64, out []float64) {
				clear(out)
				s := q.quantile(u)
				vt := r.cdf(budget - s)
				if !(vt > 0) {
					return
				}
				clear(in)
				inner.integrateU(func(v float64, o []float64) {
					clear(o)
					addCheb(tmap(s+r.quantile(v)+c), 1, o)
				}, vt, nil, in)
				copy(out, in)
			}, top, breaks, tmp)
			for j := range mom {
				mom[j] += q.w * r.w * tmp[j]
			}
			hasMom = true
		}
	}
	for _, v := range mom {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("delays %s (sensor_to_controller) and %s (controller_to_actuator): the expectation over the total delay is not finite",
				laws.Describe(dsc), laws.Describe(dca))
		}
	}
	if want := massCheck(sc, ca, budget); math.Abs(direct+mom[0]-want) > massRelTol*want+massAbsTol {
		return nil, fmt.Errorf("delays %s (sensor_to_controller) and %s (controller_to_actuator): the rule integrates P(in time) = %.12g, the laws' CDFs give %.12g",
			laws.Describe(dsc), laws.Describe(dca), direct+mom[0], want)
	}

	if hasMom {
		for k := 0; k < N; k++ {
			tk := math.Cos(math.Pi * (float64(k) + 0.5) / float64(N))
			w := 0.0
			t0, t1 := 1.0, tk
			w += mom[0] / 2
			if N > 1 {
				w += mom[1] * tk
			}
			for j := 2; j < N; j++ {
				t0, t1 = t1, 2*tk*t1-t0
				w += mom[j] * t1
			}
			w *= 2 / float64(N)
			nodes = append(nodes, tauNode{Tau: lo + (tk+1)*span/2, Weight: w})
		}
	}
	return nodes, nil
}

// quantileCost ranks the cost of a piece's quantile function: closed
// forms 0, a normal quantile 1, the gamma's Newton iteration 2, bisection
// on the CDF 3.
func quantileCost(p piece) int {
	switch p.base.(type) {
	case laws.Uniform, laws.Exponential, laws.Weibull, laws.Pareto:
		return 0
	case laws.Lognormal, *laws.Normal:
		return 1
	case laws.Gamma:
		return 2
	}
	return 3
}

// newTauIntegrator is the integrator with the τ-expectations'
// tolerances.
func newTauIntegrator(dim int) *tanhSinh {
	return newTanhSinh(dim, tauAbsTol, tauRelTol)
}

// integrateU adds ∫₀^top f(u) du to out, split at breaks, by tanh–sinh
// quadrature (tanhsinh.go), which is indifferent to the singular
// behaviour of quantile functions at the ends of [0, 1].
func (q *tanhSinh) integrateU(f vecFunc, top float64, breaks []float64, out []float64) {
	q.integrate(f, 0, top, breaks, out)
}

// massCheck is P(τsc + τca < budget) computed with the roles of the two
// laws swapped against tauRule: over the command law's parts, with the
// sensor law's CDF inside (its parts, which tauRule has checked against
// the law's own CDF),
//
//	Σ_atoms a  m_a P(τsc + a < b) + Σ_pieces R  w_R ∫₀^{F_R(b)} P(τsc + R(v) < b) dv,
//
// the integral split where b − R(v) meets an atom or a support end of
// τsc, where the integrand jumps or kinks. The sensor law enters through
// its CDF and the command law through its quantile function, the other
// way round from tauRule, so the two computations share no integrand.
func massCheck(sc, ca lawParts, budget float64) float64 {
	total := 0.0
	for _, a := range ca.atoms {
		total += a.Mass * sc.probSumBelow(a.At, budget)
	}
	feat := sc.features()
	q := newTauIntegrator(1)
	for _, r := range ca.pieces {
		top := r.cdf(budget)
		if !(top > 0) {
			continue
		}
		var breaks []float64
		for _, x := range feat {
			if x < budget {
				breaks = append(breaks, r.cdf(budget-x))
			}
		}
		out := []float64{0}
		q.integrateU(func(v float64, o []float64) {
			o[0] = sc.probSumBelow(r.quantile(v), budget)
		}, top, breaks, out)
		total += r.w * out[0]
	}
	return total
}

// scaled is a delay law with every delay multiplied by S > 0 (the
// monitor's delay_scale): F(x) = F₀(x/S), f(x) = f₀(x/S)/S, atoms moved
// to S·x, E = S E₀, Var = S² Var₀.
type scaled struct {
	d laws.Delay
	s float64
}

// scaleDelay returns d with every delay multiplied by s (d itself for s = 1).
func scaleDelay(d laws.Delay, s float64) laws.Delay {
	if s == 1 {
		return d
	}
	return scaled{d, s}
}

func (x scaled) Kind() string                { return x.d.Kind() }
func (x scaled) Sample(r *rand.Rand) float64 { return x.s * x.d.Sample(r) }
func (x scaled) CDF(t float64) float64       { return x.d.CDF(t / x.s) }
func (x scaled) Density(t float64) float64   { return x.d.Density(t/x.s) / x.s }
func (x scaled) Mean() float64               { return x.s * x.d.Mean() }
func (x scaled) Variance() float64           { return x.s * x.s * x.d.Variance() }
func (x scaled) Support() (lo, hi float64) {
	lo, hi = x.d.Support()
	return x.s * lo, x.s * hi
}
func (x scaled) Atoms() []laws.Atom {
	a := x.d.Atoms()
	if a == nil {
		return nil
	}
	out := make([]laws.Atom, len(a))
	for i, v := range a {
		out[i] = laws.Atom{At: x.s * v.At, Mass: v.Mass}
	}
	return out
}
