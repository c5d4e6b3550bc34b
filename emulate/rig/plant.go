package rig

import (
	"math/rand/v2"

	"gonum.org/v1/gonum/mat"

	"rigwire/estimate"
	"rigwire/estimate/simstep"
	"rigwire/profiles"
)

// Plant is the continuous-time plant dx = (A x + B u) dt + dw,
// E[dw dwᵀ] = W dt, with outputs y = C x + v, v ~ N(0, V), simulated
// exactly: between input changes the state moves by the zero-order-hold
// solution of the linear SDE over that sub-interval δ,
//
//	x(t+δ) = Φ(δ) x(t) + Γ(δ) u + w,   w ~ N(0, W_d(δ)),
//	Φ(δ) = e^{Aδ},  Γ(δ) = ∫₀^δ e^{As} ds B,  W_d(δ) = ∫₀^δ e^{As} W e^{Aᵀs} ds
//
// (Åström–Wittenmark, Computer-Controlled Systems, 3rd ed., §2.3 and
// §10.2 for the sampled noise; Φ, Γ and W_d from Van Loan 1978, through
// estimate.Discretize). Noise over disjoint sub-intervals is independent,
// so any split of a period gives the same law at the next sample as one
// step over the whole period. A Plant is not safe for concurrent use.
type Plant struct {
	a, b, c, w  *mat.Dense
	vFac        *mat.Dense // L Lᵀ = V
	x           []float64
	rng         *rand.Rand
	std, tmp, v []float64
	cache       map[int64]*plantStep // by sub-interval in ns
}

type plantStep struct {
	phi, gamma, wFac *mat.Dense
}

// maxCachedSteps bounds the sub-interval cache: the full period and the
// few sub-intervals that repeat (constant delays) are kept, others are
// computed each time.
const maxCachedSteps = 64

// NewPlant returns the loop's plant at x = 0 with its own seeded noise.
func NewPlant(pl profiles.Plant, rng *rand.Rand) *Plant {
	p, n := pl.C.Dims()
	return &Plant{
		a: pl.A, b: pl.B, c: pl.C, w: pl.W,
		vFac: simstep.Factor(pl.V), x: make([]float64, n), rng: rng,
		std: make([]float64, max(n, p)), tmp: make([]float64, n), v: make([]float64, p),
		cache: map[int64]*plantStep{},
	}
}

// State returns a copy of x.
func (pt *Plant) State() []float64 { return append([]float64(nil), pt.x...) }

// SetState sets x (n entries).
func (pt *Plant) SetState(x []float64) { copy(pt.x, x) }

func (pt *Plant) step(dtNs int64) *plantStep {
	if s, ok := pt.cache[dtNs]; ok {
		return s
	}
	d := estimate.Discretize(pt.a, pt.b, pt.w, float64(dtNs)*1e-9)
	s := &plantStep{phi: d.Phi, gamma: d.Gamma, wFac: simstep.Factor(d.Wd)}
	if len(pt.cache) < maxCachedSteps {
		pt.cache[dtNs] = s
	}
	return s
}

// Advance moves the plant dtNs nanoseconds forward with the input u held
// (m entries). dtNs ≤ 0 leaves it as it is.
func (pt *Plant) Advance(dtNs int64, u []float64) {
	if dtNs <= 0 {
		return
	}
	s := pt.step(dtNs)
	simstep.Plant(pt.tmp, s.phi, pt.x, s.wFac, pt.rng, pt.std)
	simstep.MulVec(pt.tmp, s.gamma, u, true)
	copy(pt.x, pt.tmp)
}

// Sample returns y = C x + v into y (p entries), with a fresh v ~ N(0, V).
func (pt *Plant) Sample(y []float64) {
	simstep.Noise(pt.v, pt.vFac, pt.rng, pt.std)
	simstep.MulVec(y, pt.c, pt.x, false)
	for i := range y {
		y[i] += pt.v[i]
	}
}
